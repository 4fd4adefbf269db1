"""Record a PettingZoo ``ParallelEnv`` to tapes without changing what it returns.

::

    env = RecordParallelEnv(MyEnv(), "runs/train.tape", "arena.scene.json",
                            poses=lambda e: e.poses, dt=0.1)

Step 0 of a recorded episode is the state after ``reset`` (reward 0, not done, no action);
step t is the state after the t-th ``step``, with that step's rewards, ``done`` = terminated
or truncated, and the actions given to it (numeric action spaces only). An agent that
finishes early keeps its last pose, reward 0 and ``done`` True until the episode ends; the
episode ends when the environment has no agents left (or at the next ``reset``, marked
``cut``). ``close()`` finishes the tape.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

import numpy as np
from pettingzoo.utils.env import ParallelEnv

from arena_studio.core.scene import Scene
from arena_studio.record.session import DEFAULT_FLUSH_STEPS, RecordingSession, scene_of
from arena_studio.record.sources import (
    RecordError,
    Source,
    action_width,
    channel_value,
    goal_vector,
    match_agents,
    message_list,
    per_agent,
    pursued_vectors,
    resolve,
)


def env_dt(env: Any, dt: float | None) -> float:
    """The time step: given, or the environment's own ``dt`` attribute."""
    if dt is None:
        dt = getattr(getattr(env, "unwrapped", env), "dt", None)
    if dt is None or not isinstance(dt, int | float) or not np.isfinite(dt) or dt <= 0:
        raise RecordError(
            "dt: give the environment's time step in seconds (dt=...); the environment has "
            "no usable 'dt' attribute"
        )
    return float(dt)


class RecordParallelEnv(ParallelEnv):  # type: ignore[misc]
    """A PettingZoo Parallel environment that also writes its episodes to tapes.

    ``poses`` is ``fn(env) -> (A, 3)`` (scene agent order) or ``{agent: (x, y, heading)}``,
    or the key of each agent's ``infos`` entry holding its pose. ``team_goal`` and
    ``pursued_goals`` (read after each reset) and ``channels`` (read every step) take a
    callable on the environment or an ``infos`` key the same way; so does ``messages`` (read
    after each reset: a list of ``{"from", "to", "step", "value"}``, per-agent lists joined in
    agent order, environment names turned into scene ids). Environment agent names
    must equal the scene's agent ids unless ``agent_ids`` maps them.
    """

    def __init__(
        self,
        env: Any,
        path: str | Path,
        scene: Scene | str | Path,
        *,
        poses: Source,
        dt: float | None = None,
        agent_ids: Mapping[str, str] | None = None,
        team_goal: Source | None = None,
        pursued_goals: Source | None = None,
        messages: Source | None = None,
        channels: Mapping[str, Source] | None = None,
        every: int = 1,
        trigger: Callable[[int], bool] | None = None,
        episodes_per_tape: int | None = None,
        flush_steps: int = DEFAULT_FLUSH_STEPS,
        fsync: bool = False,
        metadata: Mapping[str, Any] | None = None,
    ) -> None:
        self.env = env
        self.scene = scene_of(scene)
        self._names = match_agents(
            self.scene, list(env.possible_agents), agent_ids, "RecordParallelEnv"
        )
        self._sources = {
            "poses": poses,
            "team_goal": team_goal,
            "pursued": pursued_goals,
            "messages": messages,
        }
        self._channels = dict(channels or {})
        self.recorder = RecordingSession(
            path,
            self.scene,
            env_dt(env, dt),
            every=every,
            trigger=trigger,
            episodes_per_tape=episodes_per_tape,
            flush_steps=flush_steps,
            fsync=fsync,
            metadata=metadata,
        )
        widths = {action_width(env.action_space(n)) for n in self._names}
        self._action_k = widths.pop() if len(widths) == 1 else None
        self._last = np.zeros((len(self._names), 3))
        self._done = np.zeros(len(self._names), dtype=bool)
        self._returns = np.zeros(len(self._names))

    # -- what PettingZoo asks of a ParallelEnv, passed through --------------------------
    @property
    def metadata(self) -> dict[str, Any]:
        return dict(getattr(self.env, "metadata", {}))

    @property
    def possible_agents(self) -> list[Any]:
        return list(self.env.possible_agents)

    @property
    def agents(self) -> list[Any]:
        return list(self.env.agents)

    @property
    def unwrapped(self) -> Any:
        return self.env.unwrapped

    def observation_space(self, agent: Any) -> Any:
        return self.env.observation_space(agent)

    def action_space(self, agent: Any) -> Any:
        return self.env.action_space(agent)

    def render(self) -> Any:
        return self.env.render()

    def state(self) -> Any:
        return self.env.state()

    def __getattr__(self, name: str) -> Any:
        if name.startswith("_") or name == "env":
            raise AttributeError(name)
        return getattr(self.env, name)

    # -- recording -----------------------------------------------------------------------
    def reset(self, seed: int | None = None, options: dict[str, Any] | None = None) -> Any:
        obs, infos = self.env.reset(seed=seed, options=options)
        what = f"episode {self.recorder.episodes_seen}"
        names = self._names
        goal = goal_vector(
            self._first(resolve(self._sources["team_goal"], self.env, infos, names, True)),
            self.scene,
            f"{what}: team_goal",
        )
        pursued = pursued_vectors(
            resolve(self._sources["pursued"], self.env, infos, names, True),
            self.scene,
            names,
            f"{what}: pursued_goals",
        )
        said = message_list(
            resolve(self._sources["messages"], self.env, infos, names, True),
            self.scene,
            names,
            f"{what}: messages",
        )
        if self.recorder.begin(goal, pursued, said):
            self._done[:] = False
            self._returns[:] = 0.0
            self._last = self._poses(infos, f"{what} step 0: poses", first=True)
            a = len(names)
            actions = None if self._action_k is None else np.full((a, self._action_k), np.nan)
            self.recorder.step(
                self._last, np.zeros(a), self._done, actions, self._channel_values(infos, what)
            )
        return obs, infos

    def step(self, actions: dict[Any, Any]) -> Any:
        obs, rewards, terminated, truncated, infos = self.env.step(actions)
        if self.recorder.recording:
            self._record(actions, rewards, terminated, truncated, infos)
            if not self.env.agents:
                ids = [a.id for a in self.scene.agents]
                self.recorder.end({"returns": dict(zip(ids, self._returns.tolist(), strict=True))})
        return obs, rewards, terminated, truncated, infos

    def close(self) -> None:
        self.recorder.close()
        self.env.close()

    def _record(
        self,
        actions: Mapping[Any, Any],
        rewards: Mapping[Any, Any],
        terminated: Mapping[Any, Any],
        truncated: Mapping[Any, Any],
        infos: Mapping[Any, Any],
    ) -> None:
        names = self._names
        what = f"episode {self.recorder.episodes_seen - 1} step {self.recorder._steps}"
        self._last = self._poses(infos, f"{what}: poses")
        reward = per_agent(rewards, names, 1, f"{what}: rewards", np.zeros(len(names)))[:, 0]
        self._returns += reward
        for k, name in enumerate(names):
            if terminated.get(name) or truncated.get(name):
                self._done[k] = True
        acts = None
        if self._action_k is not None:
            given = {n: actions[n] for n in names if n in actions}
            missing = np.full((len(names), self._action_k), np.nan)
            acts = per_agent(given, names, self._action_k, f"{what}: actions", missing)
        self.recorder.step(self._last, reward, self._done, acts, self._channel_values(infos, what))

    def _poses(self, infos: Mapping[Any, Any], what: str, first: bool = False) -> np.ndarray:
        value = resolve(self._sources["poses"], self.env, infos, self._names, True)
        if value is None:
            raise RecordError(f"{what}: no poses (the poses source gave nothing)")
        if first and isinstance(value, Mapping):
            lost = [n for n in self._names if n not in value]
            if lost:
                raise RecordError(f"{what}: no pose for agents {lost} after reset")
        return per_agent(value, self._names, 3, what, self._last)

    def _channel_values(self, infos: Mapping[Any, Any], what: str) -> dict[str, np.ndarray] | None:
        if not self._channels:
            return None
        out = {}
        for name, source in self._channels.items():
            value = resolve(source, self.env, infos, self._names, True)
            if isinstance(source, str) and value is None:
                value = {}  # per-agent infos without the key yet: one NaN per agent
            out[name] = channel_value(value, self._names, f"{what}: channel {name!r}")
        return out

    @staticmethod
    def _first(value: Any) -> Any:
        """A team goal read from per-agent infos: every agent carries the same one."""
        if isinstance(value, Mapping):
            return next(iter(value.values()), None)
        return value


__all__ = ["RecordParallelEnv", "env_dt"]
