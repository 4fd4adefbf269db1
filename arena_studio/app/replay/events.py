"""The events of one episode for the timeline, from ``core.events.episode_events``.

That list is the reference (the same one ``arena-studio stats`` reports); the timeline only
turns it into marks and keeps the first :data:`MAX_EVENTS`.
"""

from __future__ import annotations

from typing import Any

from arena_studio.app.replay.prepared import EventMark, event_marks
from arena_studio.core.analysis.events import episode_events
from arena_studio.core.analysis.messages import episode_messages, value_text
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.core.wording import LandmarkNames

MAX_EVENTS = 5000  # beyond this the timeline would be a solid bar; keep the first ones


def episode_event_marks(
    scene: Scene, episode: Episode, metrics: Any = None
) -> tuple[EventMark, ...]:
    names = LandmarkNames.of(scene)  # the timeline names landmarks as the canvas does
    marks = message_marks(scene, episode) + event_marks(
        scene, episode_events(scene, episode, metrics, names)
    )
    return marks[:MAX_EVENTS]


def message_marks(scene: Scene, episode: Episode) -> tuple[EventMark, ...]:
    """One mark per structured message: before the episode at step 0, else at its step."""
    ids = [a.id for a in scene.agents]
    last = max(episode.steps - 1, 0)
    out = []
    for m in episode_messages(episode, ids, strict=False):
        to = "everyone" if m.receiver is None else m.receiver
        when = "before the episode" if m.step is None else f"at step {m.step}"
        out.append(
            EventMark(
                step=0 if m.step is None else min(m.step, last),
                kind="message",
                agent=ids.index(m.sender),
                text=f"{m.sender} to {to}: {value_text(m.value)} ({when})",
            )
        )
    return tuple(out)
