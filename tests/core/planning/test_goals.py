"""Goal enumeration checked against math.comb and itertools.combinations.

Sources: Python's math.comb and itertools.combinations (
C(L, k) k-hot vectors; math.comb(8, 3) = 56; math.comb(3, 5) = 0); numpy's Generator for
the sampler (the chi-square bound is common practice, no source).
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from arena_studio.core.planning.goal_set import enumerate_goals
from arena_studio.core.scene.model import GoalSpec, Landmark, Room, Scene


def _scene(count: int, **goals: object) -> Scene:
    return Scene(
        rooms=(Room("r", ((0, 0), (10, 0), (10, 10), (0, 10))),),
        landmarks=tuple(
            Landmark(f"l{i}", f"L{i}", (1.0 + i * 0.5, 1.0), 0.3) for i in range(count)
        ),
        goals=GoalSpec(**goals),  # type: ignore[arg-type]
    )


@pytest.mark.parametrize("count", range(3, 11))
def test_counts_match_math_comb(count: int) -> None:
    table = enumerate_goals(_scene(count, families=(1, 2)))
    # math.comb reference: C(L,1) + C(L,2)
    assert len(table) == math.comb(count, 1) + math.comb(count, 2)
    assert table.vectors.dtype == np.uint8 and table.vectors.shape == (len(table), count)
    # order: itertools.combinations, family by family
    expected = [(i,) for i in range(count)] + list(itertools.combinations(range(count), 2))
    assert [table.targets(i) for i in range(len(table))] == expected
    assert table.kinds[:count] == ["individual"] * count
    assert set(table.kinds[count:]) == {"cooperative"}
    assert table.weights.sum() == pytest.approx(1.0)
    assert not table.problems


def test_three_hot_of_eight_is_56() -> None:
    # Python docs, math.comb: math.comb(8, 3) = 56 (computed)
    assert len(enumerate_goals(_scene(8, families=(3,)))) == 56


def test_explicit_vectors_dedup_and_weights() -> None:
    table = enumerate_goals(
        _scene(
            3,
            families=(1,),
            vectors=((1, 0, 1), (0, 1, 0), (1, 0, 1)),
            family_weights=(2.0,),
            vector_weights=(3.0, 1.0, 1.0),
        )
    )
    # 3 one-hot goals, then (1,0,1) once; (0,1,0) duplicates a one-hot goal
    assert [table.targets(i) for i in range(len(table))] == [(0,), (1,), (2,), (0, 2)]
    raw = np.array([2.0, 2.0 + 1.0, 2.0, 3.0 + 1.0])
    np.testing.assert_allclose(table.weights, raw / raw.sum())
    assert [p.severity for p in table.problems] == ["info", "info"]
    assert table.index_of([1, 0, 1]) == 3 and table.index_of([1, 1, 1]) is None


def test_bad_specs_give_reasons_not_exceptions() -> None:
    table = enumerate_goals(
        _scene(3, families=(1, 5), vectors=((0, 0, 0), (1, 0, 1, 1), (0, 1, 1)))
    )
    text = [str(p) for p in table.problems]
    assert any("goals.families[1]" in t and "k=5" in t and "only 3" in t for t in text)
    assert any("goals.vectors[0]" in t and "no 1s" in t for t in text)
    assert any("goals.vectors[1]" in t and "4 entries" in t for t in text)
    assert len(table) == 4  # three one-hot goals and (0, 1, 1)
    assert table.has_errors
    empty = enumerate_goals(_scene(0, families=(1,)))
    assert len(empty) == 0 and empty.has_errors
    with pytest.raises(ValueError, match="no goals"):
        empty.sample(np.random.default_rng(0), 3)


def test_zero_weights_fall_back_to_uniform() -> None:
    table = enumerate_goals(_scene(3, families=(1,), family_weights=(0.0,)))
    np.testing.assert_allclose(table.weights, [1 / 3] * 3)
    assert table.has_errors


def test_sampler_is_seeded_and_follows_weights() -> None:
    table = enumerate_goals(_scene(3, families=(1,), vectors=((1, 1, 1),), vector_weights=(5.0,)))
    a = table.sample(np.random.default_rng(7), 1000)
    b = table.sample(np.random.default_rng(7), 1000)
    assert np.array_equal(a, b)  # same seed, same draws (numpy Generator)
    n = 20_000
    counts = np.bincount(table.sample(np.random.default_rng(1), n), minlength=len(table))
    expected = table.weights * n
    chi2 = float(np.sum((counts - expected) ** 2 / expected))
    # chi-square with 3 degrees of freedom: 99.9th percentile is 16.27 (scipy.stats.chi2.ppf)
    from scipy.stats import chi2 as chi2_dist

    assert chi2 < chi2_dist.ppf(0.999, df=len(table) - 1)
