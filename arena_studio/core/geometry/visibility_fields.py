"""Distance fields toward a target region over a visibility graph (one per radius, target).

A field holds every graph node's shortest distance to the target and the next step toward it;
:mod:`paths` builds one per (agent radius, landmark) and joins starts to it. See the
:mod:`paths` module docstring (steps 3-5) for why the end-point candidates suffice.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry.base import BaseGeometry

from arena_studio.core.geometry.visibility import EDGE_EPSILON, VisibilityGraph, polygons_of


@dataclass(eq=False)
class TargetField:
    """Every graph node's shortest distance to one target region, and how to get there."""

    target: BaseGeometry
    corners: np.ndarray  # (C, 2) candidate end points shared by every query point
    dist: np.ndarray  # (V,) distance to the target (inf: none)
    toward: np.ndarray  # (V,) next node toward the target; -1: go straight to ``end``
    end: np.ndarray  # (V, 2) end point of the straight last leg (nan where none)


def nearest_points_of(geom: BaseGeometry, xy: np.ndarray) -> np.ndarray:
    """(N, 2) nearest point of ``geom`` to each query point."""
    lines = shapely.shortest_line(geom, shapely.points(xy))
    coords = shapely.get_coordinates(lines).reshape(-1, 2, 2)
    return coords[:, 0, :]


def _end_candidates(target: BaseGeometry, corners: np.ndarray, xy: np.ndarray) -> np.ndarray:
    """(N, M, 2) candidate end points in ``target`` for each of N query points."""
    cands = [nearest_points_of(target, xy)[:, None, :]]
    parts = polygons_of(target)
    if len(parts) > 1:
        cands += [nearest_points_of(p, xy)[:, None, :] for p in parts]
    if corners.size:
        cands.append(np.broadcast_to(corners, (xy.shape[0], *corners.shape)))
    return np.concatenate(cands, axis=1)


def best_straight_leg(
    graph: VisibilityGraph, target: BaseGeometry, corners: np.ndarray, xy: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Length (inf where none) and end point of the best clear straight leg xy -> target."""
    n = xy.shape[0]
    if n == 0:
        return np.zeros((0,)), np.zeros((0, 2))
    cands = _end_candidates(target, corners, xy)
    m = cands.shape[1]
    starts = np.repeat(xy, m, axis=0)
    flat = cands.reshape(-1, 2)
    ok = graph.clear(starts, flat).reshape(n, m)
    lengths = np.hypot(*(flat - starts).T).reshape(n, m)
    lengths = np.where(ok, lengths, np.inf)
    pick = np.argmin(lengths, axis=1)
    rows = np.arange(n)
    return lengths[rows, pick], cands[rows, pick]


def target_corners(
    graph: VisibilityGraph,
    target: BaseGeometry,
    rim: BaseGeometry | None = None,
    every_vertex: bool = False,
) -> np.ndarray:
    """(C, 2) end-point candidates every query shares: the target's corners on the rim (see
    :func:`build_target_field` for ``rim`` and ``every_vertex``)."""
    if target.is_empty:
        return np.zeros((0, 2))
    if every_vertex:
        return np.unique(shapely.get_coordinates(target), axis=0)
    if graph.free.is_empty:
        return np.zeros((0, 2))
    verts = shapely.get_coordinates(target)
    pts = shapely.points(verts)
    keep = shapely.distance(graph.boundary, pts) < 1e-7
    if rim is not None:
        keep &= shapely.distance(rim, pts) < 1e-7
    found = verts[keep]
    return found if found.shape[0] < 2 else np.unique(found, axis=0)


def build_target_field(
    graph: VisibilityGraph,
    target: BaseGeometry,
    rim: BaseGeometry | None = None,
    every_vertex: bool = False,
) -> TargetField:
    """Dijkstra from ``target`` over ``graph`` (see the module docstring, steps 3-4).

    ``rim`` is the reach disc's outline: only target corners on it (where the rim meets a
    wall or an obstacle) are end-point candidates. Without it every target vertex on the
    free-space boundary is one; with ``every_vertex`` every vertex of the target is (for
    targets bounded by several rims, such as where reach discs overlap).
    """
    v = graph.node_count
    corners = target_corners(graph, target, rim, every_vertex)
    if target.is_empty or v == 0:
        return TargetField(
            target, corners, np.full(v, np.inf), np.full(v, -1), np.full((v, 2), np.nan)
        )
    leg, end = best_straight_leg(graph, target, corners, graph.nodes)
    has_leg = np.isfinite(leg)
    src = np.flatnonzero(has_leg)
    coo = graph.matrix.tocoo()
    rows = np.concatenate([coo.row, src, np.full(src.size, v)])
    cols = np.concatenate([coo.col, np.full(src.size, v), src])
    w = np.concatenate([coo.data, leg[src] + EDGE_EPSILON, leg[src] + EDGE_EPSILON])
    from scipy.sparse import coo_matrix  # lazy: scipy loads on the first field built
    from scipy.sparse.csgraph import dijkstra

    matrix = coo_matrix((w, (rows, cols)), shape=(v + 1, v + 1)).tocsr()
    dist, pred = dijkstra(matrix, directed=True, indices=v, return_predecessors=True)
    toward = pred[:v].astype(np.int64)
    toward = np.where(toward == v, -1, toward)
    dist = dist[:v]
    end = np.where(has_leg[:, None], end, np.nan)
    return TargetField(target, corners, dist, toward, end)


#: Start-to-node legs are tested in batches of this many, best lower bound first.
LEG_BATCH = 24


def first_node_bounds(
    starts: np.ndarray, graph: VisibilityGraph, field: TargetField
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The nodes that reach the target (indices), each start's lower bound |s v| + dist(v)
    via each of them (starts x nodes), and each start's nodes in order of that bound."""
    finite = np.flatnonzero(np.isfinite(field.dist))
    nodes = graph.nodes[finite]
    diff = starts[:, None, :] - nodes[None, :, :]
    bound = np.hypot(diff[..., 0], diff[..., 1]) + field.dist[finite][None, :]
    return finite, bound, np.argsort(bound, axis=1, kind="stable")


def best_first_node(
    graph: VisibilityGraph, field: TargetField, starts: np.ndarray, limit: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Per start: the best total via a first node (inf: none) and that node (-1: none).

    The total via node v is |s v| + dist(v) when the leg s -> v is clear. Nodes are tried in
    order of that total (a lower bound until the leg is tested), a batch at a time, so the
    first clear one is the answer; a start stops early once its next bound exceeds ``limit``
    (its best direct leg). This tests a few dozen legs per start instead of every node.
    """
    n = starts.shape[0]
    via = np.full(n, np.inf)
    via_node = np.full(n, -1, dtype=np.int64)
    finite, bound, order = first_node_bounds(starts, graph, field)
    if finite.size == 0 or n == 0:
        return via, via_node
    pending = np.arange(n)
    for first in range(0, finite.size, LEG_BATCH):
        if pending.size:
            pending = pending[bound[pending, order[pending, first]] < limit[pending]]
        if pending.size == 0:
            break
        cols = order[pending, first : first + LEG_BATCH]
        a = np.repeat(starts[pending], cols.shape[1], axis=0)
        ok = graph.clear(a, graph.nodes[finite[cols.ravel()]]).reshape(cols.shape)
        hit = ok.any(axis=1)
        pick = cols[hit, ok[hit].argmax(axis=1)]
        rows = pending[hit]
        via[rows] = bound[rows, pick]
        via_node[rows] = finite[pick]
        pending = pending[~hit]
    return via, via_node


__all__ = [
    "LEG_BATCH",
    "TargetField",
    "best_first_node",
    "best_straight_leg",
    "build_target_field",
    "first_node_bounds",
    "nearest_points_of",
    "target_corners",
]
