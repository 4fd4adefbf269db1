"""Routes from one agent's start to many landmarks: one search per start, not one per landmark.

A distance field per landmark (:mod:`visibility_fields`) costs a straight last leg from every
graph node to the landmark's reach plus a Dijkstra run; with thousands of landmarks that is
most of the planning time. Here the search runs the other way, once per agent:

1. The start samples (the pose, or a start region's samples) become extra source nodes,
   joined to every graph node they see (one batch of leg tests per agent, not per landmark).
   One multi-source Dijkstra (scipy.sparse.csgraph) gives D[s, u], the shortest distance
   from sample s to node u, and the predecessors to rebuild the route.
2. For a landmark with target T (free space within its reach disc), a route from s either
   goes straight into T or ends with a straight last leg from a node u:
   ``D[s, u] + leg(u, T)``. ``leg(u, T) >= dist(u, reach disc)``, so nodes are tried in the
   order of ``min_s D[s, u] + dist(u, disc)`` and the search stops as soon as that lower
   bound reaches the largest best cost found so far: usually a handful of last legs per
   landmark. Straight legs from a sample are tested only where their own bound can still win.

The minimum is the same one the field gives (the field's node distances are the same
shortest paths seen from the target side), so par times agree with goal-by-goal planning to
rounding (tests/core/geometry/test_start_search.py compares them). The end-point candidates
of a last leg are the field's (:func:`visibility_fields.best_straight_leg`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry.base import BaseGeometry

from arena_studio.core.geometry.visibility import EDGE_EPSILON, VisibilityGraph
from arena_studio.core.geometry.visibility_fields import best_straight_leg

#: last legs are tested in batches of this many nodes, best lower bound first
NODE_BATCH = 64
#: slack (m) on the lower bounds so rounding never prunes the true best
BOUND_SLACK = 1e-9


@dataclass(eq=False)
class StartSearch:
    """Shortest distances from each start sample of one agent to every graph node."""

    samples: np.ndarray  # (S, 2) start samples inside the free space
    dist: np.ndarray  # (S, V) shortest distance sample -> node (inf: none)
    pred: np.ndarray  # (S, V) previous node on that path (-1: straight from the sample)
    nearest: np.ndarray  # (V,) min over samples of dist


@dataclass(eq=False)
class LastLegs:
    """Straight last legs from graph nodes into one target, computed as needed and shared by
    every agent of one radius."""

    length: np.ndarray  # (V,) inf: no clear leg; nan: not computed yet
    end: np.ndarray  # (V, 2) where the leg ends in the target


@dataclass(frozen=True)
class TargetCosts:
    """Per start sample: the best cost into a target and how it is reached."""

    cost: np.ndarray  # (S,) inf: no route
    node: np.ndarray  # (S,) last graph node (-1: straight or already inside)
    end: np.ndarray  # (S, 2) end point of the final straight leg (nan: inside the target)


def build_start_search(graph: VisibilityGraph, samples: np.ndarray) -> StartSearch:
    """Step 1 of the module docstring: one multi-source Dijkstra from the start samples."""
    s, v = samples.shape[0], graph.node_count
    if v == 0 or s == 0:
        empty = np.full((s, v), np.inf)
        return StartSearch(samples, empty, np.full((s, v), -1), np.full(v, np.inf))
    a = np.repeat(samples, v, axis=0)
    b = np.tile(graph.nodes, (s, 1))
    seen = graph.clear(a, b).reshape(s, v)
    legs = np.hypot(*(b - a).T).reshape(s, v)
    rows, cols = np.nonzero(seen)
    from scipy.sparse import coo_matrix  # lazy: scipy loads on the first search
    from scipy.sparse.csgraph import dijkstra

    coo = graph.matrix.tocoo()
    # sources are nodes v .. v + s - 1; a zero-length first leg (a sample on a node) keeps
    # a tiny weight so the sparse matrix keeps the edge (as the graph's own edges do)
    matrix = coo_matrix(
        (
            np.concatenate([coo.data, np.maximum(legs[rows, cols], EDGE_EPSILON)]),
            (np.concatenate([coo.row, v + rows]), np.concatenate([coo.col, cols])),
        ),
        shape=(v + s, v + s),
    ).tocsr()
    dist, pred = dijkstra(
        matrix, directed=True, indices=np.arange(v, v + s), return_predecessors=True
    )
    dist, pred = dist[:, :v], pred[:, :v].astype(np.int64)
    pred = np.where(pred >= v, -1, pred)
    return StartSearch(samples, dist, pred, dist.min(axis=0))


def new_last_legs(graph: VisibilityGraph) -> LastLegs:
    v = graph.node_count
    return LastLegs(np.full(v, np.nan), np.full((v, 2), np.nan))


def target_costs(
    graph: VisibilityGraph,
    search: StartSearch,
    target: BaseGeometry,
    corners: np.ndarray,
    disc: tuple[float, float, float],
    legs: LastLegs,
) -> TargetCosts:
    """Step 2 of the module docstring for every start sample; ``disc`` = (cx, cy, reach)."""
    samples = search.samples
    n = samples.shape[0]
    if target.is_empty or n == 0:
        return TargetCosts(
            np.full(n, np.inf), np.full(n, -1, dtype=np.int64), np.full((n, 2), np.nan)
        )
    cx, cy, reach = disc
    gap = np.hypot(samples[:, 0] - cx, samples[:, 1] - cy) - reach
    if n == 1:
        # one start: its straight leg first (one batch of tests) bounds the search
        direct, direct_end = best_straight_leg(graph, target, corners, samples)
        via, via_node = _via_nodes(graph, search, target, corners, disc, legs, direct)
    else:
        # many samples: routes via nodes first, then straight legs only where their lower
        # bound (the gap to the disc) can still match the route found
        via, via_node = _via_nodes(graph, search, target, corners, disc, legs, np.full(n, np.inf))
        direct, direct_end = np.full(n, np.inf), np.full((n, 2), np.nan)
        wanted = np.flatnonzero(gap - BOUND_SLACK <= via)
        if wanted.size:
            direct[wanted], direct_end[wanted] = best_straight_leg(
                graph, target, corners, samples[wanted]
            )
    use_via = via < direct  # the straight leg wins ties, as in a field's start query
    cost = np.where(use_via, via, direct)
    node = np.where(use_via, via_node, -1)
    end = np.where(use_via[:, None], np.nan, direct_end)
    # samples already inside the target
    near = np.flatnonzero(gap <= BOUND_SLACK)
    if near.size:
        inside = shapely.distance(target, shapely.points(samples[near])) <= 1e-9
        pick = near[inside]
        cost[pick], node[pick], end[pick] = 0.0, -1, np.nan
    return TargetCosts(cost, node, end)


def _via_nodes(
    graph: VisibilityGraph,
    search: StartSearch,
    target: BaseGeometry,
    corners: np.ndarray,
    disc: tuple[float, float, float],
    legs: LastLegs,
    limit: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Per sample: the best ``D[s, u] + leg(u, T)`` and its node u, exact wherever it is below
    ``limit`` (elsewhere it may stay inf); nodes are tried best lower bound first, and only
    while some sample can still gain from them."""
    n = search.samples.shape[0]
    via = np.full(n, np.inf)
    via_node = np.full(n, -1, dtype=np.int64)
    cx, cy, reach = disc
    nodes = graph.nodes
    remaining = np.flatnonzero(np.isfinite(search.nearest))
    lower = np.maximum(np.hypot(nodes[remaining, 0] - cx, nodes[remaining, 1] - cy) - reach, 0.0)
    # bound[s, k]: no route from sample s through node remaining[k] is shorter
    bound = search.dist[:, remaining] + lower[None, :] - BOUND_SLACK
    while remaining.size:
        best = np.minimum(via, limit)
        useful = (bound < best[:, None]).any(axis=0)
        if not useful.all():
            remaining, bound = remaining[useful], bound[:, useful]
            if not remaining.size:
                break
        pick = np.argsort(bound.min(axis=0), kind="stable")[:NODE_BATCH]
        batch = remaining[pick]
        rest = np.ones(remaining.size, dtype=bool)
        rest[pick] = False
        remaining, bound = remaining[rest], bound[:, rest]
        todo = batch[np.isnan(legs.length[batch])]
        if todo.size:
            length, end = best_straight_leg(graph, target, corners, nodes[todo])
            legs.length[todo], legs.end[todo] = length, end
        total = search.dist[:, batch] + (legs.length[batch] + EDGE_EPSILON)[None, :]
        k = np.argmin(total, axis=1)
        found = total[np.arange(n), k]
        better = found < via
        via[better] = found[better]
        via_node[better] = batch[k[better]]
    return via, via_node


def route_points(
    search: StartSearch, legs: LastLegs, costs: TargetCosts, sample: int, graph: VisibilityGraph
) -> np.ndarray:
    """The polyline of one sample's best route: start, graph nodes, end point."""
    start = search.samples[sample]
    last = int(costs.node[sample])
    if last < 0:
        end = costs.end[sample]
        return np.array([start]) if np.isnan(end[0]) else np.array([start, end])
    chain: list[int] = []
    u = last
    while u >= 0 and len(chain) <= graph.node_count:
        chain.append(u)
        u = int(search.pred[sample, u])
    pts = [start, *graph.nodes[chain[::-1]], legs.end[last]]
    return np.array(pts)


__all__ = [
    "LastLegs",
    "StartSearch",
    "TargetCosts",
    "build_start_search",
    "new_last_legs",
    "route_points",
    "target_costs",
]
