"""Entropy and mutual information of paired discrete observations, with the usual corrections.

Definitions (Cover & Thomas, *Elements of Information Theory*, ch. 2): for a contingency
table ``n[i, j]`` with ``N`` observations, plug-in ``H(X) = -sum p_i log p_i`` and
``I(X; Y) = H(X) + H(Y) - H(X, Y)``. The plug-in estimate is biased upward for small samples;
the Miller-Madow correction (Miller, 1955) adds ``(K - 1) / (2N)`` nats to each entropy, ``K``
the number of non-empty cells, so the mutual information gets
``(K_x + K_y - K_xy - 1) / (2N)``. Results here are in bits.

Context independence follows Bogin, Geva and Berant (2018) as used by Lowe, Foerster,
Boureau, Pineau and Dauphin, "On the Pitfalls of Measuring Emergent Communication" (AAMAS
2019): for each concept ``c`` take the symbol ``m_c`` that most often stands for it,
``argmax_m p(c | m)``; CI is the mean over concepts of ``p(m_c | c) * p(c | m_c)``.
"""

from __future__ import annotations

from collections.abc import Hashable, Sequence
from dataclasses import dataclass

import numpy as np

LN2 = float(np.log(2.0))


def contingency(
    xs: Sequence[Hashable], ys: Sequence[Hashable]
) -> tuple[np.ndarray, list[Hashable], list[Hashable]]:
    """Counts ``n[i, j]`` of (``x_labels[i]``, ``y_labels[j]``) pairs, first-seen order."""
    if len(xs) != len(ys):
        raise ValueError("paired observations must have equal length")
    x_labels: dict[Hashable, int] = {}
    y_labels: dict[Hashable, int] = {}
    for x in xs:
        x_labels.setdefault(x, len(x_labels))
    for y in ys:
        y_labels.setdefault(y, len(y_labels))
    table = np.zeros((len(x_labels), len(y_labels)), dtype=np.int64)
    if len(xs):
        np.add.at(table, ([x_labels[x] for x in xs], [y_labels[y] for y in ys]), 1)
    return table, list(x_labels), list(y_labels)


def entropy_bits(counts: np.ndarray) -> float:
    """Plug-in entropy (bits) of a vector (or table) of counts."""
    c = np.asarray(counts, dtype=np.float64).ravel()
    total = c.sum()
    if total <= 0:
        return 0.0
    p = c[c > 0] / total
    return float(-(p * np.log(p)).sum() / LN2)


def miller_madow_term(counts: np.ndarray) -> float:
    """Miller-Madow bias term ``(K - 1) / (2N)`` in bits, K the non-empty cells."""
    c = np.asarray(counts).ravel()
    total = float(c.sum())
    if total <= 0:
        return 0.0
    k = int((c > 0).sum())
    return (k - 1) / (2.0 * total) / LN2


def mutual_information_bits(table: np.ndarray, corrected: bool = False) -> float:
    """I(X; Y) in bits from a contingency table; ``corrected`` applies Miller-Madow to each
    entropy (the result is clipped at 0, since a negative estimate means "no evidence")."""
    t = np.asarray(table, dtype=np.float64)
    if t.sum() <= 0:
        return 0.0
    hx, hy, hxy = entropy_bits(t.sum(axis=1)), entropy_bits(t.sum(axis=0)), entropy_bits(t)
    mi = hx + hy - hxy
    if corrected:
        mi += (
            miller_madow_term(t.sum(axis=1))
            + miller_madow_term(t.sum(axis=0))
            - miller_madow_term(t)
        )
    return max(mi, 0.0)


def context_independence(table: np.ndarray) -> float | None:
    """Context independence of symbols (rows) for concepts (columns); None without data."""
    t = np.asarray(table, dtype=np.float64)
    if t.size == 0 or t.sum() <= 0:
        return None
    by_symbol = t.sum(axis=1, keepdims=True)
    by_concept = t.sum(axis=0, keepdims=True)
    with np.errstate(invalid="ignore", divide="ignore"):
        p_c_given_m = np.where(by_symbol > 0, t / by_symbol, 0.0)
        p_m_given_c = np.where(by_concept > 0, t / by_concept, 0.0)
    present = by_concept.ravel() > 0
    best = p_c_given_m.argmax(axis=0)  # per concept: the symbol that most stands for it
    cols = np.arange(t.shape[1])
    scores = p_m_given_c[best, cols] * p_c_given_m[best, cols]
    return float(scores[present].mean())


def _codes(values: Sequence[Hashable]) -> tuple[np.ndarray, int]:
    """Integer codes of values in first-seen order, and how many distinct values there are."""
    seen: dict[Hashable, int] = {}
    codes = np.array([seen.setdefault(v, len(seen)) for v in values], dtype=np.int64)
    return codes, len(seen)


@dataclass(frozen=True)
class Estimate:
    """A mutual information estimate with its permutation p-value and bootstrap interval."""

    bits: float  # Miller-Madow corrected
    plug_in_bits: float
    normalised: float | None  # bits / H(Y), None when Y has no entropy
    p_value: float  # permutation test: share of shuffles at least as large (with +1)
    low: float  # 95% percentile bootstrap interval of the corrected bits
    high: float
    samples: int
    #: mean corrected bits over the shuffles: what unrelated messages of the same spread give
    #: on this many episodes (small samples make it well above 0)
    chance: float = 0.0


def estimate(
    xs: Sequence[Hashable],
    ys: Sequence[Hashable],
    permutations: int = 1000,
    resamples: int = 1000,
    seed: int = 0,
) -> Estimate:
    """I(X; Y) with a seeded permutation test (shuffle X across observations) and a
    percentile bootstrap over observations."""
    table, _, _ = contingency(xs, ys)
    n = len(xs)
    observed = mutual_information_bits(table, corrected=True)
    plug_in = mutual_information_bits(table)
    hy = entropy_bits(table.sum(axis=0))
    if n == 0:
        return Estimate(0.0, 0.0, None, 1.0, 0.0, 0.0, 0)
    rng = np.random.default_rng(seed)
    x_codes, kx = _codes(xs)
    y_codes, ky = _codes(ys)

    def mi_of(xc: np.ndarray, yc: np.ndarray) -> float:
        t = np.bincount(xc * ky + yc, minlength=kx * ky).reshape(kx, ky)
        return mutual_information_bits(t, corrected=True)

    shuffled = np.array([mi_of(rng.permutation(x_codes), y_codes) for _ in range(permutations)])
    hits = int((shuffled >= observed - 1e-12).sum())
    p_value = (1 + hits) / (1 + permutations)
    boots = np.empty(resamples)
    for r in range(resamples):
        pick = rng.integers(0, n, n)
        boots[r] = mi_of(x_codes[pick], y_codes[pick])
    low, high = np.percentile(boots, [2.5, 97.5]) if resamples else (observed, observed)
    return Estimate(
        bits=observed,
        plug_in_bits=plug_in,
        normalised=observed / hy if hy > 0 else None,
        p_value=float(p_value),
        low=float(low),
        high=float(high),
        samples=n,
        chance=float(shuffled.mean()) if permutations else 0.0,
    )


__all__ = [
    "LN2",
    "Estimate",
    "context_independence",
    "contingency",
    "entropy_bits",
    "estimate",
    "miller_madow_term",
    "mutual_information_bits",
]
