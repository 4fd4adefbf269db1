"""Routes from one search per agent start equal goal-by-goal planning with one distance
field per landmark, and plane geometry in an open room.

References: the distance field per landmark (``PathPlanner(per_landmark_fields=True)``, the
planner's earlier way, itself checked against networkx in test_paths.py) for a scene with
obstacles, pose starts, a start region and unreachable landmarks; plane geometry for an open
room (the shortest distance from a point to a disc is the distance to its centre minus the
radius; common practice, no source).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from arena_studio.core.geometry.paths import PathPlanner
from arena_studio.core.planning.partime import plan_all
from arena_studio.core.scene.model import (
    Agent,
    Circle,
    GoalSpec,
    Landmark,
    Obstacle,
    Room,
    Scene,
    Start,
)


def many_landmarks_scene(n: int = 150, seed: int = 3) -> Scene:
    """A hall with a side room, two shelf rows and a column; ``n`` landmarks scattered over
    it (some inside obstacles or outside the rooms: unreachable), two pose starts and one
    start region (demo data of our own)."""
    rng = np.random.default_rng(seed)
    xy = rng.uniform((-1.0, -1.0), (37.0, 21.0), size=(n, 2))
    landmarks = tuple(
        Landmark(f"m{i}", f"M{i}", (float(x), float(y)), float(rng.uniform(0.3, 0.8)))
        for i, (x, y) in enumerate(xy)
    )
    agents = (
        Agent("a", 0.25, 1.0, 1.5, Start(pose=(2.0, 2.0, 0.0))),
        Agent("b", 0.25, 0.8, 1.5, Start(pose=(28.0, 18.0, 0.0))),
        Agent(
            "c", 0.35, 0.6, 1.5, Start(region=((1.0, 15.0), (5.0, 15.0), (5.0, 19.0), (1.0, 19.0)))
        ),
    )
    return Scene(
        name="many landmarks",
        rooms=(
            Room("hall", ((0, 0), (30, 0), (30, 20), (0, 20))),
            Room("side", ((30, 6), (36, 6), (36, 14), (30, 14))),
        ),
        obstacles=(
            Obstacle("shelf-a", outline=((6, 6), (24, 6), (24, 7), (6, 7))),
            Obstacle("shelf-b", outline=((6, 13), (24, 13), (24, 14), (6, 14))),
            Obstacle("column", circle=Circle((15, 10), 1.0)),
        ),
        landmarks=landmarks,
        agents=agents,
        goals=GoalSpec(rule="all_at_once", families=(1,)),
    )


def _same_plans(scene: Scene) -> None:
    new = plan_all(scene, planner=PathPlanner(scene))
    old = plan_all(scene, planner=PathPlanner(scene, per_landmark_fields=True))
    assert [p.feasible for p in new] == [p.feasible for p in old]
    assert [p.reason for p in new] == [p.reason for p in old]
    for a, b in zip(new, old, strict=True):
        for x, y in ((a.par_time, b.par_time), (a.par_time_worst, b.par_time_worst)):
            assert (x is None) == (y is None)
            if x is not None:
                assert abs(x - y) <= 1e-9, (a.vector, x, y)


def test_par_times_equal_goal_by_goal_planning_with_fields() -> None:
    scene = many_landmarks_scene()
    plans = plan_all(scene, planner=PathPlanner(scene))
    assert 0 < sum(p.feasible for p in plans) < len(plans)  # both kinds are covered
    _same_plans(scene)


def test_routes_equal_field_routes_for_every_agent_and_landmark() -> None:
    scene = many_landmarks_scene(60, seed=8)
    new, old = PathPlanner(scene), PathPlanner(scene, per_landmark_fields=True)
    for a in range(len(scene.agents)):
        for k in range(len(scene.landmarks)):
            (rn, why_n), (ro, why_o) = new.route_to_landmark(a, k), old.route_to_landmark(a, k)
            assert why_n == why_o
            if rn is None:
                assert ro is None
                continue
            assert ro is not None
            assert abs(rn.length - ro.length) <= 1e-9
            if ro.worst_length is not None:
                assert rn.worst_length is not None
                assert abs(rn.worst_length - ro.worst_length) <= 1e-9
            # a route starts at a start sample and ends within the landmark's reach
            lm = scene.landmarks[k]
            assert math.dist(rn.end, lm.position) <= lm.reach_radius + 1e-9


def test_other_success_rules_agree_too() -> None:
    scene = many_landmarks_scene(40, seed=5)
    for rule in ("all_at_end", "all_visited"):
        goals = dataclasses.replace(scene.goals, rule=rule, families=(1, 2))
        _same_plans(dataclasses.replace(scene, goals=goals))


def test_open_room_matches_plane_geometry() -> None:
    # no obstacles: the route is straight, |start - centre| - reach (or 0 from inside)
    rng = np.random.default_rng(11)
    centres = rng.uniform(-40, 40, size=(200, 2))
    reach = rng.uniform(0.2, 3.0, size=200)
    scene = Scene(
        rooms=(Room("r", ((-50, -50), (50, -50), (50, 50), (-50, 50))),),
        landmarks=tuple(
            Landmark(f"l{i}", f"L{i}", (float(x), float(y)), float(r))
            for i, ((x, y), r) in enumerate(zip(centres, reach, strict=True))
        ),
        agents=(Agent("a", 0.1, 1.0, 1.0, Start(pose=(3.0, -2.0, 0.0))),),
        goals=GoalSpec(rule="all_at_once", families=(1,)),
    )
    planner = PathPlanner(scene)
    for k, lm in enumerate(scene.landmarks):
        route = planner.path_to_landmark(0, k)
        assert route is not None
        # the reach disc is drawn as an inscribed polygon within 1 mm of the circle
        want = max(math.dist((3.0, -2.0), lm.position) - lm.reach_radius, 0.0)
        assert want - 1e-9 <= route.length <= want + 1e-3
