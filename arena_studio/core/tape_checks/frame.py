"""Likely unit or axis mistakes: poses that fit the scene only after a simple change.

A simulator that loaded the layout in centimetres or millimetres, with y pointing down, or
with x and y swapped records poses that mostly miss the open area. When too few recorded
centres fit as they are, each change below is tried on a sample of them; one that makes
nearly all fit is reported (and the per-step wall and speed checks, which would only repeat
the same mistake thousands of times, are skipped).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from arena_studio.core.geometry import bounds
from arena_studio.core.tape_checks.findings import TapeFinding, tape_finding
from arena_studio.core.tape_checks.walls import DEPTH_TOLERANCE, SceneWalls

#: as recorded, at least this share of centres inside the open area means "no mistake"
FITS_AS_IS = 0.9
#: a change must bring at least this share inside to be named
FITS_CHANGED = 0.98
#: changed centres must spread over at least this share of the scene's diagonal (dividing
#: by 1000 fits any small cloud into a room corner without meaning anything)
MIN_SPREAD = 0.2
#: centres sampled for the test
SAMPLE = 20000

Change = tuple[str, str, Callable[[np.ndarray], np.ndarray]]


def changes(walls: SceneWalls) -> list[Change]:
    """(code, description, transform of (N, 2) points) for each mistake we look for."""
    _, y0, _, y1 = bounds(walls.scene)
    return [
        ("units-mismatch", "divided by 100 (recorded in centimetres?)", lambda p: p / 100.0),
        ("units-mismatch", "divided by 1000 (recorded in millimetres?)", lambda p: p / 1000.0),
        ("axes-mismatch", "with y negated (y axis pointing down?)", lambda p: p * [1.0, -1.0]),
        (
            "axes-mismatch",
            "with y flipped within the scene (y = top - y, image rows?)",
            lambda p: np.column_stack([p[:, 0], y0 + y1 - p[:, 1]]),
        ),
        ("axes-mismatch", "with x and y swapped", lambda p: p[:, ::-1]),
    ]


def fit(walls: SceneWalls, xy: np.ndarray) -> float:
    """Share of points inside the open area (within the depth tolerance)."""
    if len(xy) == 0:
        return 1.0
    return float(np.mean(walls.outside(xy) <= DEPTH_TOLERANCE))


def sample_points(poses: list[np.ndarray], limit: int = SAMPLE) -> np.ndarray:
    """Up to ``limit`` centres spread evenly over the given (T, A, 3) pose arrays."""
    xy = np.concatenate([p[:, :, :2].reshape(-1, 2) for p in poses]) if poses else np.zeros((0, 2))
    if len(xy) > limit:
        xy = xy[np.linspace(0, len(xy) - 1, limit).astype(np.int64)]
    return xy


def _spread(xy: np.ndarray) -> float:
    """Diagonal of the points' bounding box."""
    return float(np.hypot(*(xy.max(axis=0) - xy.min(axis=0)))) if len(xy) else 0.0


def check_frame(walls: SceneWalls, xy: np.ndarray) -> list[TapeFinding]:
    """A finding naming the change that makes the recorded centres fit, if one does."""
    as_is = fit(walls, xy)
    if as_is >= FITS_AS_IS:
        return []
    best: tuple[float, float, str, str] | None = None
    x0, y0, x1, y1 = bounds(walls.scene)
    least = MIN_SPREAD * float(np.hypot(x1 - x0, y1 - y0))
    for code, text, change in changes(walls):
        moved = change(xy)
        if _spread(moved) < least:
            continue  # shrunk into a corner: fitting there says nothing
        share = fit(walls, moved)
        # equal shares (a small room fits poses / 100 and / 1000 alike): the change that
        # spreads them widest over the scene is the likelier one
        key = (round(share, 3), _spread(moved))
        if share >= FITS_CHANGED and (best is None or key > best[:2]):
            best = (*key, code, text)
    if best is None:
        return []
    share, _, code, text = best
    return [
        tape_finding(
            code,
            f"only {100 * as_is:.0f}% of recorded centres are inside the scene's open area, "
            f"{100 * share:.0f}% are {text}; per-step wall and speed checks were skipped",
        )
    ]


__all__ = ["check_frame", "fit", "sample_points"]
