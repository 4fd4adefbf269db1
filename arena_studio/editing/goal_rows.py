"""The scene's goal list for the goals panel, in ``core.goals.enumerate_goals`` order."""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numpy as np

from arena_studio.core.planning.goal_set import enumerate_goals
from arena_studio.core.scene.model import Scene


@dataclass(frozen=True)
class GoalRow:
    vector: tuple[int, ...]
    weight: float  # normalised sampling weight
    targets: tuple[int, ...] = field(default=(), compare=False)

    def __post_init__(self) -> None:
        if not self.targets:  # worked out once: thousands of landmarks make it costly
            object.__setattr__(self, "targets", tuple(i for i, b in enumerate(self.vector) if b))

    @property
    def kind(self) -> str:
        return "individual" if len(self.targets) == 1 else "cooperative"


def goal_rows(scene: Scene) -> list[GoalRow]:
    """``core.goals.enumerate_goals`` as rows; it never raises on a bad goal spec (bad
    entries are left out and reported by the checker)."""
    return list(_rows(scene))


@functools.lru_cache(maxsize=4)
def _rows(scene: Scene) -> tuple[GoalRow, ...]:
    """Rows per scene value (scenes hash by value); the panel asks several times an edit."""
    table = enumerate_goals(scene)
    return tuple(
        GoalRow(tuple(v.tolist()), float(w), tuple(np.flatnonzero(v).tolist()))
        for v, w in zip(table.vectors, table.weights, strict=True)
    )
