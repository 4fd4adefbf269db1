"""The goal set of a scene: every team goal as a multi-hot vector, with sampling weights.

Order (a contract other parts rely on): the k-hot families in the order the scene lists
them, each in :func:`itertools.combinations` order, then the explicit vectors that are not
already present. A duplicate (an explicit vector equal to an earlier goal) is not listed
again; its weight is added to the goal already listed, so its extra weight still counts.

Weights: every goal of family k gets that family's weight, every explicit vector its own
(default 1 each); the table divides by the total so the weights form a distribution. Bad
entries (a vector of the wrong length or with no ones, a k larger than the landmark count)
are left out and reported in :attr:`GoalTable.problems`; nothing here raises on bad specs.

Public API::

    from arena_studio.core.planning.goal_set import enumerate_goals, GoalTable
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from arena_studio.core.scene.model import Scene

#: Largest goal table we build; a family that would exceed it is refused with a reason.
MAX_GOALS = 10_000

GoalKind = Literal["individual", "cooperative"]


@dataclass(frozen=True)
class GoalProblem:
    """Something wrong (or worth knowing) about the scene's goal set, naming the field."""

    severity: Literal["error", "warning", "info"]
    where: str  # field path, e.g. "goals.vectors[2]"
    message: str

    def __str__(self) -> str:
        return f"{self.where}: {self.message}"


@dataclass(eq=False)
class GoalTable:
    """All goals of a scene. ``vectors`` (G, L) uint8, ``weights`` (G,) summing to 1."""

    landmark_ids: tuple[str, ...]
    vectors: np.ndarray
    weights: np.ndarray
    kinds: list[GoalKind]
    sources: list[str]  # where each goal came from: "families[0] (k=1)" or "vectors[2]"
    problems: list[GoalProblem] = field(default_factory=list)

    def __len__(self) -> int:
        return int(self.vectors.shape[0])

    def targets(self, i: int) -> tuple[int, ...]:
        """Landmark indices of goal ``i`` in ascending order."""
        return tuple(int(j) for j in np.flatnonzero(self.vectors[i]))

    def target_ids(self, i: int) -> tuple[str, ...]:
        return tuple(self.landmark_ids[j] for j in self.targets(i))

    def index_of(self, vector: object) -> int | None:
        """Position of a goal vector in the table, or None when it is not a goal."""
        v = np.asarray(vector, dtype=np.uint8).reshape(-1)
        if v.shape[0] != self.vectors.shape[1]:
            return None
        hits = np.flatnonzero(np.all(self.vectors == v, axis=1))
        return int(hits[0]) if hits.size else None

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """(n,) goal indices drawn from the weights with the caller's seeded Generator."""
        if len(self) == 0:
            raise ValueError("the scene has no goals to sample (see the goal table's problems)")
        return rng.choice(len(self), size=int(n), p=self.weights)

    @property
    def has_errors(self) -> bool:
        return any(p.severity == "error" for p in self.problems)


def kind_of(vector: np.ndarray) -> GoalKind:
    return "individual" if int(np.count_nonzero(vector)) == 1 else "cooperative"


def k_hot(count: int, k: int) -> np.ndarray:
    """(C(count, k), count) uint8: every k-hot vector, in itertools.combinations order."""
    combos = np.array(list(itertools.combinations(range(count), k)), dtype=np.int64)
    out = np.zeros((combos.shape[0], count), dtype=np.uint8)
    if combos.size:
        out[np.arange(combos.shape[0])[:, None], combos] = 1
    return out


def enumerate_goals(scene: Scene) -> GoalTable:
    """Build the goal table of ``scene`` (order and weights: see the module docstring)."""
    spec = scene.goals
    count = len(scene.landmarks)
    problems: list[GoalProblem] = []
    rows: list[np.ndarray] = []
    weights: list[float] = []
    sources: list[str] = []
    seen: dict[bytes, int] = {}

    def add(vector: np.ndarray, weight: float, source: str) -> None:
        key = vector.tobytes()
        if key in seen:
            first = seen[key]
            weights[first] += weight
            problems.append(
                GoalProblem(
                    "info",
                    source,
                    f"same goal as {sources[first]}; listed once, weights added",
                )
            )
            return
        seen[key] = len(rows)
        rows.append(vector)
        weights.append(weight)
        sources.append(source)

    if count == 0:
        problems.append(GoalProblem("error", "landmarks", "the scene has no landmarks: no goals"))
    total_goals = 0
    for fi, k in enumerate(spec.families):
        where = f"goals.families[{fi}]"
        w = 1.0 if spec.family_weights is None else float(spec.family_weights[fi])
        if k < 1:
            problems.append(GoalProblem("error", where, f"k={k}: a goal needs k >= 1 targets"))
            continue
        if count and k > count:
            problems.append(
                GoalProblem(
                    "error",
                    where,
                    f"k={k} but the scene has only {count} landmark"
                    f"{'s' if count != 1 else ''}: no {k}-hot goals",
                )
            )
            continue
        if not count:
            continue
        size = math.comb(count, k)
        if total_goals + size > MAX_GOALS:
            problems.append(
                GoalProblem(
                    "error",
                    where,
                    f"k={k} over {count} landmarks gives {size} goals, more than the limit of "
                    f"{MAX_GOALS}; family left out",
                )
            )
            continue
        total_goals += size
        for vector in k_hot(count, k):
            add(vector, w, f"families[{fi}] (k={k})")

    for vi, raw in enumerate(spec.vectors):
        where = f"goals.vectors[{vi}]"
        w = 1.0 if spec.vector_weights is None else float(spec.vector_weights[vi])
        if len(raw) != count:
            problems.append(
                GoalProblem(
                    "error",
                    where,
                    f"has {len(raw)} entries but the scene has {count} landmarks "
                    "(one entry per landmark, in order)",
                )
            )
            continue
        vector = np.array(raw, dtype=np.uint8)
        if not np.any(vector):
            problems.append(
                GoalProblem("error", where, "has no 1s: a goal needs at least one target")
            )
            continue
        add(vector, w, f"vectors[{vi}]")

    vectors = np.array(rows, dtype=np.uint8).reshape(len(rows), count)
    raw_weights = np.array(weights, dtype=np.float64)
    total = float(raw_weights.sum())
    if rows and total > 0:
        norm = raw_weights / total
    elif rows:
        problems.append(
            GoalProblem("error", "goals.weights", "every goal weight is 0; sampling uniformly")
        )
        norm = np.full(len(rows), 1.0 / len(rows))
    else:
        if count:
            problems.append(GoalProblem("error", "goals", "the goal set is empty"))
        norm = np.zeros((0,), dtype=np.float64)
    return GoalTable(
        landmark_ids=tuple(lm.id for lm in scene.landmarks),
        vectors=vectors,
        weights=norm,
        kinds=[kind_of(v) for v in vectors],
        sources=sources,
        problems=problems,
    )


__all__ = ["MAX_GOALS", "GoalKind", "GoalProblem", "GoalTable", "enumerate_goals", "k_hot"]
