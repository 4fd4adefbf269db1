"""Hit testing in world coordinates: which object, vertex or edge is under the pointer (no Qt)."""

from __future__ import annotations

import math

from shapely.geometry import Point as SPoint
from shapely.geometry import Polygon, box

from arena_studio.core.geometry.regions import obstacle_geometry
from arena_studio.core.scene.model import Scene
from arena_studio.editing.edits import GROUPS, ObjKey, find, outline_of

Point = tuple[float, float]


def _shape(obj: object, group: str) -> object:
    if group == "rooms":
        return Polygon(obj.outline)  # type: ignore[attr-defined]
    if group == "obstacles":
        return obstacle_geometry(obj)  # type: ignore[arg-type]
    if group == "landmarks":
        return SPoint(obj.position)  # type: ignore[attr-defined]
    start = obj.start  # type: ignore[attr-defined]
    if start.pose is not None:
        return SPoint(start.pose[:2])
    return Polygon(start.region)


def hit_object(scene: Scene, xy: Point, tol: float) -> ObjKey | None:
    """Topmost object at ``xy``: landmarks, agents, obstacles, then the smallest room."""
    p = SPoint(xy)
    for lm in reversed(scene.landmarks):
        if p.distance(SPoint(lm.position)) <= max(tol, 0.0):
            return ("landmarks", lm.id)
    for a in reversed(scene.agents):
        shape = _shape(a, "agents")
        reach = max(tol, a.radius) if a.start.pose is not None else tol
        if shape.distance(p) <= reach:  # type: ignore[attr-defined]
            return ("agents", a.id)
    for o in reversed(scene.obstacles):
        if obstacle_geometry(o).distance(p) <= tol:
            return ("obstacles", o.id)
    rooms = [(Polygon(r.outline), r.id) for r in scene.rooms if len(r.outline) >= 3]
    inside = [(poly.area, rid) for poly, rid in rooms if poly.buffer(0).distance(p) <= tol]
    if inside:
        return ("rooms", min(inside)[1])
    return None


def objects_in_rect(scene: Scene, a: Point, b: Point) -> list[ObjKey]:
    """Objects lying wholly inside the rectangle spanned by ``a`` and ``b`` (rubber band)."""
    rect = box(min(a[0], b[0]), min(a[1], b[1]), max(a[0], b[0]), max(a[1], b[1]))
    out: list[ObjKey] = []
    for group in GROUPS:
        for obj in getattr(scene, group):
            shape = _shape(obj, group)
            if rect.covers(shape):  # type: ignore[arg-type]
                out.append((group, obj.id))
    return out


def hit_vertex(scene: Scene, key: ObjKey, xy: Point, tol: float) -> int | None:
    pts = outline_of(find(scene, key))
    if not pts:
        return None
    best = min(range(len(pts)), key=lambda i: math.dist(pts[i], xy))
    return best if math.dist(pts[best], xy) <= tol else None


def hit_edge(scene: Scene, key: ObjKey, xy: Point, tol: float) -> tuple[int, Point] | None:
    """``(insert_index, point)`` for the closest edge within ``tol`` of ``xy``."""
    pts = outline_of(find(scene, key))
    if not pts or len(pts) < 2:
        return None
    best: tuple[float, int, Point] | None = None
    for i in range(len(pts)):
        (ax, ay), (bx, by) = pts[i], pts[(i + 1) % len(pts)]
        dx, dy = bx - ax, by - ay
        den = dx * dx + dy * dy
        t = 0.0 if den == 0 else max(0.0, min(1.0, ((xy[0] - ax) * dx + (xy[1] - ay) * dy) / den))
        q = (ax + t * dx, ay + t * dy)
        d = math.dist(q, xy)
        if best is None or d < best[0]:
            best = (d, i + 1, q)
    if best is None or best[0] > tol:
        return None
    return best[1], best[2]
