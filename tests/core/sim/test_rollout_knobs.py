"""Rollout knobs for sweeps: skill slows a team down, shared_share mixes goal modes."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from arena_studio.core.scene.model import load_scene
from arena_studio.core.sim.rollout import MIN_PACE, Rollout, run_rollout
from arena_studio.core.tape import open_tape

SCENES = Path(__file__).resolve().parents[3] / "scenes"


@pytest.fixture(scope="module")
def scene():
    return load_scene(SCENES / "parking-level.scene.json")


def test_full_skill_is_the_plain_rollout(scene) -> None:
    sim = Rollout(scene)
    a = sim.episode(3, 0, "shared")
    b = sim.episode(3, 0, "shared", skill=1.0)
    assert np.array_equal(a.poses, b.poses)


def test_lower_skill_caps_speed(scene) -> None:
    sim = Rollout(scene, dt=0.1)
    skill = 0.5
    run = sim.episode(3, 0, "shared", skill=skill)
    steps = np.hypot(*np.diff(run.poses[:, :, :2], axis=0).transpose(2, 0, 1)) / 0.1
    caps = np.array([a.max_speed for a in scene.agents]) * (MIN_PACE + (1 - MIN_PACE) * skill)
    # derived from unicycle kinematics: distance per step <= speed limit x dt
    assert (steps <= caps[None, :] + 1e-9).all()
    assert steps.max() > 0.9 * caps.min()  # and the team does drive near that pace
    full = sim.episode(3, 0, "shared")
    assert len(full.poses) < len(run.poses)  # slower team, longer episode
    with pytest.raises(ValueError, match="skill"):
        sim.episode(3, 0, "shared", skill=0.0)


def test_shared_share_picks_modes_and_records_metadata(scene, tmp_path: Path) -> None:
    out = tmp_path / "s.tape"
    meta = {"condition": "c", "seed": 4, "step": 10}
    run_rollout(scene, out, episodes=6, seed=2, mode="shared", shared_share=0.5, metadata=meta)
    tape = open_tape(out)
    assert {k: tape.metadata[k] for k in meta} == meta and tape.metadata["shared_share"] == 0.5
    # derived: episode i is shared iff default_rng([2, i, 1]).random() < 0.5
    shared = [float(np.random.default_rng([2, i, 1]).random()) < 0.5 for i in range(6)]
    sim = Rollout(scene)
    for i, is_shared in enumerate(shared):
        expect = sim.episode(2, i, "shared" if is_shared else "independent")
        assert np.array_equal(tape.episode(i).poses, expect.poses)
    with pytest.raises(ValueError, match="shared_share"):
        run_rollout(scene, out, episodes=1, seed=0, mode="shared", shared_share=1.5)
