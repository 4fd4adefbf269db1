"""A diagnosis as a person reads it: the same sentence with the landmarks named by label.

The diagnosis keeps landmark ids (``diagnosis.SENTENCES``), since tables, stats and exports
store it and ids are the stable keys there. Everything shown to a person passes it through
:func:`diagnosis_words`, which finds the sentence's slots from the same templates and puts
names into the landmark slots only, so an id that is also an everyday word ("end",
"target") never renames that word elsewhere in the sentence.
"""

from __future__ import annotations

import re
from functools import cache

from arena_studio.core.wording import LandmarkNames

#: slots holding a landmark or a goal key
_LANDMARK_SLOTS = ("target", "empty")
#: what ``diagnosis._goal_words`` says when there is no goal to name
_NO_GOAL = ("nothing recorded", "no target")


@cache
def _pattern(code: str) -> re.Pattern[str]:
    """The template of ``code`` as a regular expression with one named group per slot."""
    from arena_studio.core.analysis.diagnosis import SENTENCES  # heavy: after the first paint

    parts = re.split(r"\{(\w+)\}", SENTENCES[code])
    rx = "".join(re.escape(p) if i % 2 == 0 else f"(?P<{p}>.+?)" for i, p in enumerate(parts))
    return re.compile(f"^{rx}$")


def diagnosis_words(text: str | None, names: LandmarkNames, code: str | None = None) -> str:
    """``text`` (a diagnosis as stored) with its landmarks named; ``code`` picks the
    template (None: the first that fits). A text no template fits is returned unchanged."""
    if not text:
        return text or ""
    from arena_studio.core.analysis.diagnosis import SENTENCES

    codes = (code,) if code is not None and code in SENTENCES else tuple(SENTENCES)
    for c in codes:
        m = _pattern(c).match(text)
        if m is None:
            continue
        slots = m.groupdict()
        for key in _LANDMARK_SLOTS:
            if key in slots:
                slots[key] = names.goal(slots[key])
        if "wanted" in slots:
            slots["wanted"] = _wanted_words(slots["wanted"], names)
        return SENTENCES[c].format(**slots)
    return text


def _wanted_words(wanted: str, names: LandmarkNames) -> str:
    """ "team goal A+B; rover-1 A+B, rover-2 share C" with the goals named (the agent ids
    before each goal stay as they are)."""
    lead = ""
    m = re.match(r"^team goal (.+?); (.*)$", wanted)
    if m is not None:
        lead, wanted = f"team goal {names.goal(m.group(1))}; ", m.group(2)
    return lead + ", ".join(_entry_words(e, names) for e in wanted.split(", "))


def _entry_words(entry: str, names: LandmarkNames) -> str:
    """ "rover-1 A+B" or "rover-2 share C": the goal is the last word (ids with spaces in
    them are left as they are)."""
    if any(entry.endswith(" " + none) for none in _NO_GOAL):
        return entry
    who, sep, goal = entry.rpartition(" ")
    return f"{who}{sep}{names.goal(goal)}" if sep else entry


__all__ = ["diagnosis_words"]
