"""Checks on the goal set: vector shapes, family sizes, and whether a team can cover a goal.

Goal indices follow the enumeration order agreed for :mod:`arena_studio.core.planning.goal_set`: the
families in listed order (each in ``itertools.combinations`` order), then the explicit
vectors that are not already present.

Under ``all_at_end`` and ``all_at_once`` every target must be covered at one step, so a goal
needs a different agent per target unless reach discs overlap; under ``all_visited`` one
agent may visit the targets one after another.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence

from shapely.geometry import Point

from arena_studio.core.checks.checker import Finding, finding
from arena_studio.core.checks.reach import reach_table
from arena_studio.core.scene.model import Scene
from arena_studio.core.wording import count

#: Per-goal assignment checks run over at most this many family goals (C(L, k) grows fast).
MAX_FAMILY_GOALS_CHECKED = 5000
#: At most this many goal-no-assignment findings per family; then one summary finding.
MAX_FINDINGS_PER_FAMILY = 3

SIMULTANEOUS = ("all_at_end", "all_at_once")


def check_goals(scene: Scene) -> list[Finding]:
    n_lm, n_agents = len(scene.landmarks), len(scene.agents)
    spec = scene.goals
    simultaneous = spec.rule in SIMULTANEOUS
    out: list[Finding] = []
    index = 0
    total_weight = 0.0
    goals_checked = 0
    for fi, k in enumerate(spec.families):
        size = math.comb(n_lm, k)
        weight = 1.0 if spec.family_weights is None else spec.family_weights[fi]
        total_weight += weight * size
        if n_lm and k > n_lm:
            out.append(
                finding(
                    "family-too-large",
                    f"the {k}-hot family (goals.families[{fi}]) yields no goals: the scene "
                    f"has only {count(n_lm, 'landmark')}",
                )
            )
        elif simultaneous and n_lm and k > n_agents:
            out.append(
                finding(
                    "goal-needs-more-agents",
                    f"every goal of the {k}-hot family needs {count(k, 'target')} covered at "
                    f"once under {spec.rule}, but the scene has {count(n_agents, 'agent')}",
                    goal_index=index,
                )
            )
        elif simultaneous and n_agents and goals_checked + size <= MAX_FAMILY_GOALS_CHECKED:
            goals_checked += size
            out.extend(_family_assignments(scene, k, index))
        index += size
    family_sizes = {k for k in spec.families if k <= n_lm}
    present: set[tuple[int, ...]] = set()
    for vi, vec in enumerate(spec.vectors):
        where = f"goals.vectors[{vi}]"
        weight = 1.0 if spec.vector_weights is None else spec.vector_weights[vi]
        if len(vec) != n_lm:
            out.append(
                finding(
                    "goal-vector-length",
                    f"{where} has {count(len(vec), 'entry', 'entries')} but the scene has "
                    f"{count(n_lm, 'landmark')}; "
                    "goal vectors are ordered as the landmarks list",
                )
            )
            continue
        targets = [i for i, bit in enumerate(vec) if bit]
        if not targets:
            out.append(finding("goal-empty", f"{where} has no targets (all zeros)"))
            continue
        if len(targets) in family_sizes or vec in present:
            out.append(
                finding(
                    "goal-duplicate",
                    f"{where} ({_target_names(scene, targets)}) is already in the goal set; "
                    "it is counted once",
                )
            )
            continue
        present.add(vec)
        total_weight += weight
        if simultaneous and len(targets) > n_agents:
            out.append(
                finding(
                    "goal-needs-more-agents",
                    f"goal {where} ({_target_names(scene, targets)}) needs "
                    f"{count(len(targets), 'target')} covered at once under {spec.rule}, "
                    f"but the scene has {count(n_agents, 'agent')}",
                    goal_index=index,
                )
            )
        elif n_agents:
            problem = _assignment_problem(scene, targets, simultaneous)
            if problem is not None:
                severity, text = problem
                out.append(
                    finding(
                        "goal-no-assignment",
                        f"goal {where} ({_target_names(scene, targets)}): {text}",
                        goal_index=index,
                        severity=severity,  # type: ignore[arg-type]
                    )
                )
        index += 1
    if n_lm and index == 0:
        out.append(
            finding(
                "no-goals",
                "the goal set is empty: no family yields a goal and no valid vector is listed",
            )
        )
    elif n_lm and total_weight <= 0:
        out.append(
            finding("goal-weights-zero", "every goal has weight 0, so no goal can be sampled")
        )
    return out


def _family_assignments(scene: Scene, k: int, first_index: int) -> list[Finding]:
    """Per-goal checks for a k-hot family, skipping goals whose failure is already explained.

    A target no agent reaches at all is reported once as ``landmark-unreachable``; repeating
    it for every goal that contains it would bury the report.
    """
    table = reach_table(scene)
    reachable = {li for li in range(len(scene.landmarks)) if any(r[li] for r in table)}
    out: list[Finding] = []
    failed = 0
    for offset, combo in enumerate(itertools.combinations(range(len(scene.landmarks)), k)):
        if k == 1 or not set(combo) <= reachable:
            continue
        problem = _assignment_problem(scene, list(combo), True)
        if problem is None:
            continue
        failed += 1
        if failed <= MAX_FINDINGS_PER_FAMILY:
            severity, text = problem
            out.append(
                finding(
                    "goal-no-assignment",
                    f"{k}-hot goal {_target_names(scene, list(combo))}: {text}",
                    goal_index=first_index + offset,
                    severity=severity,  # type: ignore[arg-type]
                )
            )
    if failed > MAX_FINDINGS_PER_FAMILY:
        out.append(
            finding(
                "goal-no-assignment",
                f"... and {failed - MAX_FINDINGS_PER_FAMILY} more {k}-hot goals with the "
                "same problem",
            )
        )
    return out


def _assignment_problem(
    scene: Scene, targets: Sequence[int], simultaneous: bool
) -> tuple[str, str] | None:
    """Why the team cannot cover ``targets`` (severity, text), or None when it can."""
    table = reach_table(scene)
    missing = [li for li in targets if not any(row[li] for row in table)]
    if missing:
        return "error", f"no agent can reach {_target_names(scene, missing)}"
    if not simultaneous:
        return None
    matched = _max_matching(targets, table)
    if matched == len(targets):
        return None
    text = (
        f"only {matched} of its {len(targets)} targets can be covered at once by distinct "
        "agents (the agents that can reach them are too few)"
    )
    if _some_discs_overlap(scene, targets):
        return "warning", text + "; overlapping reach discs may let one agent cover two"
    return "error", text


def _max_matching(targets: Sequence[int], table: tuple[tuple[bool, ...], ...]) -> int:
    """Size of a maximum matching targets -> distinct agents (Kuhn's augmenting paths)."""
    owner: dict[int, int] = {}  # agent -> target

    def augment(t: int, seen: set[int]) -> bool:
        for a, row in enumerate(table):
            if row[t] and a not in seen:
                seen.add(a)
                if a not in owner or augment(owner[a], seen):
                    owner[a] = t
                    return True
        return False

    return sum(1 for t in targets if augment(t, set()))


def _some_discs_overlap(scene: Scene, targets: Sequence[int]) -> bool:
    lms = [scene.landmarks[i] for i in targets]
    return any(
        Point(a.position).distance(Point(b.position)) <= a.reach_radius + b.reach_radius
        for a, b in itertools.combinations(lms, 2)
    )


def _target_names(scene: Scene, targets: Sequence[int]) -> str:
    return ", ".join(f"'{scene.landmarks[i].id}'" for i in targets)
