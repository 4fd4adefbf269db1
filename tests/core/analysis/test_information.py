"""Entropy and mutual information against scipy and scikit-learn, and hand-worked tables.

Sources: ``scipy.stats.entropy`` (natural log, converted to bits); ``sklearn.metrics.
mutual_info_score`` (plug-in MI in nats from a contingency table); Cover & Thomas, Elements of
Information Theory, ch. 2 (from memory): I of [[10, 0], [0, 10]] is 1 bit, of
[[5, 5], [5, 5]] is 0; Miller (1955) bias term (K - 1) / (2N) nats (from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import entropy as scipy_entropy
from sklearn.metrics import mutual_info_score

from arena_studio.core.analysis.information import (
    context_independence,
    contingency,
    entropy_bits,
    estimate,
    miller_madow_term,
    mutual_information_bits,
)

tables = st.integers(1, 5).flatmap(
    lambda r: st.integers(1, 5).flatmap(
        lambda c: st.lists(
            st.lists(st.integers(0, 30), min_size=c, max_size=c), min_size=r, max_size=r
        )
    )
)


@settings(max_examples=80, deadline=None)
@given(tables)
def test_plug_in_mi_equals_sklearn(rows: list[list[int]]) -> None:
    table = np.array(rows)
    if table.sum() == 0:
        return
    # sklearn.metrics.mutual_info_score(contingency=...) returns nats
    expected = mutual_info_score(None, None, contingency=table) / math.log(2)
    assert mutual_information_bits(table) == pytest.approx(max(expected, 0.0), abs=1e-9)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(0, 40), min_size=1, max_size=8))
def test_entropy_equals_scipy(counts: list[int]) -> None:
    if sum(counts) == 0:
        return
    assert entropy_bits(np.array(counts)) == pytest.approx(
        scipy_entropy(counts, base=2), abs=1e-12
    )


def test_textbook_tables() -> None:
    # Cover & Thomas ch. 2 (from memory): a perfect 2x2 channel carries 1 bit; independence 0
    assert mutual_information_bits(np.array([[10, 0], [0, 10]])) == pytest.approx(1.0)
    assert mutual_information_bits(np.array([[5, 5], [5, 5]])) == pytest.approx(0.0)


def test_miller_madow_on_a_hand_worked_table() -> None:
    # Miller (1955): (K - 1) / (2N) nats. Table [[3, 1], [0, 4]]: N = 8.
    table = np.array([[3, 1], [0, 4]])
    assert miller_madow_term(table) == pytest.approx((3 - 1) / 16 / math.log(2))  # K = 3 cells
    # corrected MI = plug-in + (Kx + Ky - Kxy - 1) / (2N) = plug-in + (2 + 2 - 3 - 1)/16 = plug-in
    plug = mutual_information_bits(table)
    assert mutual_information_bits(table, corrected=True) == pytest.approx(plug)
    # [[4, 0], [0, 4]] has Kxy = 2: the correction adds (2 + 2 - 2 - 1)/16 nats
    diag = np.array([[4, 0], [0, 4]])
    assert mutual_information_bits(diag, corrected=True) == pytest.approx(
        1.0 + 1 / 16 / math.log(2)
    )


def test_contingency_counts_pairs_in_first_seen_order() -> None:
    table, xs, ys = contingency(["a", "b", "a", "a"], [1, 2, 1, 2])
    assert xs == ["a", "b"] and ys == [1, 2]
    assert table.tolist() == [[2, 1], [0, 1]]


def test_context_independence_of_a_one_to_one_code_is_one() -> None:
    # Lowe et al. (2019) definition: symbol-per-concept use gives CI = 1; a symbol shared by two
    # concepts halves p(c | m) for both: CI = mean(1 * 0.5, 1 * 0.5) = 0.5 (worked by hand)
    assert context_independence(np.diag([5, 7, 3])) == pytest.approx(1.0)
    assert context_independence(np.array([[4, 4]])) == pytest.approx(0.5)


def test_estimate_separates_a_code_from_noise() -> None:
    rng = np.random.default_rng(1)
    goals = rng.integers(0, 3, 300).tolist()
    code = [f"m{g}" for g in goals]
    noise = rng.integers(0, 3, 300).tolist()
    carried = estimate(code, goals, permutations=200, resamples=200, seed=0)
    unrelated = estimate(noise, goals, permutations=200, resamples=200, seed=0)
    h_goal = entropy_bits(np.bincount(goals))
    assert carried.plug_in_bits == pytest.approx(h_goal)
    assert carried.p_value < 0.01 and carried.low <= carried.bits <= carried.high
    assert unrelated.bits < 0.05 and unrelated.p_value > 0.05
    # seeded: the same answer twice
    assert estimate(noise, goals, 50, 50, seed=3) == estimate(noise, goals, 50, 50, seed=3)
