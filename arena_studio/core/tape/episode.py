"""One recorded episode as numpy arrays: what the tape reader returns and viewers draw.

Arrays are columnar over time: ``poses[t, a] = (x, y, heading)`` of agent ``a`` at step ``t``
(time ``t * dt``). Optional per-step data is ``None`` when the simulator did not record it.
"""

from __future__ import annotations

import bisect
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any, ClassVar

import numpy as np

from arena_studio.core._frozen import fast_maker

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
    rewards: np.ndarray | None = None  # (T, A) float per agent, or (T,) one team reward
    actions: np.ndarray | None = None  # (T, A, K) float64, or int64 for whole numbers
    done: np.ndarray | None = None  # (T, A) bool
    channels: dict[str, np.ndarray] = field(default_factory=dict)  # (T,), (T, A) or (T, A, K)
    messages: tuple[Any, ...] = ()  # pre-episode messages: free small values
    outcome: dict[str, Any] | None = None  # simulator-reported outcome, free small values
    complete: bool = True  # False when recovered from a cut tape before the episode ended
    # per agent: (L,) uint8, its own share of the team goal's targets, or None; () when absent
    assigned_targets: tuple[np.ndarray | None, ...] = ()
    # (L, 2) float64 where this episode's landmarks stood, or None: the scene's positions
    landmark_positions: np.ndarray | None = None

    #: ``Episode(...)`` with every field given in order, for the tape reader (thousands a
    #: second); tests/core/tape/test_episode_fields.py checks it against the generated __init__
    _of_fields: ClassVar[Callable[..., Episode]]

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


Episode._of_fields = fast_maker(Episode)


__all__ = ["Episode", "RoleTimeline"]
