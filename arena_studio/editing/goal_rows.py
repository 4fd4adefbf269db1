"""The scene's goal list for the goals panel, in ``core.goals.enumerate_goals`` order."""

from __future__ import annotations

from dataclasses import dataclass

from arena_studio.core.planning.goal_set import enumerate_goals
from arena_studio.core.scene.model import Scene


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
    """``core.goals.enumerate_goals`` as rows; it never raises on a bad goal spec (bad
    entries are left out and reported by the checker)."""
    table = enumerate_goals(scene)
    return [
        GoalRow(tuple(int(b) for b in v), float(w))
        for v, w in zip(table.vectors, table.weights, strict=True)
    ]
