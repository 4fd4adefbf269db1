"""Rollout --goal-pool and --every-other: team goals cycle through a few cooperative goals,
and odd episodes run in the other mode, so one goal is seen both ways.

Reference: the scene's own goal table (core.planning.goal_set.enumerate_goals) for what a
cooperative goal is (two targets or more), and the tape read back with core.tape.open_tape.
"""

from __future__ import annotations

import numpy as np

from arena_studio.core.planning.goal_set import enumerate_goals
from arena_studio.core.scene.model import load_scene
from arena_studio.core.sim.rollout import run_rollout
from arena_studio.core.tape import open_tape
from tests.conftest import SCENES


def test_pool_cycles_cooperative_goals_and_odd_episodes_change_mode(tmp_path):
    scene = load_scene(SCENES / "greenhouse.scene.json")
    out = tmp_path / "pool.tape"
    run_rollout(
        scene, out, episodes=6, seed=5, mode="independent", max_time=4.0,
        goal_pool=3, every_other="shared",
    )  # fmt: skip
    tape = open_tape(out)
    table = enumerate_goals(scene)
    coop = {tuple(np.flatnonzero(v)) for v in table.vectors if np.count_nonzero(v) >= 2}
    goals = [tuple(np.flatnonzero(e.team_goal)) for e in tape]
    assert all(g in coop for g in goals)
    assert goals[:3] == goals[3:] and len(set(goals[:3])) == 3  # one pass, then again
    for i, e in enumerate(tape):
        own = [tuple(np.flatnonzero(p)) for p in e.pursued_goals]
        if i % 2 == 1:  # shared: every agent pursues the team goal
            assert all(g == goals[i] for g in own)
    assert tape.metadata["goal_pool"] == 3 and tape.metadata["every_other"] == "shared"
