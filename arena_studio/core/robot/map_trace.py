"""Trace an occupancy map's free space into rooms and obstacles of a scene.

Free cells are outlined by contourpy's filled contours (marching squares on cell centres: an
outline runs along cell edges but cuts each corner by half a cell; the corner point is put
back, so outlines follow the cells' edges exactly). Each connected free
area becomes a room; what lies inside it and is not free (walls, furniture, unknown cells)
becomes an obstacle. Outlines are simplified with shapely (Douglas-Peucker, topology kept)
to a tolerance in metres, by default one cell; free areas and enclosed blobs smaller than a
minimum area are dropped as specks (a dropped blob becomes floor). Coordinates are metres in
the map frame: the lower-left corner of the image's bottom-left pixel is the YAML ``origin``
(x, y), rotated by its ``yaw``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from shapely import affinity
from shapely.geometry import Polygon
from shapely.geometry.polygon import orient

from arena_studio.core.robot.errors import RobotImportError
from arena_studio.core.robot.map_yaml import FREE, OccupancyMap
from arena_studio.core.scene import GoalSpec, Obstacle, Room, Scene
from arena_studio.core.scene.fields import MAX_VERTICES

#: default speck size in cells (a 3 x 3 blob)
DEFAULT_SPECK_CELLS = 9


@dataclass(frozen=True)
class TracedMap:
    """Rooms (outer rings) and obstacles (enclosed blobs) in map-frame metres."""

    rooms: tuple[Polygon, ...]
    obstacles: tuple[Polygon, ...]
    tolerance: float
    min_area: float
    dropped: int  # specks dropped (free areas and enclosed blobs)

    @property
    def vertex_count(self) -> int:
        rings = [*self.rooms, *self.obstacles]
        return sum(len(p.exterior.coords) - 1 for p in rings)


def free_polygons(cells: np.ndarray, resolution: float) -> list[Polygon]:
    """Free areas (with holes) in local metres: x right, y up from the image's lower left."""
    import contourpy

    free = (cells[::-1] == FREE).astype(np.float64)  # row 0 = lowest y
    h, w = free.shape
    padded = np.zeros((h + 2, w + 2))
    padded[1:-1, 1:-1] = free
    xs = (np.arange(w + 2) - 0.5) * resolution  # cell centres; the pad sits outside
    ys = (np.arange(h + 2) - 0.5) * resolution
    gen = contourpy.contour_generator(
        xs, ys, padded, fill_type=contourpy.FillType.OuterOffset, corner_mask=True
    )
    filled: Any = gen.filled(0.5, 1.5)  # OuterOffset: (points list, offsets list)
    points, offsets = filled
    out: list[Polygon] = []
    for pts, offs in zip(points, offsets, strict=True):
        rings = [
            square_corners(pts[offs[i] : offs[i + 1]], resolution) for i in range(len(offs) - 1)
        ]
        poly = Polygon(rings[0], rings[1:])
        if not poly.is_valid:  # two areas meeting at one cell corner: split them there
            fixed = poly.buffer(0)
            out.extend(getattr(fixed, "geoms", [fixed]))
        else:
            out.append(poly)
    return out


def square_corners(ring: np.ndarray, resolution: float) -> np.ndarray:
    """Put back the cell corner marching squares cuts off at each turn.

    A cut runs between the midpoints of two edges of one square of cell centres; in units
    of cells, the point on a horizontal edge has a whole x, the one on a vertical edge a
    whole y, and the cells' common corner is (that x, that y).
    """
    u = ring / resolution
    p, q = u[:-1], u[1:]
    diagonal = (np.abs(q[:, 0] - p[:, 0]) > 1e-6) & (np.abs(q[:, 1] - p[:, 1]) > 1e-6)
    p_whole_x = np.abs(p[:, 0] - np.round(p[:, 0])) < 1e-6
    corner = np.where(
        p_whole_x[:, None], np.column_stack([p[:, 0], q[:, 1]]), np.column_stack([q[:, 0], p[:, 1]])
    )
    out = [u[0]]
    for i in range(len(p)):
        if diagonal[i]:
            out.append(corner[i])
        out.append(q[i])
    return _corners_only(np.round(np.array(out) * 2)) / 2 * resolution


def _corners_only(ring: np.ndarray) -> np.ndarray:
    """Drop repeated and straight-through points of a closed ring in whole half-cells, so
    every vertex is a corner (simplification keeps a ring's first point: it must be one)."""
    r = ring[:-1]
    r = r[np.any(r != np.roll(r, 1, axis=0), axis=1)]
    a, b = r - np.roll(r, 1, axis=0), np.roll(r, -1, axis=0) - r
    r = r[a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0] != 0]
    return np.vstack([r, r[:1]])


def trace_map(
    omap: OccupancyMap, tolerance: float | None = None, min_area: float | None = None
) -> TracedMap:
    """Rooms and obstacles of a map; ``tolerance`` in metres, ``min_area`` in square metres."""
    res = omap.info.resolution
    tol = res if tolerance is None else float(tolerance)
    speck = DEFAULT_SPECK_CELLS * res * res if min_area is None else float(min_area)
    if not (math.isfinite(tol) and tol >= 0):
        raise RobotImportError("tolerance: expected metres >= 0")
    if not (math.isfinite(speck) and speck >= 0):
        raise RobotImportError("min_area: expected square metres >= 0")
    rooms: list[Polygon] = []
    obstacles: list[Polygon] = []
    dropped = 0
    for poly in free_polygons(omap.cells, res):
        if poly.area < speck:
            dropped += 1
            continue
        holes = [h for h in poly.interiors if Polygon(h).area >= speck]
        dropped += len(poly.interiors) - len(holes)
        kept = Polygon(poly.exterior, holes)
        simple = kept.simplify(tol, preserve_topology=True) if tol > 0 else kept
        if not simple.is_valid or simple.is_empty:
            simple = kept
        simple = _to_map_frame(simple, omap.info.origin)
        rooms.append(Polygon(simple.exterior))
        obstacles.extend(Polygon(h) for h in simple.interiors)
    return TracedMap(tuple(rooms), tuple(obstacles), tol, speck, dropped)


def _to_map_frame(poly: Polygon, origin: tuple[float, float, float]) -> Polygon:
    ox, oy, yaw = origin
    c, s = math.cos(yaw), math.sin(yaw)
    moved: Polygon = affinity.affine_transform(poly, [c, -s, s, c, ox, oy])
    return moved


def _ring(poly: Polygon, what: str) -> tuple[tuple[float, float], ...]:
    ring = orient(poly).exterior.coords[:-1]
    if len(ring) > MAX_VERTICES:
        raise RobotImportError(
            f"{what}: {len(ring)} vertices, more than an outline takes ({MAX_VERTICES}); "
            "raise the tolerance"
        )
    return tuple((round(x, 6), round(y, 6)) for x, y in ring)


def map_scene(traced: TracedMap, name: str, description: str = "") -> Scene:
    """An ordinary editable scene: rooms and obstacles, no landmarks or agents yet."""
    rooms = tuple(
        Room(id=f"room-{i + 1}", outline=_ring(p, f"room-{i + 1}"))
        for i, p in enumerate(traced.rooms)
    )
    obstacles = tuple(
        Obstacle(id=f"obstacle-{i + 1}", outline=_ring(p, f"obstacle-{i + 1}"))
        for i, p in enumerate(traced.obstacles)
    )
    return Scene(
        name=name or "map",
        rooms=rooms,
        obstacles=obstacles,
        goals=GoalSpec(),
        description=description,
    )


__all__ = ["DEFAULT_SPECK_CELLS", "TracedMap", "free_polygons", "map_scene", "trace_map"]
