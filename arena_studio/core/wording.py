"""Counted nouns for messages: "1 target", "2 targets", "1 speck", never "1 targets" or
"agent(s)". One helper so every finding, panel and dialog counts the same way."""

from __future__ import annotations

__all__ = ["count"]


def count(n: int, singular: str, plural: str | None = None) -> str:
    """``n`` and the noun in the form its number takes (``plural`` defaults to ``+ "s"``)."""
    return f"{n} {singular if n == 1 else (plural or singular + 's')}"
