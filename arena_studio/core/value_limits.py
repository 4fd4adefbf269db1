"""Documented ranges for numbers inside files (scenes, tapes, imports).

One place so that a scene, a tape and an imported table agree on what they accept. Values
outside these ranges are refused when the file is read, naming the field, before any
geometry or drawing code sees them: shapely, numpy and the painters lose all precision (or
overflow) long before float64 runs out, and a 1 km arena already needs only 1e3.

Numbers a person types (command options, dialog boxes) have their own table,
:mod:`arena_studio.core.limits`; this module holds only what files may contain.
"""

from __future__ import annotations

import math

import numpy as np

#: largest |x| or |y| (metres) of any position in a scene, a tape or an import
COORDINATE_LIMIT = 1e6
#: largest |heading| (radians): far beyond any real angle, small enough for float64 sin/cos
HEADING_LIMIT = 1e6
#: largest radius or reach (metres): a disc still fits inside the coordinate range
RADIUS_LIMIT = 1e6
#: shortest and longest tape time step (seconds)
DT_MIN = 1e-6
DT_MAX = 3600.0


def describe_number(value: float) -> str:
    """A number as a user reads it in an error line (no 300-digit expansions)."""
    if not math.isfinite(value):
        return str(value)
    return f"{value:g}"


def pose_problem(poses: np.ndarray) -> str | None:
    """What is wrong with an episode's (T, A, 3) poses (first step and agent), or None."""
    with np.errstate(invalid="ignore"):
        arr = np.asarray(poses, dtype=np.float64)
    if arr.size == 0:
        return None
    bound = min(COORDINATE_LIMIT, HEADING_LIMIT)
    if arr.min() >= -bound and arr.max() <= bound:  # the usual case: two reductions (NaN fails)
        return None
    finite = np.isfinite(arr)
    if not finite.all():
        t, a = (int(v) for v in np.argwhere(~finite.all(axis=2))[0])
        return f"step {t} agent {a}: pose is not a finite number"
    limits = np.array([COORDINATE_LIMIT, COORDINATE_LIMIT, HEADING_LIMIT])
    far = np.abs(arr) > limits
    if far.any():
        t, a, k = (int(v) for v in np.argwhere(far)[0])
        name, unit = (("x", "m"), ("y", "m"), ("heading", "rad"))[k]
        return (
            f"step {t} agent {a}: pose {name} = {arr[t, a, k]:g} is outside ±{limits[k]:g} {unit}"
        )
    return None


__all__ = [
    "COORDINATE_LIMIT",
    "DT_MAX",
    "DT_MIN",
    "HEADING_LIMIT",
    "RADIUS_LIMIT",
    "describe_number",
    "pose_problem",
]
