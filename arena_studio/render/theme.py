"""Themes: named colours for every drawn element, loaded from resources/palettes/*.json.

No colour literal lives in drawing code; everything asks the active :class:`Theme`. The
``identity`` list gives each agent its own colour (index = agent order in the scene).
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from functools import cache

from PySide6.QtGui import QColor

from arena_studio.core.resources import resource_path

THEMES: tuple[str, ...] = ("light", "dark")


@dataclass(frozen=True)
class Theme:
    name: str
    colors: dict[str, str]
    identity: tuple[str, ...]

    def hex(self, role: str) -> str:
        try:
            return self.colors[role]
        except KeyError:
            raise KeyError(f"theme {self.name!r} has no colour {role!r}") from None

    def qcolor(self, role: str, alpha: float | None = None) -> QColor:
        """QColor for a named role; ``alpha`` in 0..1 overrides the stored alpha."""
        color = parse_hex(self.hex(role))
        if alpha is not None:
            color.setAlphaF(alpha)
        return color

    def agent_hex(self, index: int) -> str:
        return self.identity[index % len(self.identity)]

    def agent_color(self, index: int, alpha: float | None = None) -> QColor:
        color = parse_hex(self.agent_hex(index))
        if alpha is not None:
            color.setAlphaF(alpha)
        return color


def parse_hex(text: str) -> QColor:
    """``#RRGGBB`` or ``#RRGGBBAA`` (alpha last, as CSS writes it) to a QColor."""
    return QColor(*_rgba(text))


@cache
def _rgba(text: str) -> tuple[int, int, int, int]:
    """Parsed once per colour string: painters ask for the same few colours every frame."""
    body = text.lstrip("#")
    if len(body) not in (6, 8):
        raise ValueError(f"colour {text!r} is not #RRGGBB or #RRGGBBAA")
    r, g, b = (int(body[i : i + 2], 16) for i in (0, 2, 4))
    a = int(body[6:8], 16) if len(body) == 8 else 255
    return (r, g, b, a)


@cache
def load_theme(name: str = "light") -> Theme:
    if name not in THEMES:
        raise ValueError(f"unknown theme {name!r} (choose {', '.join(THEMES)})")
    with resource_path("palettes", f"{name}.json").open(encoding="utf-8") as handle:
        doc = json.load(handle)
    return Theme(name=doc["name"], colors=dict(doc["colors"]), identity=tuple(doc["identity"]))
