"""Assignment checked against scipy and brute force.

Sources: the scipy.optimize.linear_sum_assignment documentation example
([[4,1,3],[2,0,5],[3,2,2]] -> columns [1,0,2], total 5); brute force over
itertools.permutations as the definition of min-max; the case
C = [[6,8,5],[4,1,9],[7,3,2]] where min-sum and bottleneck optima differ (Burkard,
Dell'Amico & Martello [memory], values computed by brute force).
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import linear_sum_assignment

from arena_studio.core.planning.assignment import bottleneck_assignment, min_sum_assignment


def test_min_sum_scipy_doc_example() -> None:
    # scipy docs: cost [[4,1,3],[2,0,5],[3,2,2]] -> row i takes column [1,0,2][i], total 5
    cost = np.array([[4, 1, 3], [2, 0, 5], [3, 2, 2]], dtype=float)
    result = min_sum_assignment(cost)
    assert result is not None
    assert result.total == 5
    # our rows are agents, columns targets: target k goes to agent agent_of[k]
    assert result.agent_of == (1, 0, 2)


def test_pinned_case_where_optima_differ() -> None:
    # Brute force (values computed): min-sum takes the diagonal (sum 9, max 6);
    # bottleneck: 0->2, 1->0, 2->1
    # (max 5, sum 12) [computed by brute force]
    cost = np.array([[6, 8, 5], [4, 1, 9], [7, 3, 2]], dtype=float)
    ms = min_sum_assignment(cost)
    assert ms is not None and ms.total == 9 and ms.bottleneck == 6
    bn = bottleneck_assignment(cost)
    assert bn is not None and bn.bottleneck == 5 and bn.total == 12
    # agent 0 takes target 2, agent 1 target 0, agent 2 target 1
    assert bn.agent_of == (1, 2, 0)


def _brute(cost: np.ndarray) -> tuple[float, float] | None:
    """Definition: over every injective map targets -> agents, the smallest (max, sum)."""
    agents, targets = cost.shape
    best = None
    for perm in itertools.permutations(range(agents), targets):
        vals = [cost[a, k] for k, a in enumerate(perm)]
        key = (max(vals), sum(vals))
        if math.isinf(key[0]):
            continue
        if best is None or key < best:
            best = key
    return best


@settings(max_examples=60, deadline=None)
@given(
    st.integers(1, 5).flatmap(
        lambda a: st.tuples(
            st.just(a),
            st.integers(1, a),
            st.lists(st.integers(0, 9), min_size=25, max_size=25),
            st.lists(st.booleans(), min_size=25, max_size=25),
        )
    )
)
def test_bottleneck_matches_brute_force(data: tuple) -> None:
    agents, targets, values, blocked = data
    cost = np.array(values[: agents * targets], dtype=float).reshape(agents, targets)
    mask = np.array(blocked[: agents * targets]).reshape(agents, targets)
    cost = np.where(
        mask & (np.arange(agents * targets).reshape(agents, targets) % 3 == 0), np.inf, cost
    )
    expected = _brute(cost)  # brute force over itertools.permutations
    got = bottleneck_assignment(cost)
    if expected is None:
        assert got is None
        return
    assert got is not None
    assert (got.bottleneck, got.total) == pytest.approx(expected)
    assert len(set(got.agent_of)) == targets  # distinct agents
    # min-sum against scipy's linear_sum_assignment on the finite matrix
    if np.all(np.isfinite(cost)):
        r, c = linear_sum_assignment(cost.T)
        ms = min_sum_assignment(cost)
        assert ms is not None and ms.total == pytest.approx(cost.T[r, c].sum())


def test_infeasible_and_bad_input() -> None:
    assert bottleneck_assignment(np.ones((1, 2))) is None  # more targets than agents
    assert bottleneck_assignment(np.array([[np.inf], [np.inf]])) is None
    assert min_sum_assignment(np.array([[np.inf, 1.0], [np.inf, 2.0]])) is None
    with pytest.raises(ValueError, match="2-D"):
        bottleneck_assignment(np.ones(3))
    with pytest.raises(ValueError, match="NaN"):
        bottleneck_assignment(np.array([[np.nan]]))
