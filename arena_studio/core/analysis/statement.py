"""What a still or clip says under its frame: how the episode went, then who went where.

One sentence on the outcome (success and time, or the diagnosis and when it happened) and the
who-went-where sentence, both naming landmarks by label, so a picture taken out of the app
still says why the team failed.
"""

from __future__ import annotations

from typing import Any

from arena_studio.core.analysis.diagnosis_words import diagnosis_words
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.core.wording import LandmarkNames

__all__ = ["episode_statement", "outcome_statement"]


def outcome_statement(
    metrics: Any, index: int, dt: float, names: LandmarkNames | None = None
) -> str:
    """One plain line on how the episode went, from the metrics' own words (the replay's
    outcome line says the same), the landmarks named by ``names`` (the scene's labels)."""
    if metrics is None:
        return ""
    names = names or LandmarkNames(())
    goal = names.goal(getattr(metrics, "goal_key", None))
    if getattr(metrics, "success", False):
        t = getattr(metrics, "time_to_success", None)
        took = "" if t is None else f" in {t:.1f} s"
        return f"Episode {index} succeeded at goal {goal}{took}."
    diag = diagnosis_words(
        getattr(metrics, "diagnosis", None), names, getattr(metrics, "diagnosis_code", None)
    )
    if not diag:
        return f"Episode {index} failed goal {goal}."
    step = getattr(metrics, "diagnosis_step", None)
    when = "" if step is None else f" at {step * dt:.1f} s"
    return f"Episode {index} failed goal {goal}: {diag}{when}."


def episode_statement(scene: Scene, episode: Episode) -> str:
    """The outcome line, then "Who went where: …" (empty parts left out)."""
    from arena_studio.core.analysis.metrics import episode_metrics
    from arena_studio.core.analysis.who_went_where import who_went_where

    try:
        metrics = episode_metrics(scene, episode)
    except (ValueError, IndexError):  # a damaged episode: who went where can still be said
        metrics = None
    upto = metrics.success_step if metrics is not None and metrics.success else None
    outcome = outcome_statement(metrics, episode.index, episode.dt, LandmarkNames.of(scene))
    where = who_went_where(scene, episode, upto).text()
    return " ".join(p for p in (outcome, f"Who went where: {where}." if where else "") if p)
