"""Preview rollout on the demo scenes: reproducible, collision-free with walls, sensible.

Reproducible means two things (arena_studio.core.sim.rollout): the same inputs give the same bytes
within one run (same versions, same machine), and the committed demo tapes, made on some other
day with other library versions and another CPU, match a fresh run in meaning, poses within
REGENERATED_POSE_TOLERANCE.
"""

from __future__ import annotations

import re
from dataclasses import replace
from pathlib import Path

import numpy as np
import shapely

from arena_studio.core.analysis.metrics import episode_metrics
from arena_studio.core.geometry.regions import free_space
from arena_studio.core.scene.model import load_scene
from arena_studio.core.sim.rollout import Rollout, run_rollout
from arena_studio.core.tape import open_tape
from arena_studio.core.tape.episode import Episode

SCENES = Path(__file__).resolve().parents[3] / "scenes"


def _as_episode(run, i: int) -> Episode:
    return Episode(
        index=i,
        dt=0.1,
        poses=run.poses,
        team_goal=run.team_goal,
        pursued_goals=tuple(run.pursued_goals),
    )


def test_same_inputs_write_the_same_bytes_in_one_run(tmp_path: Path) -> None:
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
from arena_studio.core.sim.rollout import PATIENCE, REGENERATED_POSE_TOLERANCE  # noqa: E402


def test_greedy_mode_aligned_nearest_first_and_reproducible(tmp_path: Path) -> None:
    scene = load_scene(SCENES / "greenhouse.scene.json")
    a, b = tmp_path / "a.tape", tmp_path / "b.tape"
    for path in (a, b):
        run_rollout(scene, path, episodes=4, seed=3, mode="greedy", par_limit=(0.8, 2.0))
    assert a.read_bytes() == b.read_bytes()  # same versions, same machine: same bytes
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
    # par time is a lower bound on the time to success (its definition in the README),
    # so a limit of 0.6x the
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


def test_best_demo_tape_mixes_outcomes() -> None:
    tape = open_tape(SCENES / "greenhouse-greedy.tape")
    ms = [episode_metrics(tape.scene, e) for e in tape]
    codes = {m.diagnosis_code for m in ms if not m.success}
    assert any(m.success for m in ms) and len(codes) >= 3
    assert {"duplicate-target", "time-ran-out", "not-together"} <= codes
    assert max(e.duration for e in tape) >= 10.0


# -- the committed demo tapes against a fresh run of the Makefile's recipe ------------------
MAKEFILE = SCENES.parent / "Makefile"


def demo_recipes() -> list[tuple[str, str, list[str]]]:
    """(scene, tape name, rollout options) from the Makefile's `demos` recipe, as written."""
    text = MAKEFILE.read_text(encoding="utf-8").replace("\\\n", " ")
    scenes = re.search(r"^DEMO_SCENES := (.+)$", text, re.M).group(1).split()
    runs = re.findall(
        r"rollout scenes/\$\$s\.scene\.json -o scenes/\$\$s-([\w-]+)\.tape\s+(.*?)\s+--quiet",
        text,
    )
    out = [(s, f"{s}-{suffix}.tape", flags.split()) for s in scenes for suffix, flags in runs]
    single = re.findall(
        r"rollout scenes/([\w-]+)\.scene\.json\s+-o scenes/([\w-]+\.tape)\s+(.*?)\s+--quiet",
        text,
    )
    return out + [(s, name, flags.split()) for s, name, flags in single]


def differences_in_meaning(scene, old, new) -> list[str]:
    """What differs between two tapes of one scene beyond REGENERATED_POSE_TOLERANCE."""
    out = []
    if len(old) != len(new):
        return [f"{len(old)} episodes, now {len(new)}"]
    for i, (a, b) in enumerate(zip(old, new, strict=True)):
        ma, mb = episode_metrics(scene, a), episode_metrics(scene, b)
        if a.poses.shape != b.poses.shape:
            out.append(f"episode {i}: {a.poses.shape[0]} steps, now {b.poses.shape[0]}")
            continue
        step = a.poses - b.poses
        step[..., 2] = (step[..., 2] + math.pi) % (2 * math.pi) - math.pi  # headings wrap
        worst = float(np.abs(step).max())
        if worst > REGENERATED_POSE_TOLERANCE:
            out.append(f"episode {i}: a pose moved by {worst:.3g}")
        same = {
            "goal": np.array_equal(a.team_goal, b.team_goal),
            "pursued goals": all(map(np.array_equal, a.pursued_goals, b.pursued_goals)),
            "roles": a.roles == b.roles,
            "messages": a.messages == b.messages,
            "end": a.outcome["ended"] == b.outcome["ended"],
            "time limit": math.isclose(
                a.outcome.get("time_limit", 0.0),
                b.outcome.get("time_limit", 0.0),
                abs_tol=REGENERATED_POSE_TOLERANCE,
            ),
            "success": (ma.success, ma.success_step) == (mb.success, mb.success_step),
            "diagnosis": (ma.diagnosis_code, ma.diagnosis_step)
            == (mb.diagnosis_code, mb.diagnosis_step),
        }
        out += [f"episode {i}: {what} differs" for what, ok in same.items() if not ok]
    return out


def test_recipes_cover_every_committed_demo_tape() -> None:
    names = {name for _s, name, _f in demo_recipes()}
    assert names == {p.name for p in SCENES.glob("*.tape")} and len(names) == 11


@pytest.mark.parametrize("scene_name, tape_name, flags", demo_recipes())
def test_demo_tape_matches_a_fresh_run_in_meaning(tmp_path, scene_name, tape_name, flags):
    from arena_studio.cli import main

    again = tmp_path / tape_name
    assert main(["rollout", str(SCENES / f"{scene_name}.scene.json"), "-o", str(again),
                 *flags, "--quiet"]) == 0  # fmt: skip
    committed = open_tape(SCENES / tape_name)
    fresh = open_tape(again)
    assert committed.scene == fresh.scene
    assert differences_in_meaning(fresh.scene, list(committed), list(fresh)) == []


def test_meaning_comparison_sees_a_moved_pose_a_lost_step_and_a_changed_outcome() -> None:
    # the comparison must fail when the meaning changes and pass within the tolerance
    tape = open_tape(SCENES / "greenhouse-greedy.tape")
    eps = [tape.episode(i) for i in range(3)]
    scene = tape.scene
    assert differences_in_meaning(scene, eps, eps) == []
    nudged = eps[0].poses.copy()
    nudged[5, 1, 0] += REGENERATED_POSE_TOLERANCE / 2
    assert differences_in_meaning(scene, eps, [replace(eps[0], poses=nudged), *eps[1:]]) == []
    nudged[5, 1, 0] += 3 * REGENERATED_POSE_TOLERANCE
    assert differences_in_meaning(scene, eps, [replace(eps[0], poses=nudged), *eps[1:]]) == [
        "episode 0: a pose moved by 3.5e-06"
    ]
    cut = replace(eps[1], poses=eps[1].poses[:-1])
    assert differences_in_meaning(scene, eps, [eps[0], cut, eps[2]]) == [
        f"episode 1: {eps[1].poses.shape[0]} steps, now {eps[1].poses.shape[0] - 1}"
    ]
    ended = replace(eps[2], outcome={**eps[2].outcome, "ended": "something else"})
    assert differences_in_meaning(scene, eps, [*eps[:2], ended]) == ["episode 2: end differs"]
    assert differences_in_meaning(scene, eps, eps[:2]) == ["3 episodes, now 2"]
