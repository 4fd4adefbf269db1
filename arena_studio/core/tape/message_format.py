"""The structure of an episode's ``messages``: what one agent told another, and when.

Each structured entry is a map ``{"from": agent id, "to": agent id or nil (everyone),
"step": int or nil (before the episode), "value": int, short string or list of ints}``.
Entries without a ``value`` key are free notes (older tapes wrote ``{"from", "to", "goal"}``
notes) and stay allowed; readers that measure messages skip them. The writer checks every
structured entry with :func:`parse_message`, so a tape never stores a broken one.
"""

from __future__ import annotations

from collections.abc import Hashable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

MAX_TEXT = 64  # characters of a text value
MAX_LIST = 64  # integers of a list value
FIELDS = ("from", "to", "step", "value")


@dataclass(frozen=True)
class Message:
    sender: str
    receiver: str | None  # None: everyone
    step: int | None  # None: before the episode
    value: Hashable  # int, str or tuple of ints

    def to_dict(self) -> dict[str, Any]:
        value = list(self.value) if isinstance(self.value, tuple) else self.value
        return {"from": self.sender, "to": self.receiver, "step": self.step, "value": value}


def parse_message(raw: Any, agent_ids: Sequence[str], where: str) -> Message | None:
    """A structured message, None for a free note (no ``value``); ValueError naming ``where``
    and the field for a structured entry that breaks the rules."""
    if not isinstance(raw, Mapping) or "value" not in raw:
        return None
    unknown = set(raw) - set(FIELDS)
    if unknown:
        raise ValueError(f"{where}: unknown message field {sorted(map(str, unknown))[0]!r}")
    sender = raw.get("from")
    if sender not in agent_ids:
        raise ValueError(f"{where}.from: {sender!r} is not an agent id of the scene")
    receiver = raw.get("to")
    if receiver is not None and receiver not in agent_ids:
        raise ValueError(f"{where}.to: {receiver!r} is not an agent id of the scene (nil: all)")
    step = raw.get("step")
    if step is not None and (isinstance(step, bool) or not isinstance(step, int) or step < 0):
        raise ValueError(f"{where}.step: expected an integer >= 0 or nil, got {step!r}")
    return Message(str(sender), receiver, step, _value(raw["value"], f"{where}.value"))


def _value(value: Any, where: str) -> Hashable:
    if isinstance(value, bool):
        raise ValueError(f"{where}: expected an int, a short string or a list of ints")
    if isinstance(value, int):
        return value
    if isinstance(value, str):
        if len(value) > MAX_TEXT:
            raise ValueError(f"{where}: text of {len(value)} characters (at most {MAX_TEXT})")
        return value
    if isinstance(value, list | tuple):
        if len(value) > MAX_LIST or not all(
            isinstance(v, int) and not isinstance(v, bool) for v in value
        ):
            raise ValueError(f"{where}: expected at most {MAX_LIST} integers")
        return tuple(value)
    raise ValueError(f"{where}: expected an int, a short string or a list of ints")


def value_text(value: Hashable) -> str:
    if isinstance(value, tuple):
        return "[" + ",".join(str(v) for v in value) + "]"
    return str(value)


__all__ = ["FIELDS", "MAX_LIST", "MAX_TEXT", "Message", "parse_message", "value_text"]
