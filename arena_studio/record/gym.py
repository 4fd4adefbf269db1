"""Record a Gymnasium ``Env`` to tapes without changing what it returns.

::

    env = RecordEnv(gymnasium.make("MyRover-v0"), "runs/train.tape", "arena.scene.json",
                    poses=lambda e: e.unwrapped.pose, dt=0.05)

One agent: the scene's only agent (or the one ``agent_ids`` names). Several agents driven by
one environment (dict-of-agents observations): the keys of a ``Dict`` observation space
that are scene agent ids, or the environment names ``agent_ids`` maps to scene ids; poses
then come as ``(A, 3)`` in scene order or ``{agent: pose}``. Step 0 is the state after
``reset``; step t the state after the t-th ``step`` with its reward (per agent for one
agent; for several, the team reward goes to the channel ``team_reward``), the action (numeric
spaces) and ``done`` = terminated or truncated. Vectorised environments: wrap each
sub-environment (one tape each), e.g. ``gymnasium.vector.SyncVectorEnv([lambda i=i:
RecordEnv(make(), f"run-{i}.tape", ...) for i in range(n)])``.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

import gymnasium
import numpy as np
from gymnasium import spaces

from arena_studio.core.scene import Scene
from arena_studio.record.parallel import env_dt
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


def agent_names(env: Any, scene: Scene, agent_ids: Mapping[str, str] | None) -> list[str]:
    """The environment's agent names in scene order (see the module docstring)."""
    if agent_ids is not None:
        return match_agents(scene, list(agent_ids), agent_ids, "RecordEnv")
    ids = [a.id for a in scene.agents]
    space = getattr(env, "observation_space", None)
    if isinstance(space, spaces.Dict) and len(ids) > 1:
        keys = [k for k in space.spaces if k in ids]
        return match_agents(scene, keys, None, "RecordEnv")
    if len(ids) == 1:
        return ids
    raise RecordError(
        f"RecordEnv: scene '{scene.name}' has {len(ids)} agents; say which environment agent "
        "is which with agent_ids={env_name: scene_id, ...}"
    )


class RecordEnv(gymnasium.Wrapper):
    """A Gymnasium environment that also writes its episodes to tapes.

    ``poses``, ``team_goal``, ``pursued_goals``, ``messages`` and ``channels`` are callables
    on the wrapped environment or keys of the ``info`` dict, as for
    :class:`RecordParallelEnv`.
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
        super().__init__(env)
        self.scene = scene_of(scene)
        self._names = agent_names(env, self.scene, agent_ids)
        self._single = len(self._names) == 1
        self._sources = {
            "poses": poses,
            "team_goal": team_goal,
            "pursued": pursued_goals,
            "messages": messages,
        }
        self._channels = dict(channels or {})
        if not self._single:
            self._channels.setdefault("team_reward", _TEAM_REWARD)
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
        self._action_k = self._action_width(env.action_space)
        a = len(self._names)
        self._last = np.zeros((a, 3))
        self._done = np.zeros(a, dtype=bool)
        self._return = 0.0
        self._reward = 0.0

    def _action_width(self, space: Any) -> int | None:
        if self._single:
            return action_width(space)
        if isinstance(space, spaces.Dict) and all(n in space.spaces for n in self._names):
            widths = {action_width(space.spaces[n]) for n in self._names}
            return widths.pop() if len(widths) == 1 else None
        return None

    def reset(self, *, seed: int | None = None, options: dict[str, Any] | None = None) -> Any:
        obs, info = self.env.reset(seed=seed, options=options)
        what = f"episode {self.recorder.episodes_seen}"
        names = self._names
        goal = goal_vector(
            resolve(self._sources["team_goal"], self.env, info, names, False),
            self.scene,
            f"{what}: team_goal",
        )
        raw = resolve(self._sources["pursued"], self.env, info, names, False)
        if self._single and raw is not None and not isinstance(raw, Mapping):
            raw = [raw]
        pursued = pursued_vectors(raw, self.scene, names, f"{what}: pursued_goals")
        said = message_list(
            resolve(self._sources["messages"], self.env, info, names, False),
            self.scene,
            names,
            f"{what}: messages",
        )
        if self.recorder.begin(goal, pursued, said):
            self._done[:] = False
            self._return = self._reward = 0.0
            self._last = self._poses(info, f"{what} step 0: poses")
            a = len(names)
            actions = None if self._action_k is None else np.full((a, self._action_k), np.nan)
            rewards = np.zeros(a) if self._single else None
            chans = self._channel_values(info, what)
            self.recorder.step(self._last, rewards, self._done, actions, chans)
        return obs, info

    def step(self, action: Any) -> Any:
        obs, reward, terminated, truncated, info = self.env.step(action)
        if self.recorder.recording:
            what = f"episode {self.recorder.episodes_seen - 1} step {self.recorder._steps}"
            self._last = self._poses(info, f"{what}: poses")
            self._reward = float(reward)
            self._return += self._reward
            if terminated or truncated:
                self._done[:] = True
            rewards = np.array([self._reward]) if self._single else None
            chans = self._channel_values(info, what)
            self.recorder.step(self._last, rewards, self._done, self._actions(action, what), chans)
            if terminated or truncated:
                self.recorder.end(
                    {
                        "return": self._return,
                        "terminated": bool(terminated),
                        "truncated": bool(truncated),
                    }
                )
        return obs, reward, terminated, truncated, info

    def close(self) -> None:
        self.recorder.close()
        super().close()

    def _actions(self, action: Any, what: str) -> np.ndarray | None:
        if self._action_k is None:
            return None
        a, k = len(self._names), self._action_k
        value = {self._names[0]: action} if self._single else action
        return per_agent(value, self._names, k, f"{what}: action", np.full((a, k), np.nan))

    def _poses(self, info: Mapping[str, Any], what: str) -> np.ndarray:
        value = resolve(self._sources["poses"], self.env, info, self._names, False)
        if value is None:
            raise RecordError(f"{what}: no poses (the poses source gave nothing)")
        return per_agent(value, self._names, 3, what, self._last)

    def _channel_values(self, info: Mapping[str, Any], what: str) -> dict[str, np.ndarray] | None:
        if not self._channels:
            return None
        out = {}
        for name, source in self._channels.items():
            if source is _TEAM_REWARD:
                out[name] = np.asarray(self._reward)
                continue
            value = resolve(source, self.env, info, self._names, False)
            out[name] = channel_value(value, self._names, f"{what}: channel {name!r}")
        return out


def _team_reward(env: Any) -> None:  # marker: the wrapper fills in the step's reward itself
    return None


_TEAM_REWARD: Callable[[Any], Any] = _team_reward


__all__ = ["RecordEnv", "agent_names"]
