"""A sweep's figures (cached, computed where asked) and the tables across runs built on them.

``load_runs`` finds the figures of every ready tape (cache first, the rest computed by
:func:`execute.compute_figures`), ``curve_rows`` gives, for each group (condition by default)
and step, the mean, median, IQM, optimality gap and a stratified bootstrap interval of a
statistic over the runs (tasks are the strata), and ``final_comparison`` the same at one step
with the probability of improvement between every pair of groups. Definitions:
:mod:`arena_studio.core.runs.stats`.
"""

from __future__ import annotations

import zlib
from collections import defaultdict
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from arena_studio.core.runs import stats
from arena_studio.core.runs.cache import FigureCache
from arena_studio.core.runs.execute import Execution, compute_figures
from arena_studio.core.runs.per_tape import TapeFigures
from arena_studio.core.runs.sweep import Sweep, SweepTape

GROUP_KEYS = ("condition", "task", "seed")
#: thresholds of the final step's performance profiles, and bootstrap replicates for bands
PROFILE_POINTS = 21
PROFILE_REPS = 2000


@dataclass(frozen=True)
class Run:
    """One analysed tape: where it belongs and its figures."""

    tape: SweepTape
    figures: TapeFigures

    def key(self, name: str) -> Any:
        return getattr(self.tape.place, name)

    def value(self, metric: str) -> float:
        v = self.figures.figures.get(metric)
        return float("nan") if v is None else float(v)


@dataclass(frozen=True)
class Settings:
    """Bootstrap settings shared by every table."""

    statistic: str = "iqm"
    reps: int = stats.DEFAULT_REPS
    confidence: float = stats.DEFAULT_CONFIDENCE
    seed: int = 0
    target: float = 1.0  # optimality gap target


@dataclass(frozen=True)
class Row:
    metric: str
    group: str
    step: int
    runs: int
    tasks: int
    mean: float
    median: float
    iqm: float
    optimality_gap: float
    ci_low: float
    ci_high: float
    tapes: tuple[str, ...]

    def to_dict(self) -> dict[str, Any]:
        d = dict(self.__dict__)
        d["tapes"] = list(self.tapes)
        return d


def load_runs(
    sweep: Sweep,
    how: Execution | None = None,
    cache: FigureCache | None = None,
    advance: Callable[[int], None] | None = None,
) -> tuple[list[Run], list[str]]:
    """(runs with figures, problems and notes of damage): cached figures reused, the others
    computed and cached.

    ``advance(n)`` reports tapes done (cached ones at once). The cache is saved even when the
    computation is interrupted, so finished groups are not computed again.
    """
    ready = sweep.ready
    found: dict[str, TapeFigures] = {}
    todo: list[SweepTape] = []
    for tape in ready:
        hit = cache.get(tape) if cache is not None else None
        if hit is None:
            todo.append(tape)
        else:
            found[str(tape.path)] = hit
    if advance is not None and found:
        advance(len(found))
    computed: dict[str, TapeFigures] = {}
    try:
        compute_figures([str(t.path) for t in todo], how or Execution(), advance, into=computed)
    finally:
        if cache is not None:
            for tape in todo:
                if str(tape.path) in computed:
                    cache.put(tape, computed[str(tape.path)])
            cache.save()
    found.update(computed)
    runs, problems = [], [t.problem for t in sweep.problems if t.problem]
    for tape in ready:
        fig = found[str(tape.path)]
        if fig.problem:
            problems.append(fig.problem)
            continue
        if fig.note:
            problems.append(fig.note)
        runs.append(Run(tape, fig))
    return runs, problems


def metric_names(runs: Sequence[Run]) -> list[str]:
    """Every figure name some run has: base figures, message figures, then the named ones."""
    from arena_studio.core.runs.per_tape import BASE_FIGURES, MESSAGE_FIGURES

    names = {k for r in runs for k in r.figures.figures}
    firsts = [n for n in BASE_FIGURES + MESSAGE_FIGURES if n in names]
    return firsts + sorted(n for n in names if ":" in n)


def _strata(runs: Sequence[Run], metric: str, by: str) -> dict[str, np.ndarray]:
    """Scores by task (one stratum when grouping by task itself)."""
    out: dict[str, list[float]] = defaultdict(list)
    for r in runs:
        out["" if by == "task" else str(r.key("task"))].append(r.value(metric))
    return {k: np.asarray(v) for k, v in sorted(out.items())}


def _cell_seed(settings: Settings, *parts: object) -> list[int]:
    text = "|".join(str(p) for p in parts)
    return [settings.seed, zlib.crc32(text.encode())]


def cell_row(
    runs: Sequence[Run], metric: str, group: str, step: int, by: str, settings: Settings
) -> Row:
    """Aggregates and interval of one (group, step) cell."""
    strata = _strata(runs, metric, by)
    values = stats.pooled(list(strata.values()))
    statistic = stats.STATISTICS[settings.statistic]
    nan = float("nan")
    if values.size:
        low, high = stats.bootstrap_ci(
            list(strata.values()),
            statistic,
            reps=settings.reps,
            confidence=settings.confidence,
            seed=_cell_seed(settings, metric, group, step),
        )
    else:
        low = high = nan
    some = values.size > 0
    return Row(
        metric=metric,
        group=group,
        step=step,
        runs=int(values.size),
        tasks=sum(1 for v in strata.values() if np.isfinite(v).any()),
        mean=float(stats.mean(values)) if some else nan,
        median=float(stats.median(values)) if some else nan,
        iqm=float(stats.iqm(values)) if some else nan,
        optimality_gap=float(stats.optimality_gap(values, settings.target)) if some else nan,
        ci_low=low,
        ci_high=high,
        tapes=tuple(sorted(str(r.tape.path) for r in runs)),
    )


def cells(runs: Sequence[Run], by: str = "condition") -> dict[tuple[str, int], list[Run]]:
    """Runs by (group, step), sorted."""
    if by not in GROUP_KEYS:
        raise ValueError(f"group by one of {', '.join(GROUP_KEYS)}, not {by!r}")
    out: dict[tuple[str, int], list[Run]] = defaultdict(list)
    for r in runs:
        out[(str(r.key(by)), int(r.key("step")))].append(r)
    return dict(sorted(out.items()))


def curve_rows(
    runs: Sequence[Run], metric: str, by: str = "condition", settings: Settings = Settings()
) -> list[Row]:
    """One row per (group, step), groups then steps in order."""
    return [
        cell_row(cell, metric, group, step, by, settings)
        for (group, step), cell in cells(runs, by).items()
    ]


@dataclass(frozen=True)
class Final:
    """Each group at its chosen step, and P(row group > column group)."""

    metric: str
    rows: list[Row]
    improvement: dict[tuple[str, str], float]
    #: group -> (thresholds, fraction of runs above, band low, band high)
    profiles: dict[str, tuple[np.ndarray, ...]] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {
            "metric": self.metric,
            "rows": [r.to_dict() for r in self.rows],
            "improvement": [
                {"x": a, "y": b, "probability": p} for (a, b), p in self.improvement.items()
            ],
            "profiles": {
                g: {
                    "thresholds": t.tolist(),
                    "fraction_above": f.tolist(),
                    "low": lo.tolist(),
                    "high": hi.tolist(),
                }
                for g, (t, f, lo, hi) in self.profiles.items()
            },
        }


def final_comparison(
    runs: Sequence[Run],
    metric: str,
    by: str = "condition",
    at_step: int | None = None,
    settings: Settings = Settings(),
) -> Final:
    """Groups at step ``at_step`` (None: each group's last step) and P(improvement) pairs."""
    chosen: dict[str, tuple[int, list[Run]]] = {}
    for (group, step), cell in cells(runs, by).items():
        later = group not in chosen or step > chosen[group][0]
        if (at_step is None and later) or step == at_step:
            chosen[group] = (step, cell)
    rows = [cell_row(cell, metric, g, s, by, settings) for g, (s, cell) in sorted(chosen.items())]
    strata = {g: _strata(cell, metric, by) for g, (_, cell) in chosen.items()}
    improvement = {
        (a, b): stats.probability_of_improvement(strata[a], strata[b])
        for a in sorted(strata)
        for b in sorted(strata)
        if a != b
    }
    return Final(metric, rows, improvement, _profiles(strata, metric, settings))


def _profiles(
    strata: dict[str, dict[str, np.ndarray]], metric: str, settings: Settings
) -> dict[str, tuple[np.ndarray, ...]]:
    """Performance profiles of every group over PROFILE_POINTS thresholds spanning all runs."""
    every = stats.pooled([v for s in strata.values() for v in s.values()])
    if not every.size:
        return {}
    tau = np.linspace(float(every.min()), float(every.max()), PROFILE_POINTS)
    out: dict[str, tuple[np.ndarray, ...]] = {}
    for g, s in sorted(strata.items()):
        reps = min(settings.reps, PROFILE_REPS)
        seed = _cell_seed(settings, "profile", metric, g)
        frac, low, high = stats.performance_profile(
            list(s.values()), tau, reps=reps, confidence=settings.confidence, seed=seed
        )
        out[g] = (tau, frac, low, high)
    return out


@dataclass(frozen=True)
class GoalMatrix:
    """Mean success per goal (rows) and step (columns) of one group; NaN where no run has
    the goal at that step."""

    goals: list[str]
    steps: list[int]
    values: np.ndarray  # (goals, steps)
    runs: dict[int, list[Run]]  # step -> runs of the group


def goal_matrix(runs: Sequence[Run], group: str, by: str = "condition") -> GoalMatrix:
    """Success of each goal over steps for ``group`` (mean over its runs at each step)."""
    mine: dict[int, list[Run]] = defaultdict(list)
    for r in runs:
        if str(r.key(by)) == group:
            mine[int(r.key("step"))].append(r)
    steps = sorted(mine)
    goals = sorted({k[5:] for r in runs for k in r.figures.figures if k.startswith("goal:")})
    values = np.full((len(goals), len(steps)), np.nan)
    for j, step in enumerate(steps):
        for i, goal in enumerate(goals):
            v = np.array([r.value(f"goal:{goal}") for r in mine[step]])
            v = v[np.isfinite(v)]
            if v.size:
                values[i, j] = float(v.mean())
    return GoalMatrix(goals, steps, values, dict(mine))


__all__ = [
    "GROUP_KEYS",
    "Final",
    "GoalMatrix",
    "Row",
    "Run",
    "Settings",
    "cell_row",
    "cells",
    "curve_rows",
    "final_comparison",
    "goal_matrix",
    "load_runs",
    "metric_names",
]
