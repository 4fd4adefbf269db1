"""Shapely geometry derived from a scene: walkable area, free space, walls.

All of it follows the OGC Simple Features model as implemented by GEOS. Results are cached
per scene value (scenes are immutable and hashable), so the checker, the planner and the
renderer share one computation.

The caches are per thread: callers may ``shapely.prepare`` what they get, and GEOS prepared
geometries are not safe to use from two threads at once (GEOS issue #825), so a geometry
object never crosses threads through these caches. The editor's background checker and the
UI thread each build their own.
"""

from __future__ import annotations

import math
import threading
import weakref
from collections.abc import Callable
from functools import lru_cache, wraps
from typing import Any, TypeVar

import numpy as np
import shapely
from shapely.geometry import LineString, MultiPolygon, Point, Polygon
from shapely.geometry.base import BaseGeometry
from shapely.ops import nearest_points, unary_union

from arena_studio.core.scene.model import Obstacle, Scene

F = TypeVar("F", bound=Callable[..., Any])


def per_thread_cache(maxsize: int) -> Callable[[F], F]:
    """Like ``functools.lru_cache(maxsize)``, but each thread has its own cache."""

    def decorate(fn: F) -> F:
        local = threading.local()
        # Every live thread's cache, for cache_clear(); a finished thread's cache goes with it.
        caches: weakref.WeakSet[Any] = weakref.WeakSet()
        lock = threading.Lock()

        def cached() -> Any:
            cache = getattr(local, "cache", None)
            if cache is None:
                cache = local.cache = lru_cache(maxsize=maxsize)(fn)
                with lock:
                    caches.add(cache)
            return cache

        @wraps(fn)
        def wrapper(*args: Any) -> Any:
            return cached()(*args)

        def cache_clear() -> None:
            with lock:
                live = list(caches)
            for cache in live:
                cache.cache_clear()

        wrapper.cache_clear = cache_clear  # type: ignore[attr-defined]
        return wrapper  # type: ignore[return-value]

    return decorate


#: Largest allowed distance between a true arc and its polygon approximation (metres).
ARC_TOLERANCE = 1e-3


def quad_segments(radius: float, tolerance: float = ARC_TOLERANCE) -> int:
    """Segments per quarter circle so the chord error (sagitta) stays under ``tolerance``.

    A chord spanning angle t on a circle of radius r deviates by r * (1 - cos(t / 2)).
    """
    if radius <= tolerance:
        return 4
    half_angle = math.acos(1.0 - tolerance / radius)
    return max(4, math.ceil((math.pi / 2) / (2 * half_angle)))


def polygon(outline: tuple[tuple[float, float], ...]) -> Polygon:
    """The outline as a polygon; an outline still being drawn (< 3 points) is empty."""
    if len(outline) < 3:
        return Polygon()
    return Polygon(outline)


def region_area(outline: tuple[tuple[float, float], ...]) -> BaseGeometry:
    """A start region as a valid area: a self-crossing outline (a bowtie) becomes its valid
    parts, so set operations on it cannot fail (the checker reports the outline itself)."""
    return _valid(polygon(outline))


def obstacle_geometry(obstacle: Obstacle) -> Polygon:
    if obstacle.outline is not None:
        return polygon(obstacle.outline)
    assert obstacle.circle is not None
    c = obstacle.circle
    return Point(c.center).buffer(c.radius, quad_segs=quad_segments(c.radius))


def _clean(geom: BaseGeometry) -> BaseGeometry:
    """Make valid and drop zero-area slivers left by unions of touching polygons."""
    if not geom.is_valid:
        geom = shapely.make_valid(geom)
    polys = [g for g in getattr(geom, "geoms", [geom]) if isinstance(g, Polygon | MultiPolygon)]
    merged = unary_union(polys) if polys else Polygon()
    return merged


@per_thread_cache(maxsize=64)
def walkable_area(scene: Scene) -> BaseGeometry:
    """Union of every room (touching or overlapping rooms join), invalid outlines repaired."""
    return _clean(unary_union([_valid(polygon(r.outline)) for r in scene.rooms]))


@per_thread_cache(maxsize=64)
def obstacle_area(scene: Scene) -> BaseGeometry:
    return _clean(unary_union([_valid(obstacle_geometry(o)) for o in scene.obstacles]))


@per_thread_cache(maxsize=64)
def open_area(scene: Scene) -> BaseGeometry:
    """Rooms minus obstacles: where a point-sized agent may be."""
    return _clean(walkable_area(scene).difference(obstacle_area(scene)))


@per_thread_cache(maxsize=256)
def free_space(scene: Scene, radius: float) -> BaseGeometry:
    """Open area shrunk by ``radius``: where the centre of an agent of that radius may be.

    The negative buffer rounds convex corners of obstacles with arcs whose chord error stays
    below :data:`ARC_TOLERANCE`.
    """
    area = open_area(scene)
    if radius <= 0:
        return area
    return _clean(area.buffer(-radius, quad_segs=quad_segments(radius)))


def free_parts(scene: Scene, radius: float) -> list[Polygon]:
    """Connected parts of an agent's free space, largest first."""
    geom = free_space(scene, radius)
    parts = [g for g in getattr(geom, "geoms", [geom]) if isinstance(g, Polygon) and not g.is_empty]
    return sorted(parts, key=lambda p: -p.area)


def _valid(geom: BaseGeometry) -> BaseGeometry:
    return geom if geom.is_valid else shapely.make_valid(geom)


@per_thread_cache(maxsize=64)
def wall_lines(scene: Scene) -> BaseGeometry:
    """Boundary of the walkable area: the lines wall-mounted landmarks sit on."""
    return walkable_area(scene).boundary


def nearest_wall_point(scene: Scene, xy: tuple[float, float]) -> tuple[tuple[float, float], float]:
    """Closest point on any wall line and its distance; ``((nan, nan), inf)`` with no rooms."""
    walls = wall_lines(scene)
    if walls.is_empty:
        return (math.nan, math.nan), math.inf
    p = Point(xy)
    _, q = nearest_points(p, walls)
    return (q.x, q.y), p.distance(q)


def segments_of(geom: BaseGeometry) -> np.ndarray:
    """Every boundary edge of a (multi)polygon as an (N, 2, 2) float64 array."""
    segs: list[np.ndarray] = []
    for ring in _rings(geom):
        xy = np.asarray(ring.coords, dtype=np.float64)
        if len(xy) >= 2:
            segs.append(np.stack([xy[:-1], xy[1:]], axis=1))
    if not segs:
        return np.zeros((0, 2, 2), dtype=np.float64)
    return np.concatenate(segs, axis=0)


def _rings(geom: BaseGeometry) -> list[LineString]:
    rings: list[LineString] = []
    for g in getattr(geom, "geoms", [geom]):
        if isinstance(g, Polygon) and not g.is_empty:
            rings.append(g.exterior)
            rings.extend(g.interiors)
        elif isinstance(g, MultiPolygon):
            rings.extend(_rings(g))
    return rings


def wall_segments(scene: Scene) -> np.ndarray:
    """Walls of the open area (room walls and obstacle outlines) as (N, 2, 2) segments."""
    return segments_of(open_area(scene))


def bounds(scene: Scene, margin: float = 0.0) -> tuple[float, float, float, float]:
    """(minx, miny, maxx, maxy) of everything drawn; a unit box for an empty scene.

    Taken from the coordinates themselves, not from a union of shapes: a bounding box needs
    no topology, so an invalid outline (a bow-tie start region) cannot make it fail, and
    values that do not fit a float box (a vertex at -1e308 plus a margin) are left out."""
    points: list[tuple[float, float]] = []
    points += [p for r in scene.rooms if len(r.outline) >= 3 for p in r.outline]
    for o in scene.obstacles:
        if o.outline is not None and len(o.outline) >= 3:
            points += o.outline
        elif o.circle is not None:
            (cx, cy), rad = o.circle.center, o.circle.radius
            points += [(cx - rad, cy - rad), (cx + rad, cy + rad)]
    points += [lm.position for lm in scene.landmarks]
    for a in scene.agents:
        if a.start.pose is not None:
            points.append((a.start.pose[0], a.start.pose[1]))
        elif a.start.region is not None and len(a.start.region) >= 3:
            points += a.start.region
    xy = np.asarray(points, dtype=float).reshape(-1, 2)
    with np.errstate(over="ignore", invalid="ignore"):
        xy = xy[np.isfinite(xy).all(axis=1) & np.isfinite(xy - margin).all(axis=1)]
        xy = xy[np.isfinite(xy + margin).all(axis=1)]
    if not len(xy):
        return (-margin, -margin, 1.0 + margin, 1.0 + margin)
    minx, miny = (float(v) for v in xy.min(axis=0))
    maxx, maxy = (float(v) for v in xy.max(axis=0))
    return (minx - margin, miny - margin, maxx + margin, maxy + margin)


@per_thread_cache(maxsize=64)
def inward_normals(scene: Scene) -> tuple[tuple[float, float], ...]:
    """Unit direction from each landmark into the open area (its wall's inward normal).

    Wall landmarks may sit on a room wall or on an obstacle outline (a sign on a pillar), so
    the test area is rooms minus obstacles.

    Sampled: the mean of the directions, among 32 around the landmark, whose point a short
    step away lies in the walkable area. Free-standing landmarks get (0, 1).
    """
    area = open_area(scene)
    angles = np.linspace(0, 2 * math.pi, 32, endpoint=False)
    dirs = np.stack([np.cos(angles), np.sin(angles)], axis=1)
    out = []
    for lm in scene.landmarks:
        if lm.mount != "wall" or area.is_empty:
            out.append((0.0, 1.0))
            continue
        step = max(0.05, 0.3 * lm.reach_radius)
        inside = np.array(
            [
                area.contains(Point(lm.position[0] + step * dx, lm.position[1] + step * dy))
                for dx, dy in dirs
            ]
        )
        if not inside.any() or inside.all():
            out.append((0.0, 1.0))
            continue
        v = dirs[inside].mean(axis=0)
        n = float(np.hypot(*v)) or 1.0
        out.append((float(v[0] / n), float(v[1] / n)))
    return tuple(out)


__all__ = [
    "ARC_TOLERANCE",
    "F",
    "bounds",
    "free_parts",
    "free_space",
    "inward_normals",
    "nearest_wall_point",
    "obstacle_area",
    "obstacle_geometry",
    "open_area",
    "per_thread_cache",
    "polygon",
    "quad_segments",
    "region_area",
    "segments_of",
    "walkable_area",
    "wall_lines",
    "wall_segments",
]
