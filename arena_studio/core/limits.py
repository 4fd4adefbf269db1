"""Documented ranges of every number a user types: command options and the clip dialog.

One table, so ``arena-studio render --speed`` and the clip dialog's speed box accept the same
values and say the same thing when a value is out of range. Each bound keeps the work a
value implies within what the tool handles (frames, steps, pixels, cells); README.md
("Limits") lists them. Qt-free: :mod:`arena_studio.commands.arg_types` turns a
:class:`Range` into an argparse type and the app sets its spin boxes from it.

Two limit modules, split by where the number comes from: this one for numbers a person types
(refused with a message saying the range); :mod:`arena_studio.core.value_limits` for numbers
read from files (refused naming the file's field, and importable by the scene model).
"""

from __future__ import annotations

import math
from dataclasses import dataclass


class RangeError(ValueError):
    """A typed value outside its :class:`Range`; the message names the range and unit."""


@dataclass(frozen=True)
class Range:
    """``low <= value <= high`` (``low < value`` when ``low_open``), finite, in ``unit``."""

    what: str
    low: float
    high: float
    unit: str
    integer: bool = False
    low_open: bool = False

    def describe(self) -> str:
        lo = "above" if self.low_open else "from"
        unit = f" {self.unit}" if self.unit else ""
        return f"{self.what} {lo} {_fmt(self.low)} to {_fmt(self.high)}{unit}"

    def parse(self, text: str) -> float | int:
        """The value of ``text``, or RangeError saying what was expected."""
        value: float | int
        try:
            value = int(text, 10) if self.integer else float(text)
        except (TypeError, ValueError):
            kind = "a whole number" if self.integer else "a number"
            raise RangeError(f"expected {kind}: {self.describe()}, got {text!r}") from None
        return self.check(value, text)

    def check(self, value: float | int, shown: str | None = None) -> float | int:
        """``value`` itself when inside the range, else RangeError."""
        shown = repr(value) if shown is None else repr(shown)
        finite = math.isfinite(value) if isinstance(value, float) else True
        too_low = value <= self.low if self.low_open else value < self.low
        if not finite or too_low or value > self.high:
            raise RangeError(f"expected {self.describe()}, got {shown}")
        return value


def _fmt(x: float) -> str:
    return f"{int(x):,}" if float(x).is_integer() and abs(x) < 1e15 else f"{x:g}"


#: Longest time a user can name in an episode (about 11.6 days of recorded time).
MAX_SECONDS = 1_000_000.0

TIME = Range("a time", 0.0, MAX_SECONDS, "seconds")
TRAIL = Range("a trail length", 0.0, 3600.0, "seconds")
TITLE_SECONDS = Range("a title card length", 0.0, 60.0, "seconds")
FPS = Range("a frame rate", 1.0, 120.0, "frames per second")
SPEED = Range("a playback speed", 0.1, 16.0, "times real time")
SCALE = Range("a pixel scale", 0.1, 4.0, "times the frame size")
DPI = Range("a resolution", 10.0, 10_000.0, "dots per inch")
FRAME_SIDE = Range("a frame side", 16, 7680, "pixels", integer=True)
EPISODE = Range("an episode index", 0, 1_000_000_000, "", integer=True)
EPISODES = Range("an episode count", 1, 100_000, "episodes", integer=True)
SEED = Range("a seed", 0, 2**63 - 1, "", integer=True)
DT = Range("a time step", 1e-4, 60.0, "seconds")
MAX_TIME = Range("an episode time limit", 0.1, 36_000.0, "seconds")
RESOLUTION = Range("a cell size", 0.001, 100.0, "metres")
CLEARANCE = Range("a clearance", 0.0, 100.0, "metres")
TOLERANCE = Range("an outline tolerance", 0.0, 100.0, "metres")
MIN_AREA = Range("a speck size", 0.0, 1_000_000.0, "square metres")
GAP = Range("a pause", 0.001, MAX_SECONDS, "seconds")
SHARE = Range("a probability", 0.0, 1.0, "")
PERMUTATIONS = Range("a shuffle count", 0, 100_000, "shuffles", integer=True)

#: Longest clip (frames) rendered in one job: about 1 h 50 min at 30 frames per second.
MAX_CLIP_FRAMES = 200_000
#: Longest scripted episode (steps) a rollout records.
MAX_ROLLOUT_STEPS = 1_000_000

ALL: dict[str, Range] = {
    "time": TIME,
    "trail": TRAIL,
    "title_seconds": TITLE_SECONDS,
    "fps": FPS,
    "speed": SPEED,
    "scale": SCALE,
    "dpi": DPI,
    "frame_side": FRAME_SIDE,
    "episode": EPISODE,
    "episodes": EPISODES,
    "seed": SEED,
    "dt": DT,
    "max_time": MAX_TIME,
    "resolution": RESOLUTION,
    "clearance": CLEARANCE,
    "tolerance": TOLERANCE,
    "min_area": MIN_AREA,
    "gap": GAP,
    "share": SHARE,
    "permutations": PERMUTATIONS,
}

__all__ = ["ALL", "MAX_CLIP_FRAMES", "MAX_ROLLOUT_STEPS", "MAX_SECONDS", "Range", "RangeError"]
