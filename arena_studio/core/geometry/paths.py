"""Shortest collision-free paths from agent starts to landmarks' reach discs.

How a path is found (one agent radius r, one landmark):

1. Free space F = rooms minus obstacles, shrunk by r (:func:`geometry.regions`, arcs within
   1 mm). The target T = F ∩ reach disc (a polygon inscribed in the disc, so every point of T
   is truly within the reach radius). T empty -> unreachable, with a reason.
2. The reduced visibility graph of F (:mod:`visibility`): reflex vertices, bitangent legs that
   stay inside closed F.
3. Every node v gets a straight "last leg" to T when one is clear. Such a leg first enters T
   through the disc's rim (a point of T on a wall inside the disc is never reached before
   the rim), and along a visible arc of the rim the distance from v is smallest at the
   point nearest v, at an end of the arc where the rim meets a wall or an obstacle (a
   "corner" of T), or at a shadow edge through another node. So the candidate end points
   are the point of T nearest v, the nearest point of every part of T, and T's rim corners;
   shadow edges are covered by the graph. The cheapest clear candidate is v's end point.
4. One Dijkstra run (scipy.sparse.csgraph) from T (a sink node joined to every node by its last
   leg) gives every node's distance to T. This is the cache, one per (agent radius, landmark).
5. A start s is joined to the graph by the clear legs from s to nodes, and directly to T by the
   same end-point candidates; the best total wins. The path ends at the first point of the
   reach disc that lies in free space along it.

Start regions: the route starts at the region's *best* point (shortest path) among samples of
the region ∩ F (its vertices, points every 0.1 m or so along its edges, and an interior grid);
the region's *worst* sampled point is reported too (``Route.worst_length``,
``Route.worst_points``). Par time, a lower bound, uses the best point.

Public API::

    from arena_studio.core.geometry.paths import PathPlanner, Route
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import Point, Polygon
from shapely.geometry.base import BaseGeometry

from arena_studio.core.geometry._start_search import (
    LastLegs,
    StartSearch,
    build_start_search,
    new_last_legs,
    route_points,
    target_costs,
)
from arena_studio.core.geometry.regions import free_space, per_thread_cache, quad_segments
from arena_studio.core.geometry.visibility import (
    VisibilityGraph,
    build_visibility_graph,
    polygons_of,
)
from arena_studio.core.geometry.visibility_fields import (
    TargetField,
    best_first_node,
    best_straight_leg,
    build_target_field,
    target_corners,
)
from arena_studio.core.scene.model import Scene

#: Spacing (m) of start-region samples along the region's edges (at most 64 per edge ring).
REGION_EDGE_SPACING = 0.1
#: Interior grid of start-region samples, per axis.
REGION_GRID = 6


@dataclass(frozen=True, eq=False)
class Route:
    """A polyline from a start to an end point, with its length in metres.

    For a start region, ``points`` start at the region's best sampled point and
    ``worst_length`` / ``worst_points`` describe its worst one; both are None otherwise.
    """

    points: np.ndarray
    length: float
    worst_length: float | None = None
    worst_points: np.ndarray | None = None

    @property
    def start(self) -> tuple[float, float]:
        return (float(self.points[0, 0]), float(self.points[0, 1]))

    @property
    def end(self) -> tuple[float, float]:
        return (float(self.points[-1, 0]), float(self.points[-1, 1]))


def polyline_length(points: np.ndarray) -> float:
    if len(points) < 2:
        return 0.0
    return float(np.sum(np.hypot(*np.diff(points, axis=0).T)))


class PathPlanner:
    """Shortest paths for one scene; caches free space, graphs and target fields.

    Visibility graphs are cached per agent radius. A route from an agent's start to a
    landmark comes from one search per agent start (:mod:`start_search`) and last legs shared
    per (radius, landmark); target fields per (radius, landmark) serve the queries from other
    points (``start_xy``, landmark gaps, groups). ``per_landmark_fields=True`` routes starts
    through the fields too (the older, slower way: one field per landmark), for comparisons.
    """

    def __init__(self, scene: Scene, per_landmark_fields: bool = False) -> None:
        self.scene = scene
        self.per_landmark_fields = per_landmark_fields
        self._targets: dict[tuple[float, int], tuple[BaseGeometry, np.ndarray]] = {}
        self._searches: dict[int, StartSearch] = {}
        self._last_legs: dict[tuple[float, int], LastLegs] = {}
        self._graphs: dict[float, VisibilityGraph] = {}
        self._fields: dict[tuple[float, int], TargetField] = {}
        self._routes: dict[tuple[int, int], tuple[Route | None, str | None]] = {}
        self._samples: dict[int, tuple[np.ndarray, str | None]] = {}
        self._gaps: dict[tuple[float, int, int], float] = {}
        self._group_fields: dict[tuple[float, tuple[int, ...]], TargetField] = {}
        self._overlap: dict[tuple[float, int, int], bool] = {}

    # -- caches --------------------------------------------------------------------------
    def graph(self, radius: float) -> VisibilityGraph:
        """The visibility graph of the free space for an agent of ``radius``."""
        key = float(radius)
        if key not in self._graphs:
            self._graphs[key] = build_visibility_graph(free_space(self.scene, key), key)
        return self._graphs[key]

    def reach_disc(self, landmark_index: int) -> Polygon:
        """The landmark's reach disc as a polygon inscribed in the circle (within 1 mm)."""
        lm = self.scene.landmarks[landmark_index]
        return Point(lm.position).buffer(lm.reach_radius, quad_segs=quad_segments(lm.reach_radius))

    def target(self, radius: float, landmark_index: int) -> BaseGeometry:
        """Free space ∩ reach disc: where the agent's centre counts as reaching the landmark."""
        return self._target_and_corners(radius, landmark_index)[0]

    def _target_and_corners(
        self, radius: float, landmark_index: int
    ) -> tuple[BaseGeometry, np.ndarray]:
        """The target and its rim corners (the field's end-point candidates), cached."""
        key = (float(radius), int(landmark_index))
        if key not in self._targets:
            graph = self.graph(radius)
            disc = self.reach_disc(landmark_index)
            target = graph.free.intersection(disc)
            self._targets[key] = (target, target_corners(graph, target, disc.exterior))
        return self._targets[key]

    def field(self, radius: float, landmark_index: int) -> TargetField:
        key = (float(radius), int(landmark_index))
        if key not in self._fields:
            graph = self.graph(radius)
            rim = self.reach_disc(landmark_index).exterior
            target = self.target(radius, landmark_index)
            self._fields[key] = build_target_field(graph, target, rim)
        return self._fields[key]

    # -- queries -------------------------------------------------------------------------
    def path_to_landmark(
        self, agent_index: int, landmark_index: int, start_xy: tuple[float, float] | None = None
    ) -> Route | None:
        """Shortest route from the agent's start (or ``start_xy``) into the landmark's reach."""
        return self.route_to_landmark(agent_index, landmark_index, start_xy)[0]

    def path_between(
        self, agent_index: int, start_xy: tuple[float, float], goal_xy: tuple[float, float]
    ) -> Route | None:
        """Shortest route between two points for the agent's radius (None: no route)."""
        return self.route_between(agent_index, start_xy, goal_xy)[0]

    def route_to_landmark(
        self, agent_index: int, landmark_index: int, start_xy: tuple[float, float] | None = None
    ) -> tuple[Route | None, str | None]:
        """Like :meth:`path_to_landmark`, with the reason when there is no route."""
        agent = self.scene.agents[agent_index]
        lm = self.scene.landmarks[landmark_index]
        key = (agent_index, landmark_index)
        if start_xy is None and key in self._routes:
            return self._routes[key]
        if start_xy is None and not self.per_landmark_fields:
            found = self._route_by_search(agent_index, landmark_index)
            self._routes[key] = found
            return found
        field = self.field(agent.radius, landmark_index)
        if field.target.is_empty:
            result: tuple[Route | None, str | None] = (
                None,
                f"landmark '{lm.id}' is out of reach for agent '{agent.id}': its reach disc "
                f"(radius {lm.reach_radius:g} m) does not meet the free space of an agent of "
                f"radius {agent.radius:g} m",
            )
        elif start_xy is not None:
            result = self._route_from_points(agent_index, field, np.array([start_xy], float))
        else:
            samples, reason = self._start_samples(agent_index)
            if reason is not None:
                result = (None, reason)
            else:
                result = self._route_from_points(agent_index, field, samples)
        if result[1] is not None:
            result = (None, result[1].replace("{landmark}", f"landmark '{lm.id}'"))
        if start_xy is None:
            self._routes[key] = result
        return result

    def reach_overlap(self, radius: float, i: int, j: int) -> bool:
        """One agent of ``radius`` can be within reach of landmarks i and j at once (cached)."""
        a, b = sorted((int(i), int(j)))
        key = (float(radius), a, b)
        if key not in self._overlap:
            la, lb = self.scene.landmarks[a], self.scene.landmarks[b]
            apart = math.dist(la.position, lb.position) > la.reach_radius + lb.reach_radius
            self._overlap[key] = a == b or (
                not apart and not self.shared_reach(radius, (a, b)).is_empty
            )
        return self._overlap[key]

    def shared_reach(self, radius: float, landmarks: tuple[int, ...]) -> BaseGeometry:
        """Where one agent's centre reaches every landmark of ``landmarks`` at once."""
        region = self.target(radius, landmarks[0])
        for i in landmarks[1:]:
            if region.is_empty:
                break
            region = region.intersection(self.target(radius, i))
        return region

    def route_to_group(
        self, agent_index: int, landmarks: tuple[int, ...]
    ) -> tuple[Route | None, str | None]:
        """Shortest route from the agent's start to a point that reaches all ``landmarks``.

        Used where reach discs overlap, so one agent can cover several targets at once.
        Cached per (agent, landmark set); a single landmark is :meth:`route_to_landmark`.
        """
        group = tuple(sorted(int(i) for i in landmarks))
        if len(group) == 1:
            return self.route_to_landmark(agent_index, group[0])
        agent = self.scene.agents[agent_index]
        key = (float(agent.radius), group)
        if key not in self._group_fields:
            region = self.shared_reach(agent.radius, group)
            self._group_fields[key] = build_target_field(
                self.graph(agent.radius), region, every_vertex=True
            )
        field = self._group_fields[key]
        names = ", ".join(f"'{self.scene.landmarks[i].id}'" for i in group)
        if field.target.is_empty:
            return None, f"no point reaches landmarks {names} at once for agent '{agent.id}'"
        samples, reason = self._start_samples(agent_index)
        if reason is not None:
            return None, reason
        route, why = self._route_from_points(agent_index, field, samples)
        return route, None if why is None else why.replace("{landmark}", f"landmarks {names}")

    def route_between(
        self, agent_index: int, start_xy: tuple[float, float], goal_xy: tuple[float, float]
    ) -> tuple[Route | None, str | None]:
        agent = self.scene.agents[agent_index]
        graph = self.graph(agent.radius)
        goal = np.asarray(goal_xy, dtype=np.float64).reshape(1, 2)
        if not bool(graph.contains(goal)[0]):
            return None, (
                f"point ({goal[0, 0]:g}, {goal[0, 1]:g}) is outside the free space of agent "
                f"'{agent.id}'"
            )
        field = build_target_field(graph, Point(goal[0]))
        route, reason = self._route_from_points(
            agent_index, field, np.array([start_xy], dtype=np.float64)
        )
        if reason is not None:
            reason = reason.replace("{landmark}", f"point ({goal[0, 0]:g}, {goal[0, 1]:g})")
        return route, reason

    def landmark_gap(self, radius: float, from_index: int, to_index: int) -> float:
        """Shortest free-space distance from one landmark's reach region to another's.

        A lower bound on the travel between visiting the two. A shortest path between two
        regions is either one straight leg or bends at graph nodes, so the gap is the smaller
        of: min over nodes v of (distance from v to the first region + distance from v to the
        second), both from the cached fields; and the clear straight legs between the regions
        (the nearest pair of points, and each region's corners into the other). inf when they
        lie in different free-space parts; 0 when they overlap. Cached, symmetric.
        """
        i, j = sorted((int(from_index), int(to_index)))
        key = (float(radius), i, j)
        if key in self._gaps:
            return self._gaps[key]
        first, second = self.field(radius, i), self.field(radius, j)
        if first.target.is_empty or second.target.is_empty:
            gap = math.inf
        elif i == j or first.target.intersects(second.target):
            gap = 0.0
        else:
            graph = self.graph(radius)
            gap = float(np.min(first.dist + second.dist)) if graph.node_count else math.inf
            pair = shapely.get_coordinates(shapely.shortest_line(first.target, second.target))
            if bool(graph.clear(pair[:1], pair[1:2])[0]):
                gap = min(gap, float(np.hypot(*(pair[1] - pair[0]))))
            for src, dst in ((first, second), (second, first)):
                if src.corners.size:
                    legs, _ = best_straight_leg(graph, dst.target, dst.corners, src.corners)
                    gap = min(gap, float(np.min(legs)))
        self._gaps[key] = gap
        return gap

    # -- internals -----------------------------------------------------------------------
    def _route_by_search(
        self, agent_index: int, landmark_index: int
    ) -> tuple[Route | None, str | None]:
        """:meth:`route_to_landmark` from the agent's start through its start search."""
        agent = self.scene.agents[agent_index]
        lm = self.scene.landmarks[landmark_index]
        radius = float(agent.radius)
        target, corners = self._target_and_corners(radius, landmark_index)
        if target.is_empty:
            return None, (
                f"landmark '{lm.id}' is out of reach for agent '{agent.id}': its reach disc "
                f"(radius {lm.reach_radius:g} m) does not meet the free space of an agent of "
                f"radius {agent.radius:g} m"
            )
        samples, reason = self._start_samples(agent_index)
        if reason is not None:
            return None, reason.replace("{landmark}", f"landmark '{lm.id}'")
        graph = self.graph(radius)
        search = self._search(agent_index, samples)
        if search.samples.shape[0] == 0:
            x, y = samples[0]
            where = "start region" if samples.shape[0] > 1 else f"start ({x:g}, {y:g})"
            return None, (
                f"{where} of agent '{agent.id}' is outside its free space (inside an obstacle, "
                f"outside the rooms, or closer than its radius {agent.radius:g} m to a wall)"
            )
        legs = self._last_legs.setdefault((radius, landmark_index), new_last_legs(graph))
        disc = (float(lm.position[0]), float(lm.position[1]), float(lm.reach_radius))
        costs = target_costs(graph, search, target, corners, disc, legs)
        finite = np.isfinite(costs.cost)
        if not np.any(finite):
            return None, (
                f"landmark '{lm.id}' cannot be reached by agent '{agent.id}': its start and the "
                "landmark's reach lie in different parts of its free space"
            )
        best = int(np.argmin(np.where(finite, costs.cost, np.inf)))
        points = _drop_repeats(route_points(search, legs, costs, best, graph))
        worst_len = worst_pts = None
        if search.samples.shape[0] > 1:
            worst = int(np.argmax(np.where(finite, costs.cost, -np.inf)))
            worst_pts = _drop_repeats(route_points(search, legs, costs, worst, graph))
            worst_len = polyline_length(worst_pts)
        return Route(points, polyline_length(points), worst_len, worst_pts), None

    def _search(self, agent_index: int, samples: np.ndarray) -> StartSearch:
        """The agent's start search over the samples inside its free space (cached)."""
        if agent_index not in self._searches:
            graph = self.graph(self.scene.agents[agent_index].radius)
            inside = samples[graph.contains(samples)]
            self._searches[agent_index] = build_start_search(graph, inside)
        return self._searches[agent_index]

    def _route_from_points(
        self, agent_index: int, field: TargetField, starts: np.ndarray
    ) -> tuple[Route | None, str | None]:
        """Best (and worst) route from a set of start samples; reason when none reaches."""
        agent = self.scene.agents[agent_index]
        graph = self.graph(agent.radius)
        inside = graph.contains(starts)
        if not np.any(inside):
            x, y = starts[0]
            where = "start region" if starts.shape[0] > 1 else f"start ({x:g}, {y:g})"
            return None, (
                f"{where} of agent '{agent.id}' is outside its free space (inside an obstacle, "
                f"outside the rooms, or closer than its radius {agent.radius:g} m to a wall)"
            )
        starts = starts[inside]
        costs, plans = self._costs(graph, field, starts)
        finite = np.isfinite(costs)
        if not np.any(finite):
            return None, (
                f"{{landmark}} cannot be reached by agent '{agent.id}': its start and the "
                "landmark's reach lie in different parts of its free space"
            )
        best = int(np.argmin(np.where(finite, costs, np.inf)))
        points = self._polyline(graph, field, starts[best], plans[best])
        worst_len = worst_pts = None
        if starts.shape[0] > 1:
            worst = int(np.argmax(np.where(finite, costs, -np.inf)))
            worst_pts = self._polyline(graph, field, starts[worst], plans[worst])
            worst_len = polyline_length(worst_pts)
        return Route(points, polyline_length(points), worst_len, worst_pts), None

    def _costs(
        self, graph: VisibilityGraph, field: TargetField, starts: np.ndarray
    ) -> tuple[np.ndarray, list[tuple[int, np.ndarray | None]]]:
        """Per start: total length and plan (first node, or -1 with a direct end point)."""
        n = starts.shape[0]
        in_target = shapely.distance(field.target, shapely.points(starts)) <= 1e-9
        direct, direct_end = best_straight_leg(graph, field.target, field.corners, starts)
        direct = np.where(in_target, 0.0, direct)
        via, via_node = best_first_node(graph, field, starts, direct)
        plans: list[tuple[int, np.ndarray | None]] = []
        costs = np.minimum(direct, via)
        for k in range(n):
            if in_target[k]:
                plans.append((-1, None))
            elif direct[k] <= via[k]:
                plans.append((-1, direct_end[k]))
            else:
                plans.append((int(via_node[k]), None))
        return costs, plans

    @staticmethod
    def _polyline(
        graph: VisibilityGraph,
        field: TargetField,
        start: np.ndarray,
        plan: tuple[int, np.ndarray | None],
    ) -> np.ndarray:
        node, direct_end = plan
        pts = [np.asarray(start, dtype=np.float64)]
        if node < 0:
            if direct_end is not None:
                pts.append(direct_end)
            return np.array(pts)
        seen = 0
        while node >= 0 and seen <= graph.node_count:
            pts.append(graph.nodes[node])
            last = node
            node = int(field.toward[node])
            seen += 1
        pts.append(field.end[last])
        return _drop_repeats(np.array(pts))

    def _start_samples(self, agent_index: int) -> tuple[np.ndarray, str | None]:
        """Start points of an agent: its pose, or samples of its start region ∩ free space."""
        if agent_index in self._samples:
            return self._samples[agent_index]
        agent = self.scene.agents[agent_index]
        start = agent.start
        result: tuple[np.ndarray, str | None]
        if start.pose is not None:
            result = (np.array([start.pose[:2]], dtype=np.float64), None)
        else:
            assert start.region is not None
            region = Polygon(start.region)
            if not region.is_valid:
                region = shapely.make_valid(region)
            usable = region.intersection(self.graph(agent.radius).free)
            if usable.is_empty or usable.area <= 0:
                result = (
                    np.zeros((0, 2)),
                    f"start region of agent '{agent.id}' has no point in its free space "
                    f"(every point is inside an obstacle or within {agent.radius:g} m of a wall)",
                )
            else:
                result = (region_samples(usable), None)
        self._samples[agent_index] = result
        return result


@per_thread_cache(maxsize=16)
def shared_planner(scene: Scene) -> PathPlanner:
    """One planner per scene value, shared by callers that do not keep their own.

    Scenes are immutable values, so a planner's caches never go stale for its scene. Each
    thread gets its own planner: planners hold GEOS prepared geometry, which is not
    thread-safe.
    """
    return PathPlanner(scene)


def region_samples(region: BaseGeometry) -> np.ndarray:
    """Sample points of a region: vertices, points along the edges, an interior grid."""
    pts = [shapely.get_coordinates(region)]
    for poly in polygons_of(region):
        for ring in (poly.exterior, *poly.interiors):
            count = min(64, max(4, math.ceil(ring.length / REGION_EDGE_SPACING)))
            dist = np.linspace(0.0, ring.length, count, endpoint=False)
            pts.append(shapely.get_coordinates(shapely.line_interpolate_point(ring, dist)))
    minx, miny, maxx, maxy = region.bounds
    gx, gy = np.meshgrid(
        np.linspace(minx, maxx, REGION_GRID + 2)[1:-1],
        np.linspace(miny, maxy, REGION_GRID + 2)[1:-1],
    )
    grid = np.stack([gx.ravel(), gy.ravel()], axis=1)
    grid = grid[shapely.covers(region, shapely.points(grid))]
    pts.append(grid)
    return np.unique(np.concatenate(pts, axis=0), axis=0)


def _drop_repeats(points: np.ndarray) -> np.ndarray:
    keep = np.ones(len(points), dtype=bool)
    keep[1:] = np.any(np.abs(np.diff(points, axis=0)) > 1e-12, axis=1)
    return points[keep]


__all__ = [
    "PathPlanner",
    "Route",
    "TargetField",
    "build_target_field",
    "polyline_length",
    "shared_planner",
]
