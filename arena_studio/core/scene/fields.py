"""Typed readers for plain-dict documents that report the exact field path on failure.

Every file format here (scene, tape header) is parsed through these helpers, so a user sees
``landmarks[3].reach_radius: expected a number > 0`` instead of a ``KeyError`` traceback.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from typing import Any

from arena_studio.core.errors import SceneFormatError
from arena_studio.core.value_limits import COORDINATE_LIMIT, HEADING_LIMIT, RADIUS_LIMIT

#: Upper bound on vertices in one outline. Real rooms have tens; a million-vertex outline is
#: refused quickly instead of stalling geometry code for minutes.
MAX_VERTICES = 10_000
#: Upper bound on list lengths (landmarks, agents, goal vectors) for the same reason.
MAX_ITEMS = 100_000


def join(path: str, key: str | int) -> str:
    """Extend a field path: ``join("rooms", 2) == "rooms[2]"``, ``join("a", "b") == "a.b"``."""
    if isinstance(key, int):
        return f"{path}[{key}]"
    return f"{path}.{key}" if path else key


def type_name(value: object) -> str:
    """Name a JSON-ish value's type the way a user who writes JSON would."""
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, int | float):
        return "a number"
    if isinstance(value, str):
        return "a string"
    if isinstance(value, list | tuple):
        return "a list"
    if isinstance(value, Mapping):
        return "an object"
    return type(value).__name__


def mapping(value: object, path: str) -> Mapping[str, Any]:
    if not isinstance(value, Mapping):
        raise SceneFormatError(path, f"expected an object, got {type_name(value)}")
    return value


def check_keys(
    obj: Mapping[str, Any], path: str, required: Iterable[str], optional: Iterable[str] = ()
) -> None:
    """Refuse missing required keys and unknown keys, so typos never pass silently."""
    required = tuple(required)
    allowed = set(required) | set(optional)
    for key in required:
        if key not in obj:
            raise SceneFormatError(join(path, key), "missing required field")
    for key in obj:
        if key not in allowed:
            hint = ", ".join(sorted(allowed))
            raise SceneFormatError(join(path, str(key)), f"unknown field (allowed: {hint})")


def number(
    value: object,
    path: str,
    *,
    minimum: float | None = None,
    exclusive_minimum: float | None = None,
    maximum: float | None = None,
) -> float:
    """A finite real number within optional bounds; booleans are not numbers."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise SceneFormatError(path, f"expected a number, got {type_name(value)}")
    x = float(value)
    if not math.isfinite(x):
        raise SceneFormatError(path, f"expected a finite number, got {value!r}")
    if exclusive_minimum is not None and not x > exclusive_minimum:
        raise SceneFormatError(path, f"expected a number > {exclusive_minimum:g}, got {x:g}")
    if minimum is not None and x < minimum:
        raise SceneFormatError(path, f"expected a number >= {minimum:g}, got {x:g}")
    if maximum is not None and x > maximum:
        raise SceneFormatError(path, f"expected a number <= {maximum:g}, got {x:g}")
    return x


def integer(value: object, path: str, *, minimum: int | None = None) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        got = f"{value:g}" if isinstance(value, float) else type_name(value)
        raise SceneFormatError(path, f"expected a whole number, got {got}")
    if minimum is not None and value < minimum:
        raise SceneFormatError(path, f"expected a whole number >= {minimum}, got {value}")
    return value


def string(value: object, path: str, *, nonempty: bool = True, max_length: int = 200) -> str:
    if not isinstance(value, str):
        raise SceneFormatError(path, f"expected a string, got {type_name(value)}")
    if nonempty and not value.strip():
        raise SceneFormatError(path, "expected a non-empty string")
    if len(value) > max_length:
        raise SceneFormatError(path, f"string too long ({len(value)} > {max_length} characters)")
    return value


#: Characters no id, label or name may hold: C0 and C1 control characters (TAB, CR, LF, ESC,
#: DEL...) and the Unicode line and paragraph separators. Such a character would let a name
#: start a new line or a new field in a text export (a forged WKT line, a CSV row).
UNSAFE_CHARACTERS = frozenset(
    [chr(c) for c in range(0x00, 0x20)] + [chr(c) for c in range(0x7F, 0xA0)] + ["\u2028", "\u2029"]
)
#: The same rule as a regular expression (JSON Schema ``pattern``; Python ``re``).
SAFE_LINE_PATTERN = "^[^\\u0000-\\u001f\\u007f-\\u009f\\u2028\\u2029]*$"


def line_problem(text: str) -> str | None:
    """Why ``text`` cannot be one line of an id, a label or a name (None: it can)."""
    for i, ch in enumerate(text):
        if ch in UNSAFE_CHARACTERS:
            return (
                f"control character U+{ord(ch):04X} at position {i}; ids, labels and names are "
                "one line of printable text"
            )
    return None


def line(value: object, path: str, *, max_length: int = 200) -> str:
    """A non-empty single line of printable text (see :data:`UNSAFE_CHARACTERS`)."""
    text = string(value, path, max_length=max_length)
    problem = line_problem(text)
    if problem:
        raise SceneFormatError(path, problem)
    return text


def shorten(value: object, limit: int = 80) -> str:
    """``repr(value)``, cut to ``limit`` characters with the full length stated: a refused
    63 MB string makes a one-line message, not a 63 MB one."""
    if isinstance(value, str) and len(value) > limit:
        return f"{value[:limit]!r}... ({len(value)} characters)"
    text = repr(value)
    return text if len(text) <= limit else f"{text[:limit]}... ({len(text)} characters)"


def cap_text(text: str, limit: int = 300) -> str:
    """One line of at most ``limit`` characters; a longer text is cut, its length stated."""
    line_text = " ".join(text.split())
    if len(line_text) <= limit:
        return line_text
    return f"{line_text[:limit]}... ({len(line_text)} characters in all)"


def choice(value: object, path: str, options: tuple[str, ...]) -> str:
    if not isinstance(value, str) or value not in options:
        shown = shorten(value) if isinstance(value, str) else repr(type_name(value))
        raise SceneFormatError(path, f"expected one of {', '.join(options)}, got {shown}")
    return value


def sequence(value: object, path: str, *, max_items: int = MAX_ITEMS) -> list[Any]:
    if not isinstance(value, list | tuple):
        raise SceneFormatError(path, f"expected a list, got {type_name(value)}")
    if len(value) > max_items:
        raise SceneFormatError(path, f"too many items ({len(value)} > {max_items})")
    return list(value)


def bounded(value: object, path: str, limit: float, unit: str) -> float:
    """A finite number with ``|value| <= limit`` (the documented ranges of value_limits)."""
    x = number(value, path)
    if abs(x) > limit:
        raise SceneFormatError(path, f"expected a value within ±{limit:g} {unit}, got {x:g}")
    return x


def coordinate(value: object, path: str) -> float:
    """An x or y in metres, within ±COORDINATE_LIMIT."""
    return bounded(value, path, COORDINATE_LIMIT, "m")


def radius(value: object, path: str) -> float:
    """A radius or reach in metres: > 0 and at most RADIUS_LIMIT."""
    x = number(value, path, exclusive_minimum=0)
    if x > RADIUS_LIMIT:
        raise SceneFormatError(path, f"expected a radius <= {RADIUS_LIMIT:g} m, got {x:g}")
    return x


def point(value: object, path: str) -> tuple[float, float]:
    items = sequence(value, path, max_items=3)
    if len(items) != 2:
        raise SceneFormatError(path, f"expected a point [x, y], got {len(items)} values")
    return (coordinate(items[0], join(path, 0)), coordinate(items[1], join(path, 1)))


def pose(value: object, path: str) -> tuple[float, float, float]:
    items = sequence(value, path, max_items=4)
    if len(items) != 3:
        raise SceneFormatError(path, f"expected a pose [x, y, heading], got {len(items)} values")
    return (
        coordinate(items[0], join(path, 0)),
        coordinate(items[1], join(path, 1)),
        bounded(items[2], join(path, 2), HEADING_LIMIT, "rad"),
    )


def outline(value: object, path: str) -> tuple[tuple[float, float], ...]:
    """A polygon ring of at least 3 distinct points; a repeated closing point is dropped."""
    if isinstance(value, list | tuple) and len(value) > MAX_VERTICES:
        raise SceneFormatError(path, f"too many vertices ({len(value)} > {MAX_VERTICES})")
    items = sequence(value, path, max_items=MAX_VERTICES)
    pts = [point(p, join(path, i)) for i, p in enumerate(items)]
    if len(pts) >= 2 and pts[0] == pts[-1]:
        pts.pop()
    if len(pts) < 3:
        raise SceneFormatError(path, f"an outline needs at least 3 points, got {len(pts)}")
    return tuple(pts)


__all__ = [
    "MAX_ITEMS",
    "MAX_VERTICES",
    "SAFE_LINE_PATTERN",
    "UNSAFE_CHARACTERS",
    "bounded",
    "cap_text",
    "check_keys",
    "choice",
    "coordinate",
    "integer",
    "join",
    "line",
    "line_problem",
    "mapping",
    "number",
    "outline",
    "point",
    "pose",
    "radius",
    "sequence",
    "shorten",
    "string",
    "type_name",
]
