"""Small environments written for the recording tests, with kinematics of their own.

``Herd`` follows PettingZoo's Parallel API (agents named after the scene's agents, each
moving a fixed distance per step in one of four directions, some finishing early);
``Rover`` follows Gymnasium's ``Env`` API (one agent, Euler-integrated unicycle). Both keep a
log of exactly what they returned, for the tests to compare a tape against.
"""

from __future__ import annotations

import functools
import math
from typing import ClassVar

import gymnasium
import numpy as np
from gymnasium import spaces
from pettingzoo.utils.env import ParallelEnv

MOVES = np.array([[0.0, 0.0], [1.0, 0.0], [-1.0, 0.0], [0.0, 1.0], [0.0, -1.0]])


class Herd(ParallelEnv):
    """Agents start in a row and move 0.3 m a step; one that gets above y = 3 is done."""

    metadata: ClassVar[dict] = {"name": "herd_v0", "render_modes": []}

    def __init__(self, agents: int = 3, max_steps: int = 25, step_size: float = 0.3) -> None:
        self.possible_agents = [f"r{i}" for i in range(agents)]
        self.agents: list[str] = []
        self.max_steps = max_steps
        self.step_size = step_size
        self.dt = 0.2
        self.poses = np.zeros((agents, 3))  # updated in place every step, on purpose
        self.log: list[dict] = []  # one entry per reset/step: what the env returned

    @functools.cache  # noqa: B019 - PettingZoo wants the same space object
    def observation_space(self, agent: str) -> spaces.Space:
        return spaces.Box(-50.0, 50.0, shape=(3,), dtype=np.float64)

    @functools.cache  # noqa: B019
    def action_space(self, agent: str) -> spaces.Space:
        return spaces.Discrete(5)

    def reset(self, seed=None, options=None):
        self.rng = np.random.default_rng(seed)
        self.agents = list(self.possible_agents)
        self.t = 0
        n = len(self.possible_agents)
        self.poses[:] = 0.0
        self.poses[:, 0] = 1.0 + np.arange(n) + self.rng.uniform(0, 0.2, n)
        self.poses[:, 1] = 1.0
        self.log.append({"reset": True, "poses": self.poses.copy()})
        obs = {a: self.poses[i].copy() for i, a in enumerate(self.possible_agents)}
        return obs, {a: {} for a in self.agents}

    def step(self, actions):
        self.t += 1
        rewards, term, trunc, obs, infos = {}, {}, {}, {}, {}
        for a in list(self.agents):
            i = self.possible_agents.index(a)
            move = MOVES[int(actions.get(a, 0))]
            self.poses[i, :2] += self.step_size * move
            if move.any():
                self.poses[i, 2] = math.atan2(move[1], move[0])
            rewards[a] = float(-abs(self.poses[i, 1] - 3.0))
            term[a] = bool(self.poses[i, 1] > 3.0)
            trunc[a] = self.t >= self.max_steps
            obs[a] = self.poses[i].copy()
            infos[a] = {"pose": self.poses[i].copy(), "energy": float(self.t)}
        self.agents = [a for a in self.agents if not (term[a] or trunc[a])]
        self.log.append(
            {
                "poses": self.poses.copy(),
                "rewards": dict(rewards),
                "done": {a: term[a] or trunc[a] for a in rewards},
                "actions": dict(actions),
            }
        )
        return obs, rewards, term, trunc, infos

    def close(self) -> None:
        pass


class Rover(gymnasium.Env):
    """One unicycle: action in [-1, 1]^2 scaled to v (m/s) and w = 2 * a1 (rad/s), Euler step
    of dt = 0.1 s."""

    metadata: ClassVar[dict] = {"render_modes": []}

    def __init__(self, max_steps: int = 30) -> None:
        self.observation_space = spaces.Box(-100.0, 100.0, shape=(3,), dtype=np.float64)
        self.action_space = spaces.Box(-1.0, 1.0, shape=(2,), dtype=np.float64)
        self.max_steps = max_steps
        self.dt = 0.1
        self.pose = np.zeros(3)
        self.log: list[dict] = []

    def reset(self, *, seed=None, options=None):
        super().reset(seed=seed)
        self.pose = np.array([2.0, 2.0, 0.0]) + self.np_random.uniform(-0.5, 0.5, 3)
        self.t = 0
        self.log.append({"reset": True, "pose": self.pose.copy()})
        return self.pose.copy(), {"pose": self.pose.copy()}

    def step(self, action):
        v, w = np.clip(np.asarray(action, dtype=np.float64), -1.0, 1.0) * [1.0, 2.0]
        x, y, h = self.pose
        self.pose = np.array(
            [x + v * math.cos(h) * self.dt, y + v * math.sin(h) * self.dt, h + w * self.dt]
        )
        self.t += 1
        reward = float(-np.hypot(self.pose[0] - 5.0, self.pose[1] - 5.0))
        terminated = bool(reward > -0.5)
        truncated = self.t >= self.max_steps
        self.log.append(
            {
                "pose": self.pose.copy(),
                "reward": reward,
                "done": terminated or truncated,
                "action": np.array(action, float),
            }
        )
        return self.pose.copy(), reward, terminated, truncated, {"pose": self.pose.copy()}
