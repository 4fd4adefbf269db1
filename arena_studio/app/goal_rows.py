"""The scene's goal list for the goals panel, in ``core.goals.enumerate_goals`` order.

Uses ``core.goals`` when present; otherwise enumerates the same order here (families in listed
order, each in itertools.combinations order, then explicit vectors not already present).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

from ..core.scene import Scene


@dataclass(frozen=True)
class GoalRow:
    vector: tuple[int, ...]
    weight: float  # normalised sampling weight

    @property
    def targets(self) -> tuple[int, ...]:
        return tuple(i for i, b in enumerate(self.vector) if b)

    @property
    def kind(self) -> str:
        return "individual" if len(self.targets) == 1 else "cooperative"


def goal_rows(scene: Scene) -> list[GoalRow]:
    try:
        from ..core.goals import enumerate_goals
    except ImportError:
        return _fallback(scene)
    try:
        table = enumerate_goals(scene)
    except Exception:
        return _fallback(scene)
    return [
        GoalRow(tuple(int(b) for b in v), float(w))
        for v, w in zip(table.vectors, table.weights, strict=True)
    ]


def _fallback(scene: Scene) -> list[GoalRow]:
    n = len(scene.landmarks)
    g = scene.goals
    raw: list[tuple[tuple[int, ...], float]] = []
    seen: set[tuple[int, ...]] = set()
    fam_w = g.family_weights or (1.0,) * len(g.families)
    for k, w in zip(g.families, fam_w, strict=True):
        for combo in itertools.combinations(range(n), k):
            vec = tuple(1 if i in combo else 0 for i in range(n))
            if vec not in seen:
                seen.add(vec)
                raw.append((vec, w))
    vec_w = g.vector_weights or (1.0,) * len(g.vectors)
    for vec, w in zip(g.vectors, vec_w, strict=True):
        if len(vec) == n and any(vec) and vec not in seen:
            seen.add(vec)
            raw.append((vec, w))
    total = sum(w for _, w in raw)
    return [GoalRow(v, (w / total) if total > 0 else 0.0) for v, w in raw]
