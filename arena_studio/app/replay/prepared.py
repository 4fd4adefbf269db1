"""Per-episode arrays the viewer needs, computed once when an episode is selected.

Scrubbing then only indexes these arrays (speed at a step, reward so far, distance to a
target), so a frame never re-decodes or recomputes the episode. Built off the UI thread by
the loader; plain numpy, no Qt.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.core.wording import LandmarkNames

#: event kinds the timeline knows how to draw; anything else is drawn as "other"
EVENT_KINDS: tuple[str, ...] = (
    "reached",
    "left",
    "success",
    "collision",
    "role",
    "diagnosis",
    "mismatch",  # the recording disagrees with the scene (core.tape_checks)
    "message",  # an agent said something (before the episode: at step 0)
    "other",
)


@dataclass(frozen=True)
class EventMark:
    """One thing that happened in an episode, as the timeline and the event list show it."""

    step: int
    kind: str  # one of EVENT_KINDS
    agent: int | None = None
    landmark: int | None = None
    text: str = ""


def normalise_kind(kind: str) -> str:
    """Map the kind names the metrics module uses onto the timeline's glyph set."""
    k = str(kind).lower()
    for key, name in (
        ("diagnos", "diagnosis"),
        ("success", "success"),
        ("free-space", "collision"),  # a centre leaving free space: contact with a wall
        ("collision", "collision"),
        ("collide", "collision"),
        ("role", "role"),
        ("left", "left"),
        ("leave", "left"),
        ("exit", "left"),
        ("reach", "reached"),
        ("enter", "reached"),
        ("arriv", "reached"),
    ):
        if key in k:
            return name
    return "other"


def _as_index(value: Any, ids: tuple[str, ...]) -> int | None:
    """Agents/landmarks may come as indices or ids; the viewer wants indices."""
    if value is None:
        return None
    if isinstance(value, int | np.integer):
        return int(value)
    try:
        return ids.index(str(value))
    except ValueError:
        return None


def event_marks(scene: Scene, events: Any) -> tuple[EventMark, ...]:
    """Convert ``Event(step, kind, agent, landmark, text)`` objects into sorted marks."""
    agent_ids = tuple(a.id for a in scene.agents)
    landmark_ids = tuple(lm.id for lm in scene.landmarks)
    marks = [
        EventMark(
            step=int(ev.step),
            kind=normalise_kind(ev.kind),
            agent=_as_index(getattr(ev, "agent", None), agent_ids),
            landmark=_as_index(getattr(ev, "landmark", None), landmark_ids),
            text=str(getattr(ev, "text", "") or ev.kind),
        )
        for ev in events
    ]
    marks.sort(key=lambda m: (m.step, EVENT_KINDS.index(m.kind)))
    return tuple(marks)


def goal_targets(goal: np.ndarray | None) -> tuple[int, ...]:
    if goal is None:
        return ()
    return tuple(int(i) for i in np.flatnonzero(np.asarray(goal)))


def goal_label(scene: Scene, goal: np.ndarray | None) -> str:
    """A goal by its landmark labels, e.g. ``West valve + Pump``; ``-`` for no goal."""
    targets = goal_targets(goal)
    if not targets:
        return "-"
    lms = scene.landmarks
    return LandmarkNames.of(scene).goal([lms[i].id for i in targets if i < len(lms)])


@dataclass(frozen=True, eq=False)
class PreparedEpisode:
    """An episode plus derived per-step arrays, ready for instant scrubbing."""

    episode: Episode
    speeds: np.ndarray  # (T, A) m/s, backward difference (0 at step 0)
    reward_so_far: np.ndarray | None  # (T, A) cumulative reward
    targets: tuple[tuple[int, ...], ...]  # per agent: landmark indices it pursues
    distances: dict[tuple[int, int], np.ndarray]  # (agent, landmark) -> (T,) metres
    events: tuple[EventMark, ...] = ()
    metrics: Any = None  # core.metrics.EpisodeMetrics when available
    extra: dict[str, Any] = field(default_factory=dict)

    @property
    def event_steps(self) -> tuple[int, ...]:
        return tuple(sorted({m.step for m in self.events}))

    def diagnosis_step(self) -> int | None:
        step = getattr(self.metrics, "diagnosis_step", None)
        if step is not None:
            return int(step)
        for mark in self.events:
            if mark.kind == "diagnosis":
                return mark.step
        return None


def prepare_episode(
    scene: Scene,
    episode: Episode,
    events: Any = (),
    metrics: Any = None,
) -> PreparedEpisode:
    """Compute the per-step arrays for ``episode`` (vectorised over steps)."""
    poses = np.asarray(episode.poses, dtype=np.float64)
    steps, agents = poses.shape[0], poses.shape[1]
    speeds = np.zeros((steps, agents))
    if steps > 1:
        step_len = np.hypot(*np.moveaxis(np.diff(poses[:, :, :2], axis=0), -1, 0))
        speeds[1:] = step_len / episode.dt
    reward = None
    if episode.rewards is not None:
        reward = np.cumsum(np.asarray(episode.rewards, dtype=np.float64), axis=0)
        if reward.ndim == 1:  # a team reward: every agent's share of the story is the team's
            reward = np.repeat(reward[:, None], agents, axis=1)
    targets: list[tuple[int, ...]] = []
    team = goal_targets(episode.team_goal)
    for a in range(agents):
        # an agent's own targets: its recorded share of the team goal, else its pursued goal
        own = episode.assigned_targets or episode.pursued_goals
        pursued = own[a] if a < len(own) else None
        targets.append(goal_targets(pursued) if pursued is not None else team)
    distances: dict[tuple[int, int], np.ndarray] = {}
    for a, ts in enumerate(targets):
        for lm in ts:
            if lm >= len(scene.landmarks):
                continue
            lx, ly = scene.landmarks[lm].position
            distances[(a, lm)] = np.hypot(poses[:, a, 0] - lx, poses[:, a, 1] - ly)
    return PreparedEpisode(
        episode=episode,
        speeds=speeds,
        reward_so_far=reward,
        targets=tuple(targets),
        distances=distances,
        events=event_marks(scene, events),
        metrics=metrics,
        extra={
            "who_went_where": _who_went_where(scene, episode, metrics),
            "names": LandmarkNames.of(scene),  # landmarks as every sentence names them
        },
    )


def statement_step(metrics: Any) -> int | None:
    """Where the who-went-where statement is taken: when a success was reached (what the
    agents did after it is not the story), else the end of the episode."""
    step = getattr(metrics, "success_step", None)
    return int(step) if getattr(metrics, "success", False) and step is not None else None


def _who_went_where(scene: Scene, episode: Episode, metrics: Any) -> str:
    """The episode's who-went-where statement, "" when the episode cannot say (a damaged
    goal or pose array is reported elsewhere; the replay still opens)."""
    from arena_studio.core.analysis.who_went_where import who_went_where

    try:
        return who_went_where(scene, episode, statement_step(metrics)).text()
    except (ValueError, IndexError):
        return ""
