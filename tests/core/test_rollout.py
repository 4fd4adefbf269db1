"""Preview rollout on the demo greenhouse: reproducible, collision-free with walls, sensible."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import shapely

from arena_studio.core.analysis.metrics import episode_metrics
from arena_studio.core.geometry.regions import free_space
from arena_studio.core.scene.model import load_scene
from arena_studio.core.sim.rollout import Rollout, run_rollout
from arena_studio.core.tape import open_tape
from arena_studio.core.tape.episode import Episode

SCENES = Path(__file__).resolve().parents[2] / "scenes"


def _as_episode(run, i: int) -> Episode:
    return Episode(
        index=i,
        dt=0.1,
        poses=run.poses,
        team_goal=run.team_goal,
        pursued_goals=tuple(run.pursued_goals),
    )


def test_bit_for_bit_reproducible(tmp_path: Path) -> None:
    scene = load_scene(SCENES / "greenhouse.scene.json")
    a, b = tmp_path / "a.tape", tmp_path / "b.tape"
    run_rollout(scene, a, episodes=3, seed=7, mode="independent")
    run_rollout(scene, b, episodes=3, seed=7, mode="independent")
    assert a.read_bytes() == b.read_bytes()
    one = Rollout(scene).episode(7, 2, "independent")  # any episode regenerates alone
    assert np.array_equal(one.poses, open_tape(a).episode(2).poses)


def test_shared_mode_succeeds_and_stays_in_free_space() -> None:
    scene = load_scene(SCENES / "greenhouse.scene.json")
    sim = Rollout(scene)
    wins = 0
    for i in range(6):
        run = sim.episode(1, i, "shared")
        m = episode_metrics(scene, _as_episode(run, i))
        wins += m.success
        assert m.aligned is True and m.free_space_exits == 0
        # check against shapely directly: every centre within its free space (2 mm tolerance)
        for a, agent in enumerate(scene.agents):
            free = free_space(scene, agent.radius).buffer(0.002)
            assert shapely.covers(free, shapely.points(run.poses[:, a, :2])).all()
        # limits: speed never above the agent's top speed (common practice, no source)
        step = np.hypot(*np.diff(run.poses[:, :, :2], axis=0).transpose(2, 0, 1)) / 0.1
        top = np.array([ag.max_speed for ag in scene.agents])
        assert (step <= top + 1e-9).all()
        if m.success and m.par_ratio is not None:
            assert 0 < m.par_ratio <= 1.0 + 1e-9  # par time is a lower bound on the time
    assert wins >= 5


def test_independent_mode_fails_cooperative_goals_often() -> None:
    scene = load_scene(SCENES / "greenhouse.scene.json")
    sim = Rollout(scene)
    coop = [
        episode_metrics(scene, _as_episode(sim.episode(2, i, "independent"), i)) for i in range(8)
    ]
    coop = [m for m in coop if m.kind == "cooperative"]
    assert coop and sum(m.success for m in coop) < len(coop)
    assert all(m.diagnosis_code for m in coop if not m.success)


# -- greedy mode, time limits and the demo tapes -------------------------------------------
import math  # noqa: E402

import pytest  # noqa: E402

from arena_studio.core.planning.partime import plan_goal  # noqa: E402
from arena_studio.core.sim.controller import FollowerLimits, LegFollower, PathFollower  # noqa: E402
from arena_studio.core.sim.rollout import PATIENCE  # noqa: E402


def test_greedy_mode_aligned_nearest_first_and_reproducible(tmp_path: Path) -> None:
    scene = load_scene(SCENES / "greenhouse.scene.json")
    a, b = tmp_path / "a.tape", tmp_path / "b.tape"
    for path in (a, b):
        run_rollout(scene, path, episodes=4, seed=3, mode="greedy", par_limit=(0.8, 2.0))
    assert a.read_bytes() == b.read_bytes()  # bit for bit
    sim = Rollout(scene)
    for i, ep in enumerate(open_tape(a)):
        run = sim.episode(3, i, "greedy", par_limit=(0.8, 2.0))
        assert np.array_equal(run.poses, ep.poses)  # any episode regenerates alone
        m = episode_metrics(scene, ep)
        assert m.aligned is True  # greedy agents all pursue the team goal
        targets = [int(k) for k in np.flatnonzero(ep.team_goal)]
        for agent, timeline in enumerate(ep.roles):
            # the first target is the nearest by shortest route (PathPlanner, itself checked
            # against networkx in test_paths.py)
            lengths = {
                scene.landmarks[k].id: sim.planner.path_to_landmark(
                    agent, k, start_xy=tuple(ep.poses[0, agent, :2])
                ).length
                for k in targets
            }
            assert timeline[0][1] == f"heads to {min(lengths, key=lengths.get)}"


def test_leg_follower_waits_its_patience() -> None:
    limits = FollowerLimits(1.0, 2.0)
    legs = [
        (PathFollower(np.array([[0.0, 0.0], [0.5, 0.0]]), limits), "A", 7),
        (PathFollower(np.array([[0.5, 0.0], [1.0, 0.0]]), limits), "B", 7),
    ]
    f = LegFollower(legs)
    pose = np.zeros(3)
    labels = []
    for _ in range(40):
        v, w = f.command(pose, 0.1)
        pose = pose + np.array([v * math.cos(pose[2]), v * math.sin(pose[2]), w]) * 0.1
        labels.append(f.label)
    # derivation: 0.5 m at 1 m/s in 0.1 s steps = 5 moving steps, then 7 still steps waiting
    assert labels.count("waits at A") == 7 and labels[-1] == "holds B" and f.finished
    assert PATIENCE[0] > 0 and PATIENCE[0] < PATIENCE[1]


def test_default_time_limit_from_longest_par_time() -> None:
    scene = load_scene(SCENES / "parking-level.scene.json")
    sim = Rollout(scene)
    # reference: partime.plan_goal, the par times `arena-studio goals` lists
    pars = []
    for vector in sim.table.vectors:
        plan = plan_goal(scene, vector)
        if plan.feasible:
            pars.append(max(plan.par_time, plan.par_time_worst or 0.0))
    assert sim.max_time == max(20.0, math.ceil(2 * max(pars) + 10))
    assert Rollout(scene, max_time=5.0).max_time == 5.0


def test_time_limit_below_par_time_never_succeeds() -> None:
    # par time is a lower bound on the time to success (DESIGN.md), so a limit of 0.6x the
    # par time must end every episode in failure, at exactly that limit
    scene = load_scene(SCENES / "greenhouse.scene.json")
    sim = Rollout(scene)
    for i in range(4):
        run = sim.episode(9, i, "shared", par_limit=(0.6, 0.6))
        m = episode_metrics(scene, _as_episode(run, i))
        team = [
            g for g in range(len(sim.table)) if np.array_equal(sim.table.vectors[g], run.team_goal)
        ]
        par = sim.par_time(team[0])
        assert not m.success and m.diagnosis_code is not None
        assert run.outcome["time_limit"] == pytest.approx(0.6 * par, abs=1e-6)
        assert run.poses.shape[0] - 1 == round(0.6 * par / 0.1)


def test_best_demo_tape_mixes_outcomes_and_regenerates(tmp_path: Path) -> None:
    demo = SCENES / "greenhouse-greedy.tape"
    tape = open_tape(demo)
    ms = [episode_metrics(tape.scene, e) for e in tape]
    codes = {m.diagnosis_code for m in ms if not m.success}
    assert any(m.success for m in ms) and len(codes) >= 3
    assert {"duplicate-target", "time-ran-out", "not-together"} <= codes
    assert max(e.duration for e in tape) >= 10.0
    # the Makefile `demos` recipe gives the same bytes again
    again = tmp_path / "again.tape"
    run_rollout(
        load_scene(SCENES / "greenhouse.scene.json"),
        again,
        episodes=20,
        seed=13,
        mode="greedy",
        par_limit=(0.8, 2.0),
    )
    assert again.read_bytes() == demo.read_bytes()
