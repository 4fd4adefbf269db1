"""One tape's figures for the sweep statistics: the summary ``arena-studio stats`` prints,
flattened into named numbers.

Only these numbers (and the indices of failed cooperative episodes, for the replay) leave the
process that read the tape; poses never do. A tape that cannot be read gives a result with
``problem`` set and no figures: the damage stays in that tape.

Figure names (every one can be the ``--metric`` of ``arena-studio runs``):

- ``success``, ``alignment``: shares of episodes that succeeded / whose agents pursued one goal
- ``cooperative_success``, ``individual_success``: success by goal kind
- ``aligned_success``, ``misaligned_success``: success of aligned / misaligned episodes
- ``time_to_success`` (s), ``par_ratio``: means over successful episodes
- ``episode_length`` (s): mean episode duration
- ``specialisation``: mean over goals of the summary's specialisation
- ``collisions``: agent-agent contacts per episode
- ``damaged``: share of episodes not complete (cut or damaged)
- ``episodes``: episode count
- ``goal:<key>``: success of the episodes whose judged goal is ``<key>``
- ``diagnosis:<code>``: share of episodes with that failure diagnosis
- with structured messages before the episodes (:mod:`.analysis.messages`, Miller-Madow
  corrected bits, no permutation test here): ``signalling`` / ``listening`` / ``adoption``,
  the means over speakers / speaker-listener pairs, and per speaker
  ``signalling:<speaker>`` and per pair ``listening:<speaker>-><listener>``,
  ``adoption:<speaker>-><listener>``
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from arena_studio.core.errors import ArenaError

BASE_FIGURES = (
    "success",
    "alignment",
    "cooperative_success",
    "individual_success",
    "aligned_success",
    "misaligned_success",
    "time_to_success",
    "par_ratio",
    "episode_length",
    "specialisation",
    "collisions",
    "damaged",
    "episodes",
)
#: tape-wide message figures (only on tapes with structured messages)
MESSAGE_FIGURES = ("signalling", "listening", "adoption")


@dataclass
class TapeFigures:
    """Figures of one tape (None where a figure has no value, e.g. no cooperative episode)."""

    path: str
    figures: dict[str, float | None] = field(default_factory=dict)
    failed_cooperative: list[int] = field(default_factory=list)
    truncated: bool = False
    problem: str | None = None
    note: str | None = None  # e.g. damaged episodes left out

    def to_dict(self) -> dict[str, Any]:
        return {
            "path": self.path,
            "figures": dict(self.figures),
            "failed_cooperative": list(self.failed_cooperative),
            "truncated": self.truncated,
            "problem": self.problem,
            "note": self.note,
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> TapeFigures:
        return cls(
            path=str(d["path"]),
            figures={str(k): (None if v is None else float(v)) for k, v in d["figures"].items()},
            failed_cooperative=[int(i) for i in d.get("failed_cooperative", [])],
            truncated=bool(d.get("truncated", False)),
            problem=d.get("problem"),
            note=d.get("note"),
        )


def tape_figures(path: str) -> TapeFigures:
    """Read one tape and compute its figures (batched metrics, as ``arena-studio stats``)."""
    from arena_studio.core.analysis.metrics import summarize_metrics
    from arena_studio.core.analysis.metrics_batch import tape_metrics
    from arena_studio.core.tape import open_tape

    note = None
    try:
        tape = open_tape(path)
    except (ArenaError, OSError, ValueError) as exc:
        return TapeFigures(path=path, problem=_named(path, exc))
    try:
        metrics = tape_metrics(tape)
        damaged = 0
    except (ArenaError, ValueError) as exc:
        metrics, damaged = _episode_by_episode(tape)
        note = f"{_named(path, exc)}; {damaged} damaged episode(s) left out"
    summary = summarize_metrics(tape.scene, metrics)
    out = TapeFigures(path=path, truncated=bool(tape.truncated), note=note)
    out.figures = figures_of_summary(summary, metrics)
    if damaged:
        total = len(metrics) + damaged
        out.figures["damaged"] = (summary["incomplete_episodes"] + damaged) / total
    out.figures.update(message_figures(tape, metrics))
    out.failed_cooperative = [m.index for m in metrics if m.kind == "cooperative" and not m.success]
    return out


def message_figures(tape: Any, metrics: list[Any]) -> dict[str, float | None]:
    """Signalling, listening and adoption figures; empty without structured messages."""
    from arena_studio.core.analysis.messages import message_report

    try:
        episodes = [tape.episode(m.index) for m in metrics]
    except (ArenaError, ValueError):
        return {}
    if not any(isinstance(r, dict) and "value" in r for ep in episodes for r in ep.messages):
        return {}
    report = message_report(
        episodes,
        [a.id for a in tape.scene.agents],
        [lm.id for lm in tape.scene.landmarks],
        permutations=0,
        resamples=0,
    )
    figs: dict[str, float | None] = {}
    for s in report.speakers:
        figs[f"signalling:{s.speaker}"] = s.signalling.bits
    for p in report.pairs:
        figs[f"listening:{p.speaker}->{p.listener}"] = p.listening.bits
        figs[f"adoption:{p.speaker}->{p.listener}"] = p.adoption
    for name, values in (
        ("signalling", [s.signalling.bits for s in report.speakers]),
        ("listening", [p.listening.bits for p in report.pairs]),
        ("adoption", [p.adoption for p in report.pairs if p.adoption is not None]),
    ):
        figs[name] = float(np.mean(values)) if values else None
    return figs


def _named(path: str, exc: Exception) -> str:
    text = str(exc)
    return text if str(path) in text else f"{path}: {text}"


def _episode_by_episode(tape: Any) -> tuple[list[Any], int]:
    """Metrics of the readable episodes of a tape with damaged ones, and the damaged count."""
    from arena_studio.core.analysis.metrics_batch import episodes_metrics

    metrics: list[Any] = []
    damaged = 0
    for i in range(len(tape)):
        try:
            episode = tape.episode(i)
        except (ArenaError, ValueError):
            damaged += 1
            continue
        metrics.extend(episodes_metrics(tape.scene, [episode]))
    return metrics, damaged


def figures_of_summary(summary: dict[str, Any], metrics: list[Any]) -> dict[str, float | None]:
    """Flatten a :func:`metrics.summarize_metrics` summary into named figures."""
    n = summary["episodes"]
    spec = [v for v in summary["specialisation"].values() if v is not None]
    lengths = [m.duration for m in metrics]
    figs: dict[str, float | None] = {
        "success": summary["success_rate"],
        "alignment": summary["alignment_rate"],
        "cooperative_success": summary["by_kind"]["cooperative"]["success_rate"],
        "individual_success": summary["by_kind"]["individual"]["success_rate"],
        "aligned_success": summary["aligned"]["success_rate"],
        "misaligned_success": summary["misaligned"]["success_rate"],
        "time_to_success": summary["mean_time_to_success"],
        "par_ratio": summary["mean_par_ratio"],
        "episode_length": float(np.mean(lengths)) if lengths else None,
        "specialisation": float(np.mean(spec)) if spec else None,
        "collisions": summary["collisions"] / n if n else None,
        "damaged": summary["incomplete_episodes"] / n if n else None,
        "episodes": float(n),
    }
    for key, group in summary["by_goal"].items():
        figs[f"goal:{key}"] = group["success_rate"]
    for code, count in summary["diagnoses"].items():
        figs[f"diagnosis:{code}"] = count / n if n else None
    return {k: (None if v is None else float(v)) for k, v in figs.items()}


def group_figures(paths: list[str]) -> list[dict[str, Any]]:
    """Figures of a group of tapes as plain dicts: the unit of work sent to a worker."""
    return [tape_figures(p).to_dict() for p in paths]


__all__ = [
    "BASE_FIGURES",
    "MESSAGE_FIGURES",
    "TapeFigures",
    "figures_of_summary",
    "group_figures",
    "tape_figures",
]
