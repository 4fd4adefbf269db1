"""Statistics across runs, checked against scipy and against answers derived by hand."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.stats
from hypothesis import given, settings
from hypothesis import strategies as st

from arena_studio.core.runs import stats


@pytest.mark.parametrize("n", [4, 8, 12, 40, 100])
def test_iqm_equals_scipy_trim_mean(n: int) -> None:
    x = np.random.default_rng(n).normal(size=n)
    # reference: scipy.stats.trim_mean cuts 25% from each end (n a multiple of 4)
    assert stats.iqm(x) == pytest.approx(scipy.stats.trim_mean(x, 0.25), abs=1e-12)


def test_iqm_of_rows() -> None:
    x = np.random.default_rng(1).random((5, 16))
    # reference: scipy.stats.trim_mean along the last axis
    np.testing.assert_allclose(stats.iqm(x), scipy.stats.trim_mean(x, 0.25, axis=1))


def test_mean_median_optimality_gap() -> None:
    x = np.array([0.2, 0.9, 1.0, 0.5])
    # reference: numpy's mean/median; the gap by hand: (0.8 + 0.1 + 0 + 0.5) / 4
    assert stats.mean(x) == pytest.approx(np.mean(x))
    assert stats.median(x) == pytest.approx(np.median(x))
    assert stats.optimality_gap(x) == pytest.approx(1.4 / 4)


@pytest.mark.parametrize("seed", range(5))
def test_improvement_equals_mann_whitney_u(seed: int) -> None:
    rng = np.random.default_rng(seed)
    x = rng.integers(0, 5, size=7) / 4  # ties on purpose
    y = rng.integers(0, 5, size=9) / 4
    # reference: scipy.stats.mannwhitneyu(x, y).statistic is U of x; P = U / (n_x n_y)
    expected = scipy.stats.mannwhitneyu(x, y).statistic / (len(x) * len(y))
    assert stats.improvement_one_task(x, y) == pytest.approx(expected, abs=1e-12)


def test_improvement_averages_over_shared_tasks() -> None:
    a = {"t1": np.array([1.0, 1.0]), "t2": np.array([0.0, 0.0]), "t3": np.array([5.0])}
    b = {"t1": np.array([0.0, 0.0]), "t2": np.array([0.0, 0.0])}
    # derived: t1 always better (1), t2 all ties (0.5); t3 only on one side, left out
    assert stats.probability_of_improvement(a, b) == pytest.approx(0.75)


def test_bootstrap_ci_agrees_with_scipy_percentile() -> None:
    x = np.random.default_rng(3).normal(0.5, 0.2, size=40)
    low, high = stats.bootstrap_ci([x], stats.mean, reps=20_000, seed=1)
    # reference: scipy.stats.bootstrap, percentile method, one sample (one task)
    ref = scipy.stats.bootstrap(
        (x,), np.mean, n_resamples=20_000, method="percentile", random_state=2
    ).confidence_interval
    se = np.std(x, ddof=1) / np.sqrt(x.size)
    # Monte-Carlo error of a 2.5% quantile of 20,000 replicates is ~0.03 standard errors
    assert low == pytest.approx(ref.low, abs=0.1 * se)
    assert high == pytest.approx(ref.high, abs=0.1 * se)


def test_bootstrap_is_seeded() -> None:
    x = [np.arange(8.0), np.arange(5.0) * 2]
    assert stats.bootstrap_ci(x, reps=500, seed=4) == stats.bootstrap_ci(x, reps=500, seed=4)
    assert stats.bootstrap_ci(x, reps=500, seed=4) != stats.bootstrap_ci(x, reps=500, seed=5)


def test_bootstrap_of_constant_runs_is_a_point() -> None:
    # derived: every replicate of constant scores is that constant
    assert stats.bootstrap_ci([np.ones(4), np.ones(3)], reps=200) == (1.0, 1.0)
    low, high = stats.bootstrap_ci([np.array([np.nan])])
    assert np.isnan(low) and np.isnan(high)


@settings(max_examples=40, deadline=None)
@given(
    sizes=st.lists(st.integers(1, 6), min_size=1, max_size=4),
    reps=st.integers(1, 30),
    seed=st.integers(0, 2**31),
)
def test_stratified_resample_keeps_each_task_run_count(
    sizes: list[int], reps: int, seed: int
) -> None:
    # tasks get disjoint value ranges, so each value says which task it came from
    groups = [100 * t + np.arange(n, dtype=float) for t, n in enumerate(sizes)]
    sample = stats.stratified_resample(groups, reps, np.random.default_rng(seed))
    assert sample.shape == (reps, sum(sizes))
    task_of = sample // 100
    for t, n in enumerate(sizes):
        # common practice (stratified bootstrap): each replicate has n_t runs of task t
        np.testing.assert_array_equal(np.sum(task_of == t, axis=1), n)
        assert np.isin(sample[task_of == t], groups[t]).all()


def test_performance_profile_counts_runs_above() -> None:
    groups = [np.array([0.1, 0.5, 0.9]), np.array([0.5])]
    tau = np.array([0.0, 0.5, 0.95])
    profile, low, high = stats.performance_profile(groups, tau, reps=300, seed=0)
    # derived: 4 runs; above 0: 4, above 0.5: 1 (strictly), above 0.95: 0
    np.testing.assert_allclose(profile, [1.0, 0.25, 0.0])
    assert (low <= profile + 1e-12).all() and (high >= profile - 1e-12).all()
    assert low[0] == high[0] == 1.0 and low[2] == high[2] == 0.0
