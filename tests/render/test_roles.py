"""Derived roles (core.roles) on hand-built episodes with known answers.

Coverage is checked against shapely/GEOS point distances (OGC Simple Features distance) as the
reference library; the motion cases are set up so the answer follows from the definitions in
the core.roles docstring (plain geometry: straight-line motion toward or away from a point).
"""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from shapely.geometry import Point

from arena_studio.core.analysis.roles import (
    HEADING,
    HOLDING,
    IDLE,
    MOVING,
    OFF_GOAL,
    derive_roles,
    tape_roles,
)
from arena_studio.core.scene.model import Agent, Landmark, Room, Scene, Start
from arena_studio.core.tape.episode import Episode


def _scene(n_agents: int) -> Scene:
    lms = (
        Landmark("a", "A", (0.0, 0.0), 0.5),
        Landmark("b", "B", (10.0, 0.0), 0.5),
        Landmark("c", "C", (0.0, 10.0), 0.5),
    )
    agents = tuple(
        Agent(f"r{i}", 0.2, 1.0, 2.0, Start(pose=(0.0, 0.0, 0.0))) for i in range(n_agents)
    )
    room = Room("hall", ((-20.0, -20.0), (20.0, -20.0), (20.0, 20.0), (-20.0, 20.0)))
    return Scene(name="roles", rooms=(room,), landmarks=lms, agents=agents)


def _line(start, velocity, steps, dt):
    t = np.arange(steps)[:, None] * dt
    return np.asarray(start, float) + t * np.asarray(velocity, float)


def test_roles_follow_their_definitions():
    dt, steps = 0.1, 40
    scene = _scene(5)
    xy = np.stack(
        [
            _line((0, 0), (0, 0), steps, dt),  # parked on team target A -> holding
            _line((5, 0), (1, 0), steps, dt),  # driving at team target B -> heading
            _line((0, 5), (0, 1), steps, dt),  # driving at C, not on the team goal -> off goal
            _line((5, -5), (0, 0), steps, dt),  # standing in the open -> idle
            _line((-3, -3), (-1, -1), steps, dt),  # driving away from everything -> moving
        ],
        axis=1,
    )
    poses = np.concatenate([xy, np.zeros((steps, 5, 1))], axis=-1)
    ep = Episode(0, dt, poses, team_goal=np.array([1, 1, 0], np.uint8))
    roles = derive_roles(scene, ep)
    assert roles.shape == (steps, 5) and roles.dtype == np.uint8
    late = roles[10]  # after one 0.5 s window of motion
    assert list(late) == [HOLDING, HEADING, OFF_GOAL, IDLE, MOVING]


def test_arriving_turns_heading_into_holding():
    dt, steps = 0.1, 60
    scene = _scene(1)
    xy = _line((7, 0), (1, 0), steps, dt)
    xy = np.minimum(xy, [10.0, 0.0])  # stops on landmark B at t = 3 s
    poses = np.concatenate([xy[:, None], np.zeros((steps, 1, 1))], axis=-1)
    ep = Episode(0, dt, poses, team_goal=np.array([0, 1, 0], np.uint8))
    roles = derive_roles(scene, ep)[:, 0]
    # reached when the centre is within 0.5 m of (10, 0): from x >= 9.5, i.e. t >= 2.5 s
    first_hold = int(np.flatnonzero(roles == HOLDING)[0])
    assert first_hold == 25
    assert set(roles[6:25].tolist()) == {HEADING}
    assert set(roles[25:].tolist()) == {HOLDING}


def test_pursued_goal_breaks_ties_inside_the_aim_cone():
    # Two landmarks straight ahead: B (team) is nearer, but the agent pursues only D.
    dt, steps = 0.1, 20
    lms = (Landmark("b", "B", (5.0, 0.0), 0.3), Landmark("d", "D", (9.0, 0.5), 0.3))
    scene = Scene(
        name="tie",
        rooms=(Room("r", ((-1.0, -3.0), (12.0, -3.0), (12.0, 3.0), (-1.0, 3.0))),),
        landmarks=lms,
        agents=(Agent("r0", 0.2, 1.0, 2.0, Start(pose=(0.0, 0.0, 0.0))),),
    )
    xy = _line((0, 0), (1, 0), steps, dt)
    poses = np.concatenate([xy[:, None], np.zeros((steps, 1, 1))], axis=-1)
    team = np.array([1, 0], np.uint8)
    plain = Episode(0, dt, poses, team_goal=team)
    pursuing = Episode(0, dt, poses, team_goal=team, pursued_goals=(np.array([0, 1], np.uint8),))
    assert derive_roles(scene, plain)[10, 0] == HEADING
    assert derive_roles(scene, pursuing)[10, 0] == OFF_GOAL


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.floats(-2, 12), st.floats(-2, 12)), min_size=1, max_size=6))
def test_holding_matches_geos_point_distance(points):
    scene = _scene(len(points))
    xy = np.array(points, dtype=float)[None].repeat(3, axis=0)  # standing still
    poses = np.concatenate([xy, np.zeros((*xy.shape[:2], 1))], axis=-1)
    team = np.array([1, 1, 0], np.uint8)
    roles = derive_roles(scene, Episode(0, 0.1, poses, team_goal=team))[-1]
    for a, (x, y) in enumerate(points):
        near_team = any(
            Point(x, y).distance(Point(lm.position)) <= lm.reach_radius
            for lm, on in zip(scene.landmarks, team, strict=True)
            if on
        )
        near_other = Point(x, y).distance(Point(0, 10)) <= 0.5
        expected = HOLDING if near_team else OFF_GOAL if near_other else IDLE
        assert roles[a] == expected, (x, y)


def test_tape_role_labels_become_codes_in_first_seen_order():
    poses = np.zeros((6, 2, 3))
    ep = Episode(
        0, 0.1, poses, roles=(((0, "scout"), (3, "carrier")), ((2, "carrier"), (4, "scout")))
    )
    codes, labels = tape_roles(ep)
    assert labels == ("scout", "carrier")
    assert codes[:, 0].tolist() == [0, 0, 0, 1, 1, 1]
    assert codes[:, 1].tolist() == [-1, -1, 1, 1, 0, 0]
    # and they agree with Episode.role_at, the existing lookup
    for t in range(6):
        for a in range(2):
            label = ep.role_at(a, t)
            assert (labels[codes[t, a]] if codes[t, a] >= 0 else None) == label


def test_no_team_goal_means_every_landmark_counts():
    scene = _scene(1)
    poses = np.zeros((3, 1, 3))
    poses[..., 1] = 10.0  # parked on C
    assert derive_roles(scene, Episode(0, 0.1, poses))[-1, 0] == HOLDING
    assert MOVING == 0  # code 0 is the neutral default
