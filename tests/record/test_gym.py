"""RecordEnv against Gymnasium's environment checker and a hand-written environment's log."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from gymnasium.utils.env_checker import check_env

from arena_studio.core.scene import Scene
from arena_studio.core.tape import open_tape
from arena_studio.record import RecordEnv, RecordError
from tests.core.tape_helpers import box_scene
from tests.record.envs import Rover


def one_agent_scene() -> Scene:
    doc = box_scene(agents=1).to_dict()
    return Scene.from_dict(doc)


def test_tape_equals_what_the_environment_produced(tmp_path):
    rover = Rover(max_steps=12)
    env = RecordEnv(
        rover,
        tmp_path / "g.tape",
        one_agent_scene(),
        poses="pose",
        team_goal=lambda e: ["A"],
        channels={"speed_cmd": lambda e: 0.5},
    )
    rng = np.random.default_rng(0)
    for e in range(3):
        env.reset(seed=e)
        done = False
        while not done:
            _, _, term, trunc, _ = env.step(rng.uniform(-1, 1, 2))
            done = term or trunc
    env.close()
    tape = open_tape(tmp_path / "g.tape")
    assert len(tape) == 3
    episodes, cur = [], None
    for entry in rover.log:
        if entry.get("reset"):
            cur = [entry]
            episodes.append(cur)
        else:
            cur.append(entry)
    for ep, log in zip(tape, episodes, strict=True):
        assert ep.steps == len(log)
        assert ep.team_goal.tolist() == [1, 0, 0]
        np.testing.assert_array_equal(ep.poses[0, 0], log[0]["pose"])
        for t, entry in enumerate(log[1:], start=1):
            np.testing.assert_array_equal(ep.poses[t, 0], entry["pose"])
            assert ep.rewards[t, 0] == entry["reward"]
            assert ep.done[t, 0] == entry["done"]
            np.testing.assert_array_equal(ep.actions[t, 0], entry["action"])
        assert (ep.channels["speed_cmd"] == 0.5).all()
        assert ep.outcome["return"] == pytest.approx(sum(e["reward"] for e in log[1:]))


def test_wrapped_environment_passes_the_gymnasium_checker(tmp_path):
    # source: Gymnasium's own checker (gymnasium.utils.env_checker.check_env). It notes,
    # as a warning, that it was handed a wrapper; every other warning still fails the test.
    env = RecordEnv(Rover(), tmp_path / "c.tape", one_agent_scene(), poses="pose")
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=".*is different from the unwrapped version")
        check_env(env, skip_render_check=True)
    env.close()
    assert len(open_tape(tmp_path / "c.tape")) >= 1


def test_several_agents_from_a_dict_environment(tmp_path):
    import gymnasium
    from gymnasium import spaces

    class Pair(gymnasium.Env):
        """Two agents in one Gymnasium env, observations keyed by agent name."""

        def __init__(self):
            box = spaces.Box(-20.0, 20.0, shape=(3,), dtype=np.float64)
            self.observation_space = spaces.Dict({"r0": box, "r1": box})
            self.action_space = spaces.Dict({"r0": spaces.Discrete(3), "r1": spaces.Discrete(3)})
            self.dt = 0.5
            self.p = {}

        def reset(self, *, seed=None, options=None):
            super().reset(seed=seed)
            self.p = {"r0": np.array([1.0, 1.0, 0.0]), "r1": np.array([2.0, 1.0, 0.0])}
            self.t = 0
            return {k: v.copy() for k, v in self.p.items()}, {}

        def step(self, action):
            self.t += 1
            for k in self.p:
                self.p[k] = self.p[k] + [0.2 * action[k], 0.0, 0.0]
            return {k: v.copy() for k, v in self.p.items()}, 1.5, self.t >= 4, False, {}

    env = RecordEnv(Pair(), tmp_path / "p.tape", box_scene(), poses=lambda e: e.p)
    env.reset(seed=0)
    for _ in range(4):
        env.step({"r0": 1, "r1": 2})
    env.close()
    ep = open_tape(tmp_path / "p.tape").episode(0)
    assert ep.poses[:, 0, 0].tolist() == pytest.approx([1.0, 1.2, 1.4, 1.6, 1.8])
    assert ep.poses[:, 1, 0].tolist() == pytest.approx([2.0, 2.4, 2.8, 3.2, 3.6])
    assert ep.rewards is None and ep.channels["team_reward"].tolist() == [0, 1.5, 1.5, 1.5, 1.5]
    assert ep.actions[1:, :, 0].tolist() == [[1, 2]] * 4


def test_a_scene_with_several_agents_needs_a_mapping(tmp_path):
    with pytest.raises(RecordError, match="agent_ids"):
        RecordEnv(Rover(), tmp_path / "m.tape", box_scene(agents=2), poses="pose")
