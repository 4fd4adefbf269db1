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

import math
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass
from functools import cached_property
from typing import TYPE_CHECKING

import numpy as np
import shapely
from shapely.geometry import MultiPolygon, Polygon
from shapely.geometry.base import BaseGeometry
from shapely.geometry.polygon import orient

from arena_studio.core.errors import ArenaError

if TYPE_CHECKING:
    from scipy.sparse import csr_matrix

#: Growth (m) of the free space used for visibility tests; far below any drawing precision.
VISIBILITY_SLACK = 1e-7
#: Relative tolerance (sine of the angle) for "straight" and "tangent" tests.
ANGLE_TOLERANCE = 1e-9
#: Weight added to every graph edge so zero-length edges stay edges in scipy's sparse graphs.
EDGE_EPSILON = 1e-12
#: Corner pairs tested per block: the pair test's temporaries stay near 100 MB whatever the
#: corner count (the pairs themselves are never held all at once).
PAIR_BLOCK = 1_000_000
#: Bytes of the pair test's temporaries per pair of one block.
BYTES_PER_PAIR = 100
#: Bytes a kept leg costs (node pair, length, both CSR directions, scipy's work arrays).
BYTES_PER_LEG = 64
#: Most corner pairs one graph may test (about 5,500 corners): about 6 s and 250 MB on a
#: 2-core machine (tests/bench/bench_scale.py); more is refused before any work.
MAX_GRAPH_PAIRS = 15_000_000
#: Most legs one graph may keep (512 MB at BYTES_PER_LEG); more stops the build.
MAX_GRAPH_LEGS = 8_000_000
#: Pairs tested a second on the 2-core machine the limits were measured on (for estimates).
PAIRS_PER_SECOND = 2_500_000


class PlanTooLarge(ArenaError, ValueError):
    """A planning job over the documented limits, refused with its estimate."""


#: Where long graph builds report ``(pairs done, pairs in all)``; see :func:`graph_progress`.
_PROGRESS: ContextVar[Callable[[int, int], None] | None] = ContextVar(
    "visibility_progress", default=None
)


@contextmanager
def graph_progress(report: Callable[[int, int], None]) -> Iterator[None]:
    """Send ``(pairs done, pairs in all)`` of every graph built inside to ``report``."""
    token = _PROGRESS.set(report)
    try:
        yield
    finally:
        _PROGRESS.reset(token)


def graph_estimate(corners: int) -> tuple[int, float, int]:
    """(corner pairs to test, seconds, bytes at most) of a graph over ``corners`` nodes.

    Memory is one block of the pair test plus every leg that may be kept (up to
    :data:`MAX_GRAPH_LEGS`: in the worst case, corners of convex obstacles in open space, all
    pairs see each other).
    """
    pairs = corners * (corners - 1) // 2
    legs = min(pairs, MAX_GRAPH_LEGS)
    need = min(pairs, PAIR_BLOCK) * BYTES_PER_PAIR + legs * BYTES_PER_LEG
    return pairs, pairs / PAIRS_PER_SECOND, need


def max_graph_corners() -> int:
    """The most corners whose pair count stays within :data:`MAX_GRAPH_PAIRS`."""
    return int((1 + math.isqrt(1 + 8 * MAX_GRAPH_PAIRS)) // 2)


def check_graph_size(corners: int, radius: float) -> None:
    """Refuse a graph over the pair limit before any work, with the estimate."""
    pairs, seconds, need = graph_estimate(corners)
    if pairs > MAX_GRAPH_PAIRS:
        raise PlanTooLarge(
            f"the free space of agents of radius {radius:g} m has {corners:,} corners: its "
            f"visibility graph would test {pairs:,} corner pairs (about {seconds:,.0f} s, up to "
            f"{need / (1 << 20):,.0f} MB), more than planning takes ({MAX_GRAPH_PAIRS:,} pairs, "
            f"{max_graph_corners():,} corners); use fewer outline vertices or merge small "
            "obstacles"
        )


def _too_many_legs(legs: int, radius: float) -> PlanTooLarge:
    return PlanTooLarge(
        f"the visibility graph of agents of radius {radius:g} m keeps more than "
        f"{MAX_GRAPH_LEGS:,} legs (over {MAX_GRAPH_LEGS * BYTES_PER_LEG >> 20:,} MB); use fewer "
        "outline vertices or merge small obstacles"
    )


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
    ca, cb = _cross(d, a), _cross(d, b)
    # |sin| below the tolerance counts as straight: compared squared, so no square roots
    tol2 = ANGLE_TOLERANCE * ANGLE_TOLERANCE * (d[:, 0] ** 2 + d[:, 1] ** 2)
    flat_a = ca * ca <= tol2 * (a[:, 0] ** 2 + a[:, 1] ** 2)
    flat_b = cb * cb <= tol2 * (b[:, 0] ** 2 + b[:, 1] ** 2)
    return flat_a | flat_b | ((ca > 0) == (cb > 0))


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

    @cached_property
    def boundary(self) -> BaseGeometry:
        """The free space's outline (walls and obstacle edges), built once."""
        return self.free.boundary

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
    from scipy.sparse import csr_matrix  # lazy: scipy loads when a graph is first built

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
    check_graph_size(count, radius)
    i, j = _bitangent_legs(graph, prev, nxt)
    lengths = np.hypot(*(nodes[j] - nodes[i]).T)
    weights = lengths + EDGE_EPSILON
    graph.edges = np.stack([i, j], axis=1)
    graph.lengths = lengths
    graph.matrix = csr_matrix(
        (np.concatenate([weights, weights]), (np.concatenate([i, j]), np.concatenate([j, i]))),
        shape=(count, count),
    )
    return graph


def _row_blocks(count: int) -> Iterator[tuple[int, int, int]]:
    """(first row, end row, pairs) blocks of the upper triangle, about PAIR_BLOCK pairs each."""
    start = 0
    while start < count - 1:
        end, pairs = start, 0
        while end < count - 1 and (pairs == 0 or pairs + (count - 1 - end) <= PAIR_BLOCK):
            pairs += count - 1 - end
            end += 1
        yield start, end, pairs
        start = end


def _bitangent_legs(
    graph: VisibilityGraph, prev: np.ndarray, nxt: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Node pairs (i < j) whose segment is bitangent and clear, block by block of rows."""
    nodes = graph.nodes
    count = nodes.shape[0]
    total = count * (count - 1) // 2
    report = _PROGRESS.get()
    done = legs = 0
    kept_i: list[np.ndarray] = []
    kept_j: list[np.ndarray] = []
    for start, end, pairs in _row_blocks(count):
        rows = np.arange(start, end)
        sizes = count - 1 - rows
        i = np.repeat(rows, sizes)
        # j runs from row + 1 to count - 1 for each row: offsets within each row's run
        j = i + 1 + (np.arange(pairs) - np.repeat(np.cumsum(sizes) - sizes, sizes))
        d = nodes[j] - nodes[i]
        tangent = _tangent_at(nodes[i], d, prev[i], nxt[i])
        i, j, d = i[tangent], j[tangent], d[tangent]
        tangent = _tangent_at(nodes[j], d, prev[j], nxt[j])
        i, j = i[tangent], j[tangent]
        ok = graph.clear(nodes[i], nodes[j])
        kept_i.append(i[ok])
        kept_j.append(j[ok])
        legs += int(ok.sum())
        if legs > MAX_GRAPH_LEGS:
            raise _too_many_legs(legs, graph.radius)
        done += pairs
        if report is not None:
            report(done, total)
    if not kept_i:
        empty = np.zeros((0,), dtype=np.int64)
        return empty, empty.copy()
    return np.concatenate(kept_i), np.concatenate(kept_j)


__all__ = [
    "PlanTooLarge",
    "VisibilityGraph",
    "build_visibility_graph",
    "check_graph_size",
    "graph_estimate",
    "graph_progress",
    "polygons_of",
    "reflex_vertices",
]
