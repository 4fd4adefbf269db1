"""Statistics across runs: aggregates, stratified bootstrap intervals, performance profiles,
probability of improvement and optimality gap (numpy only).

A *run* is one tape (one seed of one condition at one step); its *score* is one per-tape
figure (a success rate, say). Runs are grouped by *task* (the scene, or the ``task`` header
key): ``groups`` below is a sequence with one 1-D array of run scores per task. Aggregates
pool the runs of every task.

Definitions (following Agarwal et al., "Deep Reinforcement Learning at the Edge of the
Statistical Precipice", NeurIPS 2021, and the usual textbook forms):

- **mean**, **median**: of the pooled run scores.
- **IQM** (interquartile mean): the mean of the middle half of the sorted pooled scores; with
  ``n`` scores, ``k = floor(n / 4)`` are cut from each end (the same cut as
  ``scipy.stats.trim_mean(x, 0.25)``; exact quartiles when ``n`` is a multiple of 4).
- **optimality gap**: ``mean(max(target - x, 0))``, how far runs fall short of ``target``.
- **stratified bootstrap CI**: each replicate resamples, *within each task*, as many runs as
  that task has, with replacement; the statistic is taken over the pooled replicate; the
  interval is the percentile interval of the replicates (Efron & Tibshirani 1993, ch. 13).
- **performance profile**: for each threshold ``tau``, the fraction of pooled runs whose score
  is strictly above ``tau``; bands from the same stratified bootstrap.
- **probability of improvement** P(X > Y): per task, ``P(x > y) + 0.5 P(x = y)`` over all
  pairs of one run of X and one of Y, which is the Mann-Whitney U statistic of X divided by
  ``n_x n_y``; averaged over the tasks both conditions have.

Randomness comes only from ``numpy.random.default_rng(seed)``: the same seed and input give
the same interval bit for bit.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import numpy as np

#: a statistic reduces axis -1 of a (..., n) array
Statistic = Callable[[np.ndarray], np.ndarray]
DEFAULT_REPS = 10_000
DEFAULT_CONFIDENCE = 0.95


def mean(x: np.ndarray) -> np.ndarray:
    """Mean over the last axis."""
    return np.mean(np.asarray(x, dtype=np.float64), axis=-1)


def median(x: np.ndarray) -> np.ndarray:
    """Median over the last axis."""
    return np.median(np.asarray(x, dtype=np.float64), axis=-1)


def iqm(x: np.ndarray) -> np.ndarray:
    """Interquartile mean over the last axis: sort, cut ``floor(n/4)`` from each end, mean."""
    a = np.sort(np.asarray(x, dtype=np.float64), axis=-1)
    n = a.shape[-1]
    k = n // 4
    return np.mean(a[..., k : n - k], axis=-1)


def optimality_gap(x: np.ndarray, target: float = 1.0) -> np.ndarray:
    """Mean shortfall below ``target`` over the last axis (scores above it count as 0)."""
    a = np.asarray(x, dtype=np.float64)
    return np.mean(np.maximum(target - a, 0.0), axis=-1)


STATISTICS: dict[str, Statistic] = {
    "mean": mean,
    "median": median,
    "iqm": iqm,
    "optimality_gap": optimality_gap,
}


def _clean_groups(groups: Sequence[np.ndarray]) -> list[np.ndarray]:
    """1-D float arrays, NaN (no value) dropped, empty tasks dropped."""
    out = []
    for g in groups:
        a = np.asarray(g, dtype=np.float64).ravel()
        a = a[np.isfinite(a)]
        if a.size:
            out.append(a)
    return out


def pooled(groups: Sequence[np.ndarray]) -> np.ndarray:
    """All runs of all tasks in one array (task by task, in order)."""
    clean = _clean_groups(groups)
    return np.concatenate(clean) if clean else np.empty(0)


def stratified_resample(
    groups: Sequence[np.ndarray], reps: int, rng: np.random.Generator
) -> np.ndarray:
    """(reps, N) replicates: columns of task t hold n_t draws with replacement from task t."""
    parts = []
    for g in groups:
        idx = rng.integers(0, g.size, size=(reps, g.size))
        parts.append(g[idx])
    return np.concatenate(parts, axis=1)


def bootstrap_ci(
    groups: Sequence[np.ndarray],
    statistic: Statistic = iqm,
    *,
    reps: int = DEFAULT_REPS,
    confidence: float = DEFAULT_CONFIDENCE,
    seed: int | Sequence[int] = 0,
) -> tuple[float, float]:
    """Percentile interval of ``statistic`` under the stratified bootstrap (NaN if no runs)."""
    clean = _clean_groups(groups)
    if not clean:
        return float("nan"), float("nan")
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must be between 0 and 1, got {confidence}")
    rng = np.random.default_rng(seed)
    values = statistic(stratified_resample(clean, max(int(reps), 1), rng))
    alpha = 100 * (1 - confidence) / 2
    low, high = np.percentile(values, [alpha, 100 - alpha])
    return float(low), float(high)


def performance_profile(
    groups: Sequence[np.ndarray],
    thresholds: np.ndarray,
    *,
    reps: int = 0,
    confidence: float = DEFAULT_CONFIDENCE,
    seed: int | Sequence[int] = 0,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(fraction above each threshold, band low, band high); bands need ``reps`` > 0."""
    tau = np.asarray(thresholds, dtype=np.float64)
    clean = _clean_groups(groups)
    if not clean:
        nan = np.full(tau.shape, np.nan)
        return nan, nan.copy(), nan.copy()
    runs = np.concatenate(clean)
    profile = np.mean(runs[:, None] > tau[None, :], axis=0)
    if reps <= 0:
        return profile, profile.copy(), profile.copy()
    rng = np.random.default_rng(seed)
    sample = stratified_resample(clean, int(reps), rng)  # (reps, N)
    # fraction above tau per replicate: count via sorted replicate and searchsorted
    sample.sort(axis=1)
    n = sample.shape[1]
    above = np.empty((sample.shape[0], tau.size))
    for j, t in enumerate(tau):
        above[:, j] = n - np.sum(sample <= t, axis=1)
    above /= n
    alpha = 100 * (1 - confidence) / 2
    low, high = np.percentile(above, [alpha, 100 - alpha], axis=0)
    return profile, low, high


def improvement_one_task(x: np.ndarray, y: np.ndarray) -> float:
    """P(X > Y) + 0.5 P(X = Y) over all pairs: Mann-Whitney U of X / (n_x n_y)."""
    a = np.asarray(x, dtype=np.float64).ravel()
    b = np.asarray(y, dtype=np.float64).ravel()
    a, b = a[np.isfinite(a)], b[np.isfinite(b)]
    if not a.size or not b.size:
        return float("nan")
    greater = np.sum(a[:, None] > b[None, :])
    ties = np.sum(a[:, None] == b[None, :])
    return float((greater + 0.5 * ties) / (a.size * b.size))


def probability_of_improvement(
    x_by_task: dict[str, np.ndarray], y_by_task: dict[str, np.ndarray]
) -> float:
    """Mean over the tasks both sides have of :func:`improvement_one_task` (NaN if none)."""
    values = [
        improvement_one_task(x_by_task[t], y_by_task[t])
        for t in sorted(x_by_task)
        if t in y_by_task
    ]
    values = [v for v in values if np.isfinite(v)]
    return float(np.mean(values)) if values else float("nan")


__all__ = [
    "DEFAULT_CONFIDENCE",
    "DEFAULT_REPS",
    "STATISTICS",
    "bootstrap_ci",
    "improvement_one_task",
    "iqm",
    "mean",
    "median",
    "optimality_gap",
    "performance_profile",
    "pooled",
    "probability_of_improvement",
    "stratified_resample",
]
