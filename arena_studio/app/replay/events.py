"""The events of one episode for the timeline, from ``core.events.episode_events``.

That list is the reference (the same one ``arena-studio stats`` reports); the timeline only
turns it into marks and keeps the first :data:`MAX_EVENTS`.
"""

from __future__ import annotations

from typing import Any

from arena_studio.app.replay.prepared import EventMark, event_marks
from arena_studio.core.analysis.events import episode_events
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode

MAX_EVENTS = 5000  # beyond this the timeline would be a solid bar; keep the first ones


def episode_event_marks(
    scene: Scene, episode: Episode, metrics: Any = None
) -> tuple[EventMark, ...]:
    return event_marks(scene, episode_events(scene, episode, metrics))[:MAX_EVENTS]
