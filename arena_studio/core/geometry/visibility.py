"""Reduced visibility graph of one free-space geometry (one agent radius).

Shortest collision-free paths of a point among polygonal obstacles bend only at reflex
(inward-pointing) vertices of the free space, and each leg between two bends touches both
bend vertices tangentially (de Berg et al., Computational Geometry, ch. 15 [memory]). So the
graph keeps only reflex vertices as nodes and only bitangent pairs as edge candidates; an
edge is kept when its segment stays inside the closed free space (DE-9IM "covers"), so legs
that run along a boundary are allowed and only legs entering the complement's interior are
rejected.

Visibility tests run on a copy of the free space grown by :data:`VISIBILITY_SLACK` (mitre
joins, so no vertices are added): points computed by intersections land a few ulps off the
boundary, and the slack keeps such legs from being rejected by rounding.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from scipy.sparse import csr_matrix
from shapely.geometry import MultiPolygon, Polygon
from shapely.geometry.base import BaseGeometry
from shapely.geometry.polygon import orient

#: Growth (m) of the free space used for visibility tests; far below any drawing precision.
VISIBILITY_SLACK = 1e-7
#: Relative tolerance (sine of the angle) for "straight" and "tangent" tests.
ANGLE_TOLERANCE = 1e-9
#: Weight added to every graph edge so zero-length edges stay edges in scipy's sparse graphs.
EDGE_EPSILON = 1e-12


def polygons_of(geom: BaseGeometry) -> list[Polygon]:
    """The non-empty polygons of a (multi)polygon or collection."""
    out: list[Polygon] = []
    for g in getattr(geom, "geoms", [geom]):
        if isinstance(g, Polygon) and not g.is_empty:
            out.append(g)
        elif isinstance(g, MultiPolygon):
            out.extend(polygons_of(g))
    return out


def _cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]


def reflex_vertices(geom: BaseGeometry) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Reflex vertices of a free-space geometry with their ring neighbours.

    Rings are oriented with the free side on the left (exterior counter-clockwise, holes
    clockwise); a vertex is reflex where the boundary turns right. Returns (V, 2) arrays
    ``(vertex, previous, next)``.
    """
    found: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    for poly in polygons_of(geom):
        poly = orient(poly, sign=1.0)
        for ring in (poly.exterior, *poly.interiors):
            xy = np.asarray(ring.coords, dtype=np.float64)[:-1]
            if len(xy) < 3:
                continue
            prev = np.roll(xy, 1, axis=0)
            nxt = np.roll(xy, -1, axis=0)
            d1, d2 = xy - prev, nxt - xy
            norm = np.hypot(d1[:, 0], d1[:, 1]) * np.hypot(d2[:, 0], d2[:, 1])
            reflex = _cross(d1, d2) < -ANGLE_TOLERANCE * np.maximum(norm, 1e-300)
            found.append((xy[reflex], prev[reflex], nxt[reflex]))
    if not found:
        empty = np.zeros((0, 2), dtype=np.float64)
        return empty, empty.copy(), empty.copy()
    return tuple(np.concatenate(parts, axis=0) for parts in zip(*found, strict=True))  # type: ignore[return-value]


def _tangent_at(p: np.ndarray, d: np.ndarray, prev: np.ndarray, nxt: np.ndarray) -> np.ndarray:
    """True where the line through p along d leaves both ring neighbours on one side."""
    a, b = prev - p, nxt - p
    dn = np.hypot(d[:, 0], d[:, 1])
    sa = _cross(d, a) / np.maximum(dn * np.hypot(a[:, 0], a[:, 1]), 1e-300)
    sb = _cross(d, b) / np.maximum(dn * np.hypot(b[:, 0], b[:, 1]), 1e-300)
    sa = np.where(np.abs(sa) < ANGLE_TOLERANCE, 0.0, sa)
    sb = np.where(np.abs(sb) < ANGLE_TOLERANCE, 0.0, sb)
    return sa * sb >= 0.0


@dataclass(eq=False)
class VisibilityGraph:
    """Nodes (reflex vertices) and straight, collision-free legs between them.

    ``matrix`` is a symmetric (V, V) CSR matrix of leg lengths (plus :data:`EDGE_EPSILON`);
    ``edges`` the (E, 2) node pairs (i < j) and ``lengths`` their exact lengths.
    """

    radius: float
    free: BaseGeometry
    test_area: BaseGeometry
    nodes: np.ndarray
    edges: np.ndarray
    lengths: np.ndarray
    matrix: csr_matrix

    @property
    def node_count(self) -> int:
        return int(self.nodes.shape[0])

    def clear(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """(N,) bool: the straight legs a[i] -> b[i] stay inside the closed free space."""
        a = np.asarray(a, dtype=np.float64).reshape(-1, 2)
        b = np.asarray(b, dtype=np.float64).reshape(-1, 2)
        if a.shape[0] == 0:
            return np.zeros((0,), dtype=bool)
        same = np.all(a == b, axis=1)
        out = np.empty(a.shape[0], dtype=bool)
        if np.any(same):
            out[same] = shapely.covers(self.test_area, shapely.points(a[same]))
        rest = ~same
        if np.any(rest):
            lines = shapely.linestrings(np.stack([a[rest], b[rest]], axis=1))
            out[rest] = shapely.covers(self.test_area, lines)
        return out

    def contains(self, xy: np.ndarray) -> np.ndarray:
        """(N,) bool: points lie in the closed free space (within the visibility slack)."""
        pts = np.asarray(xy, dtype=np.float64).reshape(-1, 2)
        return shapely.covers(self.test_area, shapely.points(pts))


def build_visibility_graph(free: BaseGeometry, radius: float) -> VisibilityGraph:
    """Reduced visibility graph of ``free`` (the free space of an agent of ``radius``)."""
    if free.is_empty:
        test_area: BaseGeometry = free
    else:
        test_area = free.buffer(VISIBILITY_SLACK, join_style="mitre", mitre_limit=5.0)
        shapely.prepare(test_area)
    nodes, prev, nxt = reflex_vertices(free)
    count = nodes.shape[0]
    graph = VisibilityGraph(
        radius=radius,
        free=free,
        test_area=test_area,
        nodes=nodes,
        edges=np.zeros((0, 2), dtype=np.int64),
        lengths=np.zeros((0,), dtype=np.float64),
        matrix=csr_matrix((count, count), dtype=np.float64),
    )
    if count < 2:
        return graph
    i, j = np.triu_indices(count, k=1)
    d = nodes[j] - nodes[i]
    tangent = _tangent_at(nodes[i], d, prev[i], nxt[i]) & _tangent_at(nodes[j], d, prev[j], nxt[j])
    i, j = i[tangent], j[tangent]
    ok = graph.clear(nodes[i], nodes[j])
    i, j = i[ok], j[ok]
    lengths = np.hypot(*(nodes[j] - nodes[i]).T)
    weights = lengths + EDGE_EPSILON
    graph.edges = np.stack([i, j], axis=1)
    graph.lengths = lengths
    graph.matrix = csr_matrix(
        (np.concatenate([weights, weights]), (np.concatenate([i, j]), np.concatenate([j, i]))),
        shape=(count, count),
    )
    return graph


__all__ = ["VisibilityGraph", "build_visibility_graph", "polygons_of", "reflex_vertices"]
