"""Where a pointer lands: snapping to vertices, wall lines and the grid (no Qt).

Priority is vertex, then wall line (room and obstacle edges), then grid; a vertex or wall only
attracts within ``tolerance`` metres (the canvas converts a few pixels into metres).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from arena_studio.core.scene.model import Scene
from arena_studio.editing.edits import ObjKey

Point = tuple[float, float]


@dataclass(frozen=True)
class SnapSettings:
    enabled: bool = True
    grid: bool = True
    vertices: bool = True
    walls: bool = True


@dataclass(frozen=True)
class Snap:
    point: Point
    kind: str  # "vertex" | "wall" | "grid" | "none"


def _outlines(scene: Scene, exclude: ObjKey | None) -> list[np.ndarray]:
    rings: list[np.ndarray] = []
    for r in scene.rooms:
        if exclude != ("rooms", r.id):
            rings.append(np.asarray(r.outline, dtype=np.float64))
    for o in scene.obstacles:
        if o.outline is not None and exclude != ("obstacles", o.id):
            rings.append(np.asarray(o.outline, dtype=np.float64))
    return [r for r in rings if len(r) >= 2]


def nearest_on_segments(segs: np.ndarray, p: np.ndarray) -> tuple[np.ndarray, float]:
    """Closest point on any of the (N, 2, 2) segments to ``p`` and its distance."""
    a, b = segs[:, 0], segs[:, 1]
    ab = b - a
    denom = np.einsum("ij,ij->i", ab, ab)
    t = np.where(denom > 0, np.einsum("ij,ij->i", p - a, ab) / np.where(denom > 0, denom, 1), 0)
    t = np.clip(t, 0.0, 1.0)
    q = a + ab * t[:, None]
    d = np.hypot(*(q - p).T)
    i = int(np.argmin(d))
    return q[i], float(d[i])


def snap_point(
    scene: Scene,
    xy: Point,
    grid_step: float,
    tolerance: float,
    settings: SnapSettings = SnapSettings(),
    exclude: ObjKey | None = None,
) -> Snap:
    if not settings.enabled:
        return Snap((float(xy[0]), float(xy[1])), "none")
    p = np.asarray(xy, dtype=np.float64)
    rings = _outlines(scene, exclude)
    if settings.vertices and rings:
        verts = np.concatenate(rings)
        d = np.hypot(*(verts - p).T)
        i = int(np.argmin(d))
        if d[i] <= tolerance:
            return Snap((float(verts[i, 0]), float(verts[i, 1])), "vertex")
    if settings.walls and rings:
        segs = np.concatenate([np.stack([r, np.roll(r, -1, axis=0)], axis=1) for r in rings])
        q, dist = nearest_on_segments(segs, p)
        if dist <= tolerance:
            return Snap((float(q[0]), float(q[1])), "wall")
    if settings.grid and grid_step > 0 and math.isfinite(grid_step):
        gx = round(p[0] / grid_step) * grid_step
        gy = round(p[1] / grid_step) * grid_step
        return Snap((float(gx), float(gy)), "grid")
    return Snap((float(p[0]), float(p[1])), "none")


def nice_step(approx: float) -> float:
    """The 1-2-5 series value at or above ``approx`` (common practice for grids and rulers)."""
    if approx <= 0 or not math.isfinite(approx):
        return 1.0
    exp = math.floor(math.log10(approx))
    for m in (1.0, 2.0, 5.0, 10.0):
        step = m * 10.0**exp
        if step >= approx * (1 - 1e-9):
            return step
    return 10.0 ** (exp + 1)
