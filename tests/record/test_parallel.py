"""RecordParallelEnv against PettingZoo's own API test and a hand-written environment's log."""

from __future__ import annotations

import numpy as np
import pytest
from pettingzoo.test import parallel_api_test

from arena_studio.core.tape import open_tape
from arena_studio.record import RecordError, RecordParallelEnv
from tests.core.tape_helpers import box_scene
from tests.record.envs import Herd


def _run(env, episodes: int, seed: int = 3) -> None:
    rng = np.random.default_rng(seed)
    for e in range(episodes):
        env.reset(seed=e)
        while env.agents:
            env.step({a: int(rng.integers(0, 5)) for a in env.agents})


def test_tape_equals_what_the_environment_produced(tmp_path):
    herd = Herd(agents=3)
    env = RecordParallelEnv(
        herd,
        tmp_path / "run.tape",
        box_scene(agents=3),
        poses=lambda e: e.poses,
        channels={"energy": "energy"},
    )
    _run(env, episodes=4)
    env.close()
    tape = open_tape(tmp_path / "run.tape")
    assert len(tape) == 4
    # split the environment's own log into episodes (a reset starts one)
    episodes, cur = [], None
    for entry in herd.log:
        if entry.get("reset"):
            cur = [entry]
            episodes.append(cur)
        else:
            cur.append(entry)
    names = herd.possible_agents
    for ep, log in zip(tape, episodes, strict=True):
        assert ep.steps == len(log)
        for t, entry in enumerate(log):
            # poses exactly as the environment held them after reset / each step
            np.testing.assert_array_equal(ep.poses[t], entry["poses"])
            if t == 0:
                assert not ep.done[0].any() and (ep.rewards[0] == 0).all()
                assert np.isnan(ep.actions[0]).all()
                continue
            for k, name in enumerate(names):
                if name in entry["rewards"]:
                    assert ep.rewards[t, k] == entry["rewards"][name]
                    assert ep.done[t, k] == entry["done"][name]
                    assert ep.actions[t, k, 0] == entry["actions"][name]
                else:  # finished earlier: reward 0, done stays set, no action
                    assert ep.rewards[t, k] == 0 and ep.done[t, k]
                    assert np.isnan(ep.actions[t, k, 0])
        assert ep.done[-1].all()
        assert ep.channels["energy"].shape == (ep.steps, 3)
        assert ep.outcome["returns"]["r0"] == pytest.approx(ep.rewards[:, 0].sum())


def test_an_agent_finishing_early_is_recorded_as_done(tmp_path):
    # r0 walks up (action 3) and is done after 7 steps; r1 stays until truncation
    herd2 = Herd(agents=2, max_steps=10)
    env = RecordParallelEnv(herd2, tmp_path / "b.tape", box_scene(), poses=lambda e: e.poses)
    env.reset(seed=0)
    while env.agents:
        env.step({a: 3 if a == "r0" else 0 for a in env.agents})
    env.close()
    ep = open_tape(tmp_path / "b.tape").episode(0)
    first_done = int(np.argmax(ep.done[:, 0]))
    assert first_done == 7  # 1.0 + 7 * 0.3 = 3.1 > 3 (arithmetic of the env's rule)
    assert ep.done[first_done:, 0].all() and not ep.done[:first_done, 0].any()
    # after finishing, r0 keeps its last pose
    assert (ep.poses[first_done:, 0] == ep.poses[first_done, 0]).all()
    assert ep.steps == 11 and ep.done[-1, 1]


def test_wrapped_environment_passes_the_parallel_api_test(tmp_path, capsys):
    # source: PettingZoo's own conformance test (pettingzoo.test.parallel_api_test)
    env = RecordParallelEnv(
        Herd(agents=3), tmp_path / "api.tape", box_scene(agents=3), poses=lambda e: e.poses
    )
    parallel_api_test(env, num_cycles=50)
    env.close()
    assert "Passed Parallel API test" in capsys.readouterr().out
    assert len(open_tape(tmp_path / "api.tape")) >= 2


def test_every_nth_trigger_and_rotation(tmp_path):
    env = RecordParallelEnv(
        Herd(agents=2, max_steps=3),
        tmp_path / "r.tape",
        box_scene(),
        poses=lambda e: e.poses,
        every=2,
        trigger=lambda n: n != 4,
        episodes_per_tape=2,
    )
    _run(env, episodes=9)
    env.close()
    # recorded: 0, 2, 6, 8 (4 refused by the trigger) -> two tapes of two episodes
    paths = sorted(p.name for p in tmp_path.glob("*.tape"))
    assert paths == ["r-000.tape", "r-001.tape"]
    got = [ep.outcome["env_episode"] for p in paths for ep in open_tape(tmp_path / p)]
    assert got == [0, 2, 6, 8]


def test_reset_mid_episode_ends_it_as_cut(tmp_path):
    env = RecordParallelEnv(
        Herd(agents=2), tmp_path / "c.tape", box_scene(), poses=lambda e: e.poses
    )
    env.reset(seed=1)
    env.step({"r0": 1, "r1": 1})
    env.reset(seed=2)
    env.step({"r0": 1, "r1": 1})
    env.close()
    tape = open_tape(tmp_path / "c.tape")
    assert tape.episode(0).outcome["cut"] is True and tape.episode(0).steps == 2
    assert tape.episode(1).outcome == {"unfinished": True} and tape.episode(1).steps == 2


def test_agent_names_must_match_the_scene(tmp_path):
    class Named(Herd):
        def __init__(self):
            super().__init__(agents=2)
            self.possible_agents = ["alpha", "beta"]

    with pytest.raises(RecordError, match="agent_ids"):
        RecordParallelEnv(Named(), tmp_path / "x.tape", box_scene(), poses=lambda e: e.poses)
    env = RecordParallelEnv(
        Named(),
        tmp_path / "x.tape",
        box_scene(),
        poses=lambda e: e.poses,
        agent_ids={"alpha": "r0", "beta": "r1"},
    )
    env.reset(seed=0)
    env.close()
    assert open_tape(tmp_path / "x.tape").agent_ids == ("r0", "r1")


def test_bad_pose_shape_names_episode_and_step(tmp_path):
    env = RecordParallelEnv(
        Herd(agents=2), tmp_path / "y.tape", box_scene(), poses=lambda e: e.poses[:, :2]
    )
    with pytest.raises(RecordError, match=r"episode 0 step 0: poses: expected shape \(2, 3\)"):
        env.reset(seed=0)
    env.close()


def test_messages_from_a_callable_reach_the_tape_with_scene_ids(tmp_path):
    # environment names "e0".."e2" mapped onto the scene's r0..r2 (as agent_ids allows)
    class Renamed(Herd):
        def __init__(self):
            super().__init__(agents=3)
            self.possible_agents = ["e0", "e1", "e2"]

    said = [{"from": "e2", "to": "e0", "step": None, "value": 4}]
    env = RecordParallelEnv(
        Renamed(),
        tmp_path / "m.tape",
        box_scene(agents=3),
        poses=lambda e: e.poses,
        agent_ids={"e0": "r0", "e1": "r1", "e2": "r2"},
        messages=lambda e: said,
    )
    _run(env, episodes=2)
    env.close()
    tape = open_tape(tmp_path / "m.tape")
    # the tape's message structure (README, tape format): scene ids, nil "step" = before
    assert [list(tape.episode(i).messages) for i in range(2)] == [
        [{"from": "r2", "to": "r0", "step": None, "value": 4}]
    ] * 2


def test_a_broken_message_from_the_environment_is_named(tmp_path):
    env = RecordParallelEnv(
        Herd(agents=2),
        tmp_path / "x.tape",
        box_scene(),
        poses=lambda e: e.poses,
        messages=lambda e: [{"from": "r0", "to": None, "step": None, "value": 2.5}],
    )
    with pytest.raises(RecordError, match=r"episode 0: messages\[0\]\.value"):
        env.reset(seed=0)
    env.close()
