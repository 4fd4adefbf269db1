"""Words a person reads. Counted nouns: "1 target", "2 targets", "1 speck", never
"1 targets" or "agent(s)", one helper so every finding, panel and dialog counts the same way.
Landmark names: :class:`LandmarkNames` turns the ids that tapes and tables key on into the
labels the canvas shows, for every sentence built from them."""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Iterable, Sequence
from typing import Protocol

__all__ = ["LandmarkNames", "count"]


def count(n: int, singular: str, plural: str | None = None) -> str:
    """``n`` and the noun in the form its number takes (``plural`` defaults to ``+ "s"``)."""
    return f"{n} {singular if n == 1 else (plural or singular + 's')}"


class _Landmark(Protocol):
    @property
    def id(self) -> str: ...
    @property
    def label(self) -> str | None: ...


class _HasLandmarks(Protocol):
    @property
    def landmarks(self) -> Sequence[_Landmark]: ...


class LandmarkNames:
    """What a person reads for each landmark: its label, the id when it has none, and
    "Label (id)" when two landmarks share a label (case ignored).

    Ids stay the data (tapes, tables, exports key on them); every sentence a person reads
    passes its landmark ids through one of these, so the canvas, the explanation line, the
    legend and the command's text all name a landmark the same way."""

    def __init__(self, landmarks: Iterable[tuple[str, str | None]]) -> None:
        pairs = [(str(i), (lab or "").strip() or str(i)) for i, lab in landmarks]
        seen = Counter(base.casefold() for _, base in pairs)
        self._names = {
            i: (f"{base} ({i})" if seen[base.casefold()] > 1 and base != i else base)
            for i, base in pairs
        }
        self._pattern: re.Pattern[str] | None = None  # built when text() is first asked

    @classmethod
    def of(cls, scene: _HasLandmarks) -> LandmarkNames:
        """The names of a scene's landmarks."""
        return cls((lm.id, lm.label) for lm in scene.landmarks)

    def name(self, landmark_id: str) -> str:
        """One landmark's name; an unknown id stays as it is."""
        return self._names.get(landmark_id, landmark_id)

    def names(self) -> dict[str, str]:
        """Every id and its name (for code that takes a mapping)."""
        return dict(self._names)

    def goal(self, goal: str | Iterable[str] | None, none: str = "-") -> str:
        """A goal by its targets' names, "West valve + Potting bench". ``goal`` is a goal key
        (ids joined by "+", as tables store it) or the ids; ``none`` when it is empty."""
        if goal is None:
            return none
        ids = self._split(goal) if isinstance(goal, str) else [str(i) for i in goal]
        return " + ".join(self.name(i) for i in ids) if ids else none

    def text(self, text: str) -> str:
        """``text`` with every whole landmark id (and goal key) replaced by its name(s); for
        free text such as a tape's role labels ("heads to valve-west"). Our own sentences
        are reworded by their slots instead (a landmark whose id is an everyday word must
        not rename that word elsewhere in a sentence)."""
        if not self._names or not text:
            return text
        if self._pattern is None:
            ids = sorted(self._names, key=len, reverse=True)  # the longest id wins at a place
            one = "|".join(re.escape(i) for i in ids)
            self._pattern = re.compile(rf"(?<![\w-])(?:{one})(?:\+(?:{one}))*(?![\w-])")
        return self._pattern.sub(lambda m: self.goal(m.group(0)), text)

    def _split(self, key: str) -> list[str]:
        """A goal key's ids: split at "+" unless the whole key is one id (ids may hold "+")."""
        if not key:
            return []
        if key in self._names:
            return [key]
        parts = key.split("+")
        return parts if all(p in self._names for p in parts) else [key]
