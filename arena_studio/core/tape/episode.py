"""One recorded episode as numpy arrays: what the tape reader returns and viewers draw.

Arrays are columnar over time: ``poses[t, a] = (x, y, heading)`` of agent ``a`` at step ``t``
(time ``t * dt``). Optional per-step data is ``None`` when the simulator did not record it.
"""

from __future__ import annotations

import bisect
from dataclasses import dataclass, field
from typing import Any

import numpy as np

#: role changes of one agent: sorted ``(step, label)`` pairs; the label holds from that step on
RoleTimeline = tuple[tuple[int, str], ...]


@dataclass(frozen=True, eq=False)
class Episode:
    index: int
    dt: float
    poses: np.ndarray  # (T, A, 3) float64
    team_goal: np.ndarray | None = None  # (L,) uint8 multi-hot, or None
    pursued_goals: tuple[np.ndarray | None, ...] = ()  # per agent: (L,) uint8 or None
    roles: tuple[RoleTimeline, ...] = ()  # per agent; empty tuple when the tape has none
    rewards: np.ndarray | None = None  # (T, A) float
    actions: np.ndarray | None = None  # (T, A, K) float
    done: np.ndarray | None = None  # (T, A) bool
    channels: dict[str, np.ndarray] = field(default_factory=dict)  # name -> (T,) or (T, A)
    messages: tuple[Any, ...] = ()  # pre-episode messages: free small values
    outcome: dict[str, Any] | None = None  # simulator-reported outcome, free small values
    complete: bool = True  # False when recovered from a cut tape before the episode ended

    @classmethod
    def _of_fields(
        cls,
        index: int,
        dt: float,
        poses: np.ndarray,
        team_goal: np.ndarray | None,
        pursued_goals: tuple[np.ndarray | None, ...],
        roles: tuple[RoleTimeline, ...],
        rewards: np.ndarray | None,
        actions: np.ndarray | None,
        done: np.ndarray | None,
        channels: dict[str, np.ndarray],
        messages: tuple[Any, ...],
        outcome: dict[str, Any] | None,
        complete: bool,
    ) -> Episode:
        """``Episode(...)`` with every field given in order, for the tape reader (thousands a
        second): the generated frozen ``__init__`` sets each field through
        ``object.__setattr__``, about 2 us an episode; filling the instance dict directly
        gives the same object (no __post_init__ to run; tests/core/test_episode_fields.py
        checks the two field for field)."""
        ep = object.__new__(cls)
        ep.__dict__.update(
            index=index,
            dt=dt,
            poses=poses,
            team_goal=team_goal,
            pursued_goals=pursued_goals,
            roles=roles,
            rewards=rewards,
            actions=actions,
            done=done,
            channels=channels,
            messages=messages,
            outcome=outcome,
            complete=complete,
        )
        return ep

    @property
    def steps(self) -> int:
        return int(self.poses.shape[0])

    @property
    def agent_count(self) -> int:
        return int(self.poses.shape[1])

    @property
    def duration(self) -> float:
        """Seconds from the first to the last recorded step."""
        return max(self.steps - 1, 0) * self.dt

    def role_at(self, agent: int, step: int) -> str | None:
        """The role label agent ``agent`` carries at ``step`` (None before its first label)."""
        if agent >= len(self.roles):
            return None
        timeline = self.roles[agent]
        i = bisect.bisect_right([s for s, _ in timeline], step) - 1
        return timeline[i][1] if i >= 0 else None

    def step_at(self, time: float) -> int:
        """Nearest recorded step to ``time`` seconds, clamped to the episode."""
        if self.steps == 0:
            return 0
        return int(min(max(round(time / self.dt), 0), self.steps - 1))
