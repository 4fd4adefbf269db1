"""What happened when in an episode: the list the replay timeline marks.

Events (kind: meaning) -- all computed from the episode's poses with the same definitions as
:mod:`arena_studio.core.analysis.metrics`:

``reached`` / ``left``  an agent's centre enters / leaves a landmark's reach disc
``success``             the team goal is met under the scene's rule (metrics' success step)
``collision``           two agents start to overlap (``agent`` is the lower index)
``wall-collision``      an agent's centre leaves its free space (touches a wall or obstacle)
``role``                a role label from the tape takes effect (changes after step 0)
``diagnosis``           the step where a failed episode's diagnosis shows
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from arena_studio.core.analysis.diagnosis_words import diagnosis_words
from arena_studio.core.analysis.metrics import EpisodeMetrics, episode_metrics, onsets, outside_mask
from arena_studio.core.scene.model import Scene
from arena_studio.core.sim.observe import coverage
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape.episode_scene import episode_scene
from arena_studio.core.wording import LandmarkNames

KINDS = ("reached", "left", "success", "collision", "wall-collision", "role", "diagnosis")


@dataclass(frozen=True)
class Event:
    step: int
    kind: str
    agent: int | None
    landmark: int | None
    text: str


def episode_events(
    scene: Scene,
    episode: Episode,
    metrics: EpisodeMetrics | None = None,
    names: LandmarkNames | None = None,
) -> list[Event]:
    """Every event of ``episode`` in step order (ties in :data:`KINDS` order). The texts name
    landmarks by id (as ``stats`` writes them) unless ``names`` is given: then by what a
    person reads (the viewer's timeline)."""
    scene = episode_scene(scene, episode)
    m = metrics if metrics is not None else episode_metrics(scene, episode)
    ids = [a.id for a in scene.agents]
    lm_name = [lm.id if names is None else names.name(lm.id) for lm in scene.landmarks]
    goal = m.goal_key if names is None else names.goal(m.goal_key)
    out: list[Event] = []
    cover = coverage(scene, episode.poses[:, :, :2])  # (T, A, L)
    prev = np.concatenate([np.zeros_like(cover[:1]), cover[:-1]], axis=0)
    for t, a, lm in np.argwhere(cover & ~prev):
        out.append(Event(int(t), "reached", int(a), int(lm), f"{ids[a]} reached {lm_name[lm]}"))
    for t, a, lm in np.argwhere(~cover & prev):
        out.append(Event(int(t), "left", int(a), int(lm), f"{ids[a]} left {lm_name[lm]}"))
    if m.success and m.success_step is not None:
        out.append(Event(m.success_step, "success", None, None, f"team goal {goal} met"))
    for t, i, j in m.collision_pairs:
        out.append(Event(t, "collision", i, None, f"{ids[i]} and {ids[j]} collide"))
    for t, a in np.argwhere(onsets(outside_mask(scene, episode))):
        out.append(
            Event(
                int(t),
                "wall-collision",
                int(a),
                None,
                f"{ids[a]} touched a wall or obstacle (left its free space)",
            )
        )
    for a, timeline in enumerate(episode.roles):
        for step, label in timeline:
            if step > 0 and step < episode.steps:
                shown = label if names is None else names.text(label)
                out.append(Event(step, "role", a, None, f"{ids[a]} now {shown}"))
    if m.diagnosis is not None and m.diagnosis_step is not None:
        said = m.diagnosis
        if names is not None:
            said = diagnosis_words(said, names, m.diagnosis_code)
        out.append(Event(m.diagnosis_step, "diagnosis", None, None, said))
    order = {k: i for i, k in enumerate(KINDS)}
    out.sort(key=lambda e: (e.step, order[e.kind], -1 if e.agent is None else e.agent))
    return out


__all__ = ["KINDS", "Event", "episode_events"]
