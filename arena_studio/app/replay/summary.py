"""One row of the episode list: the few numbers a researcher sorts and filters by.

Rows are filled from :func:`arena_studio.core.analysis.metrics.episode_metrics` (the same numbers as
``arena-studio stats``). Whatever metrics do not say stays ``None`` and shows as a dash.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from arena_studio.app.replay.prepared import goal_label, goal_targets
from arena_studio.core.analysis.diagnosis_words import diagnosis_words
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.core.wording import LandmarkNames


@dataclass(frozen=True)
class EpisodeSummary:
    index: int
    goal: tuple[int, ...] | None = None  # team goal landmark indices; None when unknown
    goal_label: str = ""
    kind: str = ""  # "individual" | "cooperative" | "" (no team goal)
    success: bool | None = None
    time_to_success: float | None = None
    par_ratio: float | None = None
    aligned: bool | None = None
    diagnosis: str | None = None  # as a person reads it: landmarks by label
    #: the goal and diagnosis by landmark id, so a search for an id finds the row too
    search_ids: str = ""
    diagnosis_step: int | None = None
    diagnosis_code: str | None = None  # core.analysis.diagnosis.CODES, for a short word
    steps: int | None = None
    loaded: bool = False  # False: placeholder row while metrics are being computed
    damage: str | None = None  # why the episode cannot be read (where and what), else None

    @property
    def failed_cooperative(self) -> bool:
        return self.kind == "cooperative" and self.success is False


def damaged_summary(damage: Any) -> EpisodeSummary:
    """The row of a damaged episode (a core ``Damage`` record): no metrics, only why."""
    place = damage.place
    return EpisodeSummary(
        index=int(damage.episode),
        damage=f"{place}: {damage.reason}" if place else str(damage.reason),
        loaded=True,
    )


def goal_kind(goal: np.ndarray | None) -> str:
    """One target: an individual goal; two or more: a cooperative goal (glossary terms)."""
    n = len(goal_targets(goal))
    if n == 0:
        return ""
    return "individual" if n == 1 else "cooperative"


def _opt_float(value: Any) -> float | None:
    if value is None:
        return None
    try:
        out = float(value)
    except (TypeError, ValueError):
        return None
    return out if np.isfinite(out) else None


def _opt_bool(value: Any) -> bool | None:
    return None if value is None else bool(value)


def summary_from_metrics(scene: Scene, episode: Episode, metrics: Any) -> EpisodeSummary:
    """Build a row from an ``EpisodeMetrics`` (read by attribute name, per api_contracts)."""
    names = LandmarkNames.of(scene)
    diag, code = getattr(metrics, "diagnosis", None), getattr(metrics, "diagnosis_code", None)
    diag_step = getattr(metrics, "diagnosis_step", None)
    code = getattr(metrics, "diagnosis_code", None)
    # the goal the metrics judged (the team goal, or the shared pursued goal when none)
    goal = getattr(metrics, "goal", None)
    if goal is None and episode.team_goal is not None:
        goal = goal_targets(episode.team_goal)
    vector = None
    if goal:
        vector = np.zeros(len(scene.landmarks), dtype=np.uint8)
        vector[list(goal)] = 1
    return EpisodeSummary(
        index=int(episode.index),
        goal=None if not goal else tuple(int(i) for i in goal),
        goal_label=goal_label(scene, vector),
        kind=getattr(metrics, "kind", None) or goal_kind(vector),
        success=_opt_bool(getattr(metrics, "success", None)),
        time_to_success=_opt_float(getattr(metrics, "time_to_success", None)),
        par_ratio=_opt_float(getattr(metrics, "par_ratio", None)),
        aligned=_opt_bool(getattr(metrics, "aligned", None)),
        diagnosis=None if diag is None else diagnosis_words(str(diag), names, code),
        search_ids=f"{getattr(metrics, 'goal_key', None) or ''} {diag or ''}",
        diagnosis_step=None if diag_step is None else int(diag_step),
        diagnosis_code=None if code is None else str(code),
        steps=episode.steps,
        loaded=True,
    )


def summarise_episode(scene: Scene, episode: Episode) -> EpisodeSummary:
    """Metrics row for one episode, computed with core.metrics."""
    from arena_studio.core.analysis.metrics import episode_metrics

    return summary_from_metrics(scene, episode, episode_metrics(scene, episode))
