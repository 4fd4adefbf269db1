"""The next waypoint on an agent's shortest path to a landmark, from many positions at once.

An agent rounding a doorway toward its target moves toward the doorway's corner, not along
the straight line to the target; derived roles (:mod:`arena_studio.core.analysis.roles`) compare its
motion with the direction to this waypoint. The path is the planner's
(:mod:`arena_studio.core.geometry.paths`): visibility graph of the agent's free space, Dijkstra from
the landmark's reach, best first leg from the query point. Where the target's anchor (its
point nearest the landmark) is in sight the waypoint is the landmark itself: the straight
line, which the shortest path follows up to the reach radius. From a point outside the free
space, or with no path, it is the landmark too::

    points, lengths = next_waypoints(scene, agent_index, landmark_index, xy)   # xy (N, 2)
"""

from __future__ import annotations

import numpy as np
import shapely
from shapely.geometry.base import BaseGeometry

from arena_studio.core.geometry.paths import shared_planner
from arena_studio.core.geometry.visibility import VisibilityGraph
from arena_studio.core.geometry.visibility_fields import TargetField, first_node_bounds
from arena_studio.core.scene.model import Scene


def next_waypoints(
    scene: Scene, agent_index: int, landmark_index: int, xy: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """(N, 2) next waypoint and (N,) path length from each of ``xy`` (N, 2).

    In sight of the target, or with no path, the waypoint is the landmark's position and the
    length the straight distance; otherwise the first graph node of the shortest path and
    the path's length.
    """
    pts = np.asarray(xy, dtype=np.float64).reshape(-1, 2)
    lm = np.asarray(scene.landmarks[landmark_index].position, dtype=np.float64)
    out = np.broadcast_to(lm, pts.shape).copy()
    length = np.hypot(*(lm - pts).T)
    if pts.shape[0] == 0:
        return out, length
    planner = shared_planner(scene)
    radius = scene.agents[agent_index].radius
    graph = planner.graph(radius)
    field = planner.field(radius, landmark_index)
    if field.target.is_empty:
        return out, length
    rows = np.flatnonzero(graph.contains(pts))
    if rows.size == 0:
        return out, length
    p = pts[rows]
    # in sight of the target's anchor (its point nearest the landmark): go straight, as the
    # planner's best path does up to a few centimetres; only the rest need the graph
    anchor = _anchor(field.target, lm)
    seen = graph.clear(p, np.broadcast_to(anchor, p.shape))
    hidden = np.flatnonzero(~seen)
    if hidden.size:
        q = p[hidden]
        via, node = _first_nodes(graph, field, q)
        ok = np.isfinite(via)
        first = graph.nodes[np.maximum(node, 0)]
        # standing on the node already (rounding the corner): aim at the one after it, or
        # at the landmark when the node sees the target
        on = ok & (np.hypot(*(first - q).T) < AT_NODE)
        after = field.toward[np.maximum(node, 0)]
        first[on] = np.where((after[on] >= 0)[:, None], graph.nodes[after[on]], lm)
        way = out[rows]
        way[hidden[ok]] = first[ok]
        out[rows] = way
        sub = length[rows]
        sub[hidden[ok]] = via[ok]
        length[rows] = sub
    return out, length


#: an agent this close (m) to its path's next node is rounding it: it aims past it
AT_NODE = 0.05
#: legs tried per round for each point, best bound first; most points see their first node
#: among the first few (what visibility_fields.best_first_node answers, with fewer tests)
_ROUNDS = (3, 9, 24)


def _first_nodes(
    graph: VisibilityGraph, field: TargetField, starts: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Per start: shortest total via a first node (inf: none) and that node (-1: none).

    The total via node v is |s v| + dist(v) when the leg s -> v is clear; nodes are tried
    in order of that total, so the first clear one is the answer (a lower bound until its
    leg is tested, as in ``visibility_fields.best_first_node``)."""
    n = starts.shape[0]
    via = np.full(n, np.inf)
    via_node = np.full(n, -1, dtype=np.int64)
    finite, bound, order = first_node_bounds(starts, graph, field)
    if finite.size == 0 or n == 0:
        return via, via_node
    pending = np.arange(n)
    first = 0
    round_ = 0
    while pending.size and first < finite.size:
        size = _ROUNDS[min(round_, len(_ROUNDS) - 1)]
        cols = order[pending, first : first + size]
        a = np.repeat(starts[pending], cols.shape[1], axis=0)
        ok = graph.clear(a, graph.nodes[finite[cols.ravel()]]).reshape(cols.shape)
        hit = ok.any(axis=1)
        pick = cols[hit, ok[hit].argmax(axis=1)]
        rows = pending[hit]
        via[rows] = bound[rows, pick]
        via_node[rows] = finite[pick]
        pending = pending[~hit]
        first += size
        round_ += 1
    return via, via_node


def _anchor(target: BaseGeometry, lm: np.ndarray) -> np.ndarray:
    """The point of ``target`` nearest the landmark (the landmark itself when inside)."""
    line = shapely.shortest_line(target, shapely.points(lm))
    return np.asarray(shapely.get_coordinates(line)[0], dtype=np.float64)


__all__ = ["next_waypoints"]
