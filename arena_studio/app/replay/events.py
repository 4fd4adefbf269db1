"""The events of one episode for the timeline: from core.events, or read off the episode.

``core.events.episode_events`` is the reference list (the same one ``arena-studio stats``
reports). When a checkout does not have it, the viewer reads the same facts off data it
already has: entering/leaving a reach radius (the coverage the frame painter uses), contact
onsets, tape role changes, and the success and diagnosis steps from the episode metrics.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ...core.episode import Episode
from ...core.scene import Scene
from .prepared import EventMark, event_marks

MAX_EVENTS = 5000  # beyond this the timeline would be a solid bar; keep the first ones


def episode_event_marks(
    scene: Scene, episode: Episode, metrics: Any = None
) -> tuple[EventMark, ...]:
    try:
        from ...core.events import episode_events
    except ImportError:
        episode_events = None
    if episode_events is not None:
        try:
            events = (
                episode_events(scene, episode, metrics)
                if metrics is not None
                else (episode_events(scene, episode))
            )
        except TypeError:  # signature without the metrics argument
            events = episode_events(scene, episode)
        return event_marks(scene, events)[:MAX_EVENTS]
    return observed_events(scene, episode, metrics)[:MAX_EVENTS]


def observed_events(scene: Scene, episode: Episode, metrics: Any = None) -> tuple[EventMark, ...]:
    """Events read directly off the episode (see the module docstring)."""
    from ...render.episode_cache import _coverage

    xy = np.asarray(episode.poses, dtype=np.float64)[..., :2]
    marks: list[EventMark] = []
    agent_ids = [a.id for a in scene.agents]
    labels = [lm.label or lm.id for lm in scene.landmarks]

    def who(a: int) -> str:
        return agent_ids[a] if a < len(agent_ids) else f"agent {a + 1}"

    if len(scene.landmarks) and episode.steps:
        cover = _coverage(scene, xy)  # (T, A, L)
        change = np.diff(cover.astype(np.int8), axis=0)
        for t, a, lm in np.argwhere(change != 0):
            entered = change[t, a, lm] > 0
            marks.append(
                EventMark(
                    step=int(t) + 1,
                    kind="reached" if entered else "left",
                    agent=int(a),
                    landmark=int(lm),
                    text=f"{who(int(a))} {'reached' if entered else 'left'} {labels[int(lm)]}",
                )
            )
        for a, lm in np.argwhere(cover[0]):
            marks.append(
                EventMark(
                    0, "reached", int(a), int(lm), f"{who(int(a))} starts on {labels[int(lm)]}"
                )
            )
    for a, timeline in enumerate(episode.roles):
        for step, label in timeline[1:]:
            marks.append(EventMark(int(step), "role", a, None, f"{who(a)} is now {label}"))
    for t, i, j in getattr(metrics, "collision_pairs", ()) or ():
        marks.append(
            EventMark(int(t), "collision", int(i), None, f"{who(int(i))} and {who(int(j))} touched")
        )
    step = getattr(metrics, "success_step", None)
    if step is not None:
        marks.append(EventMark(int(step), "success", None, None, "team goal reached"))
    d_step = getattr(metrics, "diagnosis_step", None)
    if d_step is not None:
        text = getattr(metrics, "diagnosis", None) or "diagnosis"
        marks.append(EventMark(int(d_step), "diagnosis", None, None, str(text)))
    kinds = ("reached", "left", "success", "collision", "role", "diagnosis", "other")
    marks.sort(key=lambda m: (m.step, kinds.index(m.kind)))
    return tuple(marks)
