"""observe / coverage / goal_reached against outside references.

Sources: IEEE 754 atan2 special values and the (-pi, pi] wrap cases (computed with
Python's math module); body frame x forward, y left (ROS REP 103
[memory]); Python's math.atan2 (C library) as the reference for every bearing.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from arena_studio.core.scene.model import Agent, GoalSpec, Landmark, Room, Scene, Start
from arena_studio.core.sim.observe import coverage, goal_reached, hold_steps, observe, wrap_angle


def _scene(landmarks: list[tuple[float, float]], reach: float = 0.5, agents: int = 2) -> Scene:
    return Scene(
        rooms=(Room("r", ((-10, -10), (10, -10), (10, 10), (-10, 10))),),
        landmarks=tuple(Landmark(f"l{i}", f"L{i}", p, reach) for i, p in enumerate(landmarks)),
        agents=tuple(
            Agent(f"a{i}", 0.2, 1.0, 1.0, Start(pose=(0.0, 0.0, 0.0))) for i in range(agents)
        ),
        goals=GoalSpec(rule="all_at_once", families=(1,)),
    )


def test_wrap_both_ends_of_interval() -> None:
    # IEEE 754 / Python floats (computed): ((a + pi) % 2pi) - pi maps pi to -pi;
    # our wrap must keep pi and send -pi
    # to pi, since the interval is (-pi, pi].
    assert wrap_angle(math.pi) == math.pi
    assert wrap_angle(-math.pi) == math.pi
    assert wrap_angle(3 * math.pi) == pytest.approx(math.pi)
    assert wrap_angle(-3 * math.pi) == pytest.approx(math.pi)
    assert wrap_angle(2 * math.pi) == 0.0
    # a tiny negative angle must stay tiny and negative (not jump to 2pi or -pi)
    assert wrap_angle(-1e-17) == -1e-17
    assert wrap_angle(-2 * math.pi - 1e-15) == pytest.approx(-1e-15, abs=1e-14)


@settings(max_examples=200, deadline=None)
@given(st.floats(min_value=-1e4, max_value=1e4, allow_nan=False))
def test_wrap_range_and_equivalence(a: float) -> None:
    w = float(wrap_angle(a))
    assert -math.pi < w <= math.pi
    # same direction: compare unit vectors with math.cos/sin (reference: C library)
    assert math.cos(w) == pytest.approx(math.cos(a), abs=1e-9)
    assert math.sin(w) == pytest.approx(math.sin(a), abs=1e-9)


@pytest.mark.parametrize(
    ("landmark", "heading", "expected"),
    [
        # four quadrants, heading 0: bearing = math.atan2(dy, dx)  (C library reference)
        ((1.0, 1.0), 0.0, math.atan2(1.0, 1.0)),  # pi/4
        ((-1.0, 1.0), 0.0, math.atan2(1.0, -1.0)),  # 3pi/4
        ((-1.0, -1.0), 0.0, math.atan2(-1.0, -1.0)),  # -3pi/4
        ((1.0, -1.0), 0.0, math.atan2(-1.0, 1.0)),  # -pi/4
        # ROS REP 103 body frame (from memory), computed: heading pi/2, landmark at (1, 0)
        # -> -pi/2 (on the agent's right)
        ((1.0, 0.0), math.pi / 2, -math.pi / 2),
        # computed with math.atan2: heading pi/2, landmark at (0, -1) -> pi (edge of the interval)
        ((0.0, -1.0), math.pi / 2, math.pi),
        # IEEE 754: atan2(0, -1) = pi; directly behind an agent facing +x: pi, not -pi
        ((-1.0, 0.0), 0.0, math.pi),
        # across the seam: facing 170 deg, landmark at -170 deg -> +20 deg (left, REP 103)
        (
            (math.cos(math.radians(-170)), math.sin(math.radians(-170))),
            math.radians(170),
            math.radians(20),
        ),
        # and the mirror: facing -170 deg, landmark at 170 deg -> -20 deg (right)
        (
            (math.cos(math.radians(170)), math.sin(math.radians(170))),
            math.radians(-170),
            math.radians(-20),
        ),
    ],
)
def test_landmark_bearing_worked_examples(
    landmark: tuple[float, float], heading: float, expected: float
) -> None:
    scene = _scene([landmark], agents=1)
    obs = observe(scene, np.array([[0.0, 0.0, heading]]))
    assert obs["landmark_bearing"].shape == (1, 1)
    assert obs["landmark_bearing"][0, 0] == pytest.approx(expected, abs=1e-12)
    assert obs["landmark_range"][0, 0] == pytest.approx(math.hypot(*landmark), abs=1e-12)


def test_agent_bearing_and_time_axis() -> None:
    scene = _scene([(3.0, 4.0)], agents=2)
    # T=2 steps; agent 0 at origin facing +y, agent 1 at (2, 0) facing pi (towards agent 0)
    poses = np.array(
        [
            [[0.0, 0.0, math.pi / 2], [2.0, 0.0, math.pi]],
            [[0.0, 0.0, 0.0], [0.0, 2.0, -math.pi / 2]],
        ]
    )
    obs = observe(scene, poses)
    assert obs["landmark_range"].shape == (2, 2, 1)
    assert obs["agent_bearing"].shape == (2, 2, 2)
    # step 0: agent 1 is at +x of agent 0, which faces +y: bearing atan2(0,2) - pi/2 = -pi/2
    assert obs["agent_bearing"][0, 0, 1] == pytest.approx(-math.pi / 2)
    # agent 1 faces pi and agent 0 is straight ahead of it: bearing 0
    assert obs["agent_bearing"][0, 1, 0] == pytest.approx(0.0, abs=1e-12)
    assert obs["agent_range"][0, 0, 1] == pytest.approx(2.0)
    # step 1: agent 1 at (0,2) facing -pi/2 sees agent 0 dead ahead; agent 0 sees 1 at +pi/2
    assert obs["agent_bearing"][1, 1, 0] == pytest.approx(0.0, abs=1e-12)
    assert obs["agent_bearing"][1, 0, 1] == pytest.approx(math.pi / 2)
    # self entries are zero by definition
    assert np.all(obs["agent_range"][:, [0, 1], [0, 1]] == 0)
    # landmark range 5 from the origin: 3-4-5 triangle (worked example)
    assert obs["landmark_range"][0, 0, 0] == pytest.approx(5.0)


def test_observe_bad_shape_is_clear() -> None:
    with pytest.raises(ValueError, match=r"shape \(\.\.\., A, 3\)"):
        observe(_scene([(1, 1)]), np.zeros((2, 2)))


def test_coverage_inclusive_radius() -> None:
    scene = _scene([(1.0, 0.0), (5.0, 5.0)], reach=0.5)
    cov = coverage(scene, np.array([[0.5, 0.0], [5.0, 5.3]]))
    # distance exactly equal to the reach radius counts (DESIGN: "within reach radius")
    assert cov.tolist() == [[True, False], [False, True]]


def _traj(scene: Scene, steps: list[list[tuple[float, float]]]) -> np.ndarray:
    return np.array(steps, dtype=np.float64)


FAR = (9.0, 9.0)


def test_goal_reached_rules_and_hold() -> None:
    scene = _scene([(0.0, 0.0), (5.0, 0.0)], reach=0.5)
    goal = [1, 1]
    at0, at1 = (0.0, 0.0), (5.0, 0.0)
    # agent 0 sits on target 0 at steps 0-1; agent 1 reaches target 1 at step 2; then leave
    traj = _traj(scene, [[at0, FAR], [at0, FAR], [FAR, at1], [FAR, at1], [FAR, FAR]])
    once = goal_reached(scene, goal, traj, rule="all_at_once", hold_time=0.0)
    assert once.tolist() == [False] * 5  # never both at one step
    visited = goal_reached(scene, goal, traj, rule="all_visited", hold_time=0.0)
    assert visited.tolist() == [False, False, True, True, True]
    end = goal_reached(scene, goal, traj, rule="all_at_end", hold_time=0.0)
    assert not end[-1]
    # hold 0.1 s at dt 0.1: each target must stay covered across two steps (t - s >= 1)
    held = goal_reached(scene, goal, traj, rule="all_visited", dt=0.1, hold_time=0.1)
    assert held.tolist() == [False, False, False, True, True]
    # hold 0.25 s at dt 0.1 needs 3 steps in a row: target 0 only had 2 -> never
    never = goal_reached(scene, goal, traj, rule="all_visited", dt=0.1, hold_time=0.25)
    assert not never.any()
    # both at once for 3 steps
    both = _traj(scene, [[FAR, FAR], [at0, at1], [at0, at1], [at0, at1]])
    r = goal_reached(scene, goal, both, rule="all_at_once", dt=0.5, hold_time=1.0)
    assert r.tolist() == [False, False, False, True]
    assert goal_reached(scene, goal, both[1]) is True
    assert goal_reached(scene, goal, both[0]) is False


def test_goal_reached_bad_input() -> None:
    scene = _scene([(0.0, 0.0), (5.0, 0.0)])
    traj = np.zeros((3, 2, 2))
    with pytest.raises(ValueError, match="no targets"):
        goal_reached(scene, [0, 0], traj)
    with pytest.raises(ValueError, match="3 entries but the scene has 2"):
        goal_reached(scene, [1, 0, 1], traj)
    with pytest.raises(ValueError, match="dt"):
        goal_reached(scene, [1, 0], traj, hold_time=0.5)
    with pytest.raises(ValueError, match="unknown success rule"):
        goal_reached(scene, [1, 0], traj, rule="any")


@settings(max_examples=40, deadline=None)
@given(st.lists(st.booleans(), min_size=1, max_size=30), st.integers(0, 4))
def test_run_lengths_against_python_loop(cond: list[bool], extra: int) -> None:
    # reference: a plain Python loop over the steps (the definition, no numpy)
    scene = _scene([(0.0, 0.0)], reach=0.5, agents=1)
    traj = np.array([[[0.0, 0.0]] if c else [[FAR[0], FAR[1]]] for c in cond])
    got = goal_reached(scene, [1], traj, rule="all_at_once", dt=1.0, hold_time=float(extra))
    run, expected = 0, []
    for c in cond:
        run = run + 1 if c else 0
        expected.append(run >= extra + 1)
    assert got.tolist() == expected
    assert hold_steps(float(extra), 1.0) == extra


@settings(max_examples=20, deadline=None)
@given(st.integers(1, 6), st.integers(1, 3), st.integers(0, 2**31 - 1))
def test_time_axis_equals_step_by_step(steps: int, agents: int, seed: int) -> None:
    # reference: the same function called one step at a time in a Python loop, and
    # math.atan2 / math.hypot for one entry
    rng = np.random.default_rng(seed)
    scene = _scene([(1.0, 2.0), (-3.0, 0.5), (0.0, -4.0)], reach=1.5, agents=agents)
    poses = np.concatenate(
        [rng.uniform(-5, 5, (steps, agents, 2)), rng.uniform(-7, 7, (steps, agents, 1))], axis=2
    )
    whole = observe(scene, poses)
    for t in range(steps):
        one = observe(scene, poses[t])
        for key, value in one.items():
            np.testing.assert_array_equal(whole[key][t], value)
    x, y, h = poses[0, 0]
    expected = math.atan2(2.0 - y, 1.0 - x) - h
    expected = math.atan2(math.sin(expected), math.cos(expected))
    assert whole["landmark_bearing"][0, 0, 0] == pytest.approx(expected, abs=1e-9)
    assert whole["landmark_range"][0, 0, 0] == pytest.approx(math.hypot(1.0 - x, 2.0 - y))
    goal = [1, 0, 1]
    series = goal_reached(scene, goal, poses[..., :2], rule="all_at_once", hold_time=0.0)
    assert series.tolist() == [goal_reached(scene, goal, poses[t, :, :2]) for t in range(steps)]
