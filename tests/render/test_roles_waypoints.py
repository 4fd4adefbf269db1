"""Derived roles aim along the shortest path: an agent walking to a doorway on its way to a
target in the next room is heading to that target, not off the team goal.

Reference: a shortest path computed here with networkx (Dijkstra) over a hand-built
visibility graph (the start, points on the circles of the agent's radius around the four
doorway corners, the target), edges kept where shapely says the straight leg stays inside the
rooms shrunk by the agent's radius (GEOS buffer and covers). Our planner's next waypoint must
be networkx's first node, its path length networkx's length.
"""

from __future__ import annotations

import itertools
import math

import networkx as nx
import numpy as np
from shapely.geometry import LineString, Point, box
from shapely.ops import unary_union

from arena_studio.core.analysis.roles import AIM_CONE_DEG, HEADING, OFF_GOAL, derive_roles
from arena_studio.core.geometry.waypoints import next_waypoints
from arena_studio.core.scene.model import Agent, Landmark, Room, Scene, Start
from arena_studio.core.tape.episode import Episode

RADIUS = 0.25
ROOMS = {
    "west": (0.0, 0.0, 5.0, 5.0),
    "door": (4.8, 3.5, 6.2, 4.5),
    "east": (6.0, 0.0, 11.0, 5.0),
}
GOAL = (9.0, 1.0)  # in the east room, out of sight from the west room's lower half
OTHER = (10.5, 4.7)  # not on the team goal; straight ahead of an agent walking to the door


def _scene() -> Scene:
    rooms = tuple(
        Room(name, ((x0, y0), (x1, y0), (x1, y1), (x0, y1)))
        for name, (x0, y0, x1, y1) in ROOMS.items()
    )
    lms = (Landmark("g", "G", GOAL, 0.5), Landmark("n", "N", OTHER, 0.5))
    agent = Agent("r0", RADIUS, 1.0, 2.0, Start(pose=(2.0, 2.0, 0.0)))
    return Scene(name="doorway", rooms=rooms, landmarks=lms, agents=(agent,))


def _networkx_path(start: tuple[float, float]) -> list[tuple[float, float]]:
    free = unary_union([box(*r) for r in ROOMS.values()]).buffer(-RADIUS)
    corners = [(5.0, 3.5), (5.0, 4.5), (6.0, 3.5), (6.0, 4.5)]
    # a path rounds a corner along the circle of the agent's radius: 64 nodes on each circle
    # (those in free space), so the graph's shortest path is the true one within a few mm
    ring = [
        (x + (RADIUS + 1e-4) * math.cos(a), y + (RADIUS + 1e-4) * math.sin(a))
        for x, y in corners
        for a in np.linspace(0.0, 2 * math.pi, 64, endpoint=False)
    ]
    nodes = [start, GOAL] + [q for q in ring if free.covers(Point(q))]
    g = nx.Graph()
    for a, b in itertools.combinations(nodes, 2):
        if free.covers(LineString([a, b])):
            g.add_edge(a, b, weight=math.dist(a, b))
    return nx.shortest_path(g, start, GOAL, weight="weight")


def test_next_waypoint_is_the_corner_the_shortest_path_rounds() -> None:
    scene = _scene()
    for start in [(2.0, 2.0), (3.0, 1.0), (4.0, 3.0)]:
        path = _networkx_path(start)
        assert len(path) >= 3, "the target must be out of sight for this check"
        way, length = next_waypoints(scene, 0, 0, np.array([start]))
        # the first node of either path lies on the circle around the same corner: they
        # differ by the circle's sampling (64 nodes, and arcs within 1 mm in our planner)
        assert math.dist(tuple(way[0]), path[1]) < 0.05, (start, way[0], path[1])
        total = sum(math.dist(p, q) for p, q in itertools.pairwise(path))
        # the planner stops at the reach disc (0.5 m short of the centre)
        assert abs(float(length[0]) - (total - 0.5)) < 0.02, (float(length[0]), total)


def test_target_in_sight_aims_at_the_landmark_itself() -> None:
    scene = _scene()
    way, length = next_waypoints(scene, 0, 0, np.array([[7.0, 3.0]]))
    assert tuple(way[0]) == GOAL
    assert abs(float(length[0]) - math.dist((7.0, 3.0), GOAL)) < 1e-9


def _angle(v: np.ndarray) -> float:
    return math.degrees(math.atan2(v[1], v[0]))


def test_agent_walking_to_the_doorway_is_heading_to_its_target() -> None:
    scene = _scene()
    dt = 0.1
    corner = np.array([5.0 - RADIUS, 3.5 + RADIUS])
    leg = np.linspace((2.0, 2.0), corner, 36)  # ~1 m/s toward the doorway's corner
    poses = np.column_stack([leg, np.full(len(leg), _angle(corner - (2.0, 2.0)))])[:, None, :]
    goal = np.array([1, 0], dtype=np.uint8)
    ep = Episode(0, dt, poses, team_goal=goal, pursued_goals=(goal,))
    roles = derive_roles(scene, ep)
    window = slice(6, 30)  # after the first 0.5 s of motion, before the corner
    motion = _angle(corner - (2.0, 2.0))
    for t in range(window.start, window.stop):
        p = leg[t]
        # the reported situation: the straight line to G is outside the aim cone and the
        # other landmark N is inside it (plain trigonometry)
        assert abs(_angle(np.subtract(GOAL, p)) - motion) > AIM_CONE_DEG
        assert abs(_angle(np.subtract(OTHER, p)) - motion) < AIM_CONE_DEG
    assert (roles[window, 0] == HEADING).all(), roles[:, 0]
    assert not (roles[window, 0] == OFF_GOAL).any()


def test_an_agent_on_a_path_node_aims_past_it() -> None:
    """Standing on the corner node itself, the next waypoint is a point further along a
    shortest path (networkx's length from there equals the leg plus our length from the
    waypoint), never the point it stands on."""
    scene = _scene()
    way, _ = next_waypoints(scene, 0, 0, np.array([(2.0, 2.0)]))
    on_node = tuple(way[0])
    after, _ = next_waypoints(scene, 0, 0, np.array([on_node]))
    assert math.dist(tuple(after[0]), on_node) > 0.05
    _, rest = next_waypoints(scene, 0, 0, after)
    path = _networkx_path(on_node)
    total = sum(math.dist(p, q) for p, q in itertools.pairwise(path)) - 0.5
    assert abs(math.dist(tuple(after[0]), on_node) + float(rest[0]) - total) < 0.02
