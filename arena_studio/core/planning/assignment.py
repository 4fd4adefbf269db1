"""Assigning distinct agents to targets: min-sum and bottleneck (min-max) assignment.

Cost matrices are (A, K): agents by targets, ``inf`` where an agent cannot reach a target.
Every target needs its own agent (A >= K); agents may stay unassigned.

- :func:`min_sum_assignment`: scipy.optimize.linear_sum_assignment (the Hungarian method).
- :func:`bottleneck_assignment`: the smallest possible largest cost (Burkard, Dell'Amico &
  Martello, Assignment Problems, ch. 6 [memory]). Binary search over the sorted distinct costs
  for the smallest threshold under which a matching covers every target
  (scipy.sparse.csgraph.maximum_bipartite_matching), then the smallest total among the
  assignments that respect the threshold (ties of the largest cost go to the smallest sum).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Assignment:
    """``agent_of[k]`` is the agent (row) given target (column) k."""

    agent_of: tuple[int, ...]
    bottleneck: float
    total: float

    def pairs(self) -> list[tuple[int, int]]:
        """(agent, target) pairs in target order."""
        return [(a, k) for k, a in enumerate(self.agent_of)]


def _check(cost: np.ndarray) -> np.ndarray:
    c = np.asarray(cost, dtype=np.float64)
    if c.ndim != 2:
        raise ValueError(f"cost matrix must be 2-D (agents x targets), got shape {c.shape}")
    if np.any(np.isnan(c)) or np.any(c < 0):
        raise ValueError("cost matrix entries must be >= 0 or inf (no NaN)")
    return c


def _min_sum_on(c: np.ndarray, allowed: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """linear_sum_assignment over targets using only ``allowed`` entries (None: impossible)."""
    from scipy.optimize import linear_sum_assignment  # lazy: scipy.optimize loads slowly

    finite = c[allowed]
    big = (float(finite.sum()) if finite.size else 0.0) * 2.0 + 1.0
    work = np.where(allowed, c, big).T  # (K, A): every target row gets a distinct agent
    rows, cols = linear_sum_assignment(work)
    if not np.all(allowed.T[rows, cols]):
        return None
    return rows, cols


def min_sum_assignment(cost: np.ndarray) -> Assignment | None:
    """Distinct agents for every target with the smallest total cost (None: impossible)."""
    c = _check(cost)
    agents, targets = c.shape
    if targets == 0:
        return Assignment((), 0.0, 0.0)
    if targets > agents:
        return None
    found = _min_sum_on(c, np.isfinite(c))
    if found is None:
        return None
    rows, cols = found
    agent_of = np.empty(targets, dtype=np.int64)
    agent_of[rows] = cols
    chosen = c[agent_of, np.arange(targets)]
    return Assignment(tuple(int(a) for a in agent_of), float(chosen.max()), float(chosen.sum()))


def _covers_all(allowed: np.ndarray) -> bool:
    """A matching under ``allowed`` (A, K) gives every target its own agent."""
    from scipy.sparse import csr_matrix
    from scipy.sparse.csgraph import maximum_bipartite_matching

    graph = csr_matrix(allowed.T.astype(np.int8))  # rows: targets, columns: agents
    match = maximum_bipartite_matching(graph, perm_type="column")
    return bool(np.all(match >= 0))


def bottleneck_assignment(cost: np.ndarray) -> Assignment | None:
    """Smallest largest cost; among those, smallest total (None: impossible)."""
    c = _check(cost)
    agents, targets = c.shape
    if targets == 0:
        return Assignment((), 0.0, 0.0)
    if targets == 1:  # the nearest agent (the first of equals): no matching to search
        a = int(np.argmin(c[:, 0]))
        best = float(c[a, 0])
        return Assignment((a,), best, best) if math.isfinite(best) else None
    if targets > agents or not _covers_all(np.isfinite(c)):
        return None
    levels = np.unique(c[np.isfinite(c)])
    # the bottleneck is at least the largest of the per-target minima
    lo = int(np.searchsorted(levels, np.max(np.min(c, axis=0))))
    hi = len(levels) - 1
    while lo < hi:
        mid = (lo + hi) // 2
        if _covers_all(c <= levels[mid]):
            hi = mid
        else:
            lo = mid + 1
    threshold = levels[lo]
    found = _min_sum_on(c, c <= threshold)
    assert found is not None  # a covering matching exists under the threshold
    rows, cols = found
    agent_of = np.empty(targets, dtype=np.int64)
    agent_of[rows] = cols
    chosen = c[agent_of, np.arange(targets)]
    return Assignment(tuple(int(a) for a in agent_of), float(chosen.max()), float(chosen.sum()))


__all__ = ["Assignment", "bottleneck_assignment", "min_sum_assignment"]
