"""Par time of a team goal: a lower bound on the time to success, with who goes where.

Travel time = shortest collision-free path length (:mod:`paths`) / the agent's top speed;
turning and acceleration are ignored, so the par time is a bound no real run can beat. The
scene's hold time is added the way the success rule needs it: once after the last arrival
under the simultaneous rules, and under ``all_visited`` once per target an agent must hold
on its own (consecutive targets whose reach regions overlap can be held together).

- ``all_at_end`` / ``all_at_once``: every target needs its own agent at the same time, so
  the par time is the bottleneck (min-max) assignment of distinct agents to targets, ties
  broken by the smallest total (:func:`assignment.bottleneck_assignment`). Where reach discs
  overlap, one agent may cover several targets from a point inside all their discs (as
  :func:`observe.goal_reached` counts it); then, up to :data:`EXACT_LIMIT` targets, every
  split of the targets into such groups is searched exactly. Otherwise more targets than
  agents is infeasible under these rules.
- ``all_visited``: agents may visit several targets in turn. The cost of an order is the
  start-to-first-target time plus, between targets, the shortest distance between their reach
  regions (:meth:`PathPlanner.landmark_gap`, a lower bound on that leg). Up to
  :data:`EXACT_LIMIT` targets the best split and order is found exactly (Held-Karp dynamic
  programme per agent over target subsets, then the best partition of the targets among the
  agents, minimising the largest agent time, ties by the total). Beyond it the par time falls
  back to a bound (every target needs at least its nearest agent's travel time), the plan is
  greedy and ``GoalPlan.exact`` is False.

Paths are concrete polylines: for ``all_visited`` each next leg starts where the previous one
entered a reach disc, so ``GoalPlan.path_time`` (the slowest agent along its polylines) may
exceed the par time a little. For start regions the par time uses the region's best point;
``par_time_worst`` repeats the plan for its worst sampled point.

Public API::

    from arena_studio.core.planning.partime import plan_goal, plan_all, GoalPlan
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from arena_studio.core.geometry.paths import PathPlanner, Route, polyline_length, shared_planner
from arena_studio.core.planning.assignment import bottleneck_assignment
from arena_studio.core.planning.goal_set import GoalTable, enumerate_goals
from arena_studio.core.scene.model import RULES, Scene

#: Largest number of targets planned exactly under ``all_visited``.
EXACT_LIMIT = 8


@dataclass(frozen=True, eq=False)
class GoalPlan:
    """The plan for one goal. ``assignment`` maps agent id -> landmark ids in visiting order."""

    vector: tuple[int, ...]
    rule: str
    feasible: bool
    par_time: float | None
    assignment: dict[str, list[str]] = field(default_factory=dict)
    paths: dict[str, np.ndarray] = field(default_factory=dict)
    reason: str | None = None
    exact: bool = True
    par_time_worst: float | None = None  # start regions: the plan from their worst point
    path_time: float | None = None  # slowest agent's travel along the returned polylines
    note: str | None = None
    hold_time: float = 0.0  # the scene's hold time, included in par_time

    def to_dict(self) -> dict[str, Any]:
        return {
            "vector": list(self.vector),
            "rule": self.rule,
            "feasible": self.feasible,
            "par_time": self.par_time,
            "par_time_worst": self.par_time_worst,
            "exact": self.exact,
            "hold_time": self.hold_time,
            "assignment": {k: list(v) for k, v in self.assignment.items()},
            "reason": self.reason,
            "note": self.note,
        }


def _infeasible(vector: tuple[int, ...], rule: str, reason: str) -> GoalPlan:
    return GoalPlan(vector, rule, False, None, reason=reason)


def _validate(scene: Scene, vector: Any, rule: str) -> tuple[tuple[int, ...], str | None]:
    try:
        v = tuple(int(x) for x in np.asarray(vector).reshape(-1))
    except (TypeError, ValueError):
        return (), "goal vector must be a list of 0s and 1s"
    count = len(scene.landmarks)
    if rule not in RULES:
        return v, f"unknown success rule {rule!r} (expected one of {', '.join(RULES)})"
    if any(x not in (0, 1) for x in v):
        return v, "goal vector must contain only 0s and 1s"
    if len(v) != count:
        return v, f"goal has {len(v)} entries but the scene has {count} landmarks"
    if not any(v):
        return v, "goal has no 1s: it needs at least one target"
    if not scene.agents:
        return v, "the scene has no agents"
    return v, None


def plan_goal(
    scene: Scene, vector: Any, rule: str | None = None, planner: PathPlanner | None = None
) -> GoalPlan:
    """Par time, assignment and paths for one goal vector (reasons instead of exceptions).

    Without ``planner`` a planner shared per scene value is used, so repeated calls reuse
    the path cache.
    """
    rule = scene.goals.rule if rule is None else rule
    v, problem = _validate(scene, vector, rule)
    if problem is not None:
        return _infeasible(v, rule, problem)
    planner = shared_planner(scene) if planner is None else planner
    targets = [i for i, bit in enumerate(v) if bit]
    agents = scene.agents
    routes: list[list[Route | None]] = []
    best = np.full((len(agents), len(targets)), np.inf)
    worst = np.full_like(best, np.inf)
    for a, agent in enumerate(agents):
        row: list[Route | None] = []
        for k, lm in enumerate(targets):
            route, _ = planner.route_to_landmark(a, lm)
            row.append(route)
            if route is not None:
                best[a, k] = route.length / agent.max_speed
                wl = route.worst_length if route.worst_length is not None else route.length
                worst[a, k] = wl / agent.max_speed
        routes.append(row)
    for k, lm in enumerate(targets):
        if not np.any(np.isfinite(best[:, k])):
            return _infeasible(v, rule, _unreachable_reason(scene, planner, lm))
    hold = float(scene.goals.hold_time)
    if rule == "all_visited":
        return _plan_visits(scene, planner, v, targets, best, worst, routes)
    plan = _plan_together(scene, planner, v, rule, targets, best, worst, routes)
    if not plan.feasible or hold <= 0 or plan.par_time is None:
        return plan
    # success needs the targets covered for the hold time after the last arrival
    worst_par = None if plan.par_time_worst is None else plan.par_time_worst + hold
    return replace(plan, par_time=plan.par_time + hold, par_time_worst=worst_par, hold_time=hold)


def _unreachable_reason(scene: Scene, planner: PathPlanner, landmark: int) -> str:
    lm = scene.landmarks[landmark]
    if all(planner.target(a.radius, landmark).is_empty for a in scene.agents):
        return (
            f"landmark '{lm.id}' is out of reach for every agent: its reach disc (radius "
            f"{lm.reach_radius:g} m) does not meet any agent's free space (it lies inside an "
            "obstacle, outside the rooms, or too close to a wall for the agents' size)"
        )
    _, why = planner.route_to_landmark(0, landmark)
    return f"no agent can reach landmark '{lm.id}' (agent '{scene.agents[0].id}': {why})"


def _plan_together(
    scene: Scene,
    planner: PathPlanner,
    v: tuple[int, ...],
    rule: str,
    targets: list[int],
    best: np.ndarray,
    worst: np.ndarray,
    routes: list[list[Route | None]],
) -> GoalPlan:
    agents = scene.agents
    overlaps = _overlaps(scene, planner, targets)
    if overlaps and len(targets) <= EXACT_LIMIT:
        return _plan_groups(scene, planner, v, rule, targets, best, worst, overlaps)
    if len(targets) > len(agents):
        return _infeasible(
            v,
            rule,
            f"goal has {len(targets)} targets but the scene has only {len(agents)} agents; "
            f"under {rule} every target needs its own agent at the same time (no two "
            "targets' reach discs overlap, so no agent can cover two)"
            if not overlaps
            else f"goal has {len(targets)} targets but the scene has only {len(agents)} "
            f"agents (overlapping reach discs are used only up to {EXACT_LIMIT} targets)",
        )
    found = bottleneck_assignment(best)
    if found is None:
        return _infeasible(
            v, rule, "no assignment gives every target its own agent that can reach it"
        )
    assignment: dict[str, list[str]] = {}
    paths: dict[str, np.ndarray] = {}
    for k, a in enumerate(found.agent_of):
        agent_id = agents[a].id
        assignment[agent_id] = [scene.landmarks[targets[k]].id]
        route = routes[a][k]
        assert route is not None
        paths[agent_id] = route.points
    worst_time = None
    if np.any(worst != best):
        w = bottleneck_assignment(worst)
        worst_time = None if w is None else w.bottleneck
    return GoalPlan(
        v,
        rule,
        True,
        found.bottleneck,
        assignment,
        paths,
        par_time_worst=worst_time,
        path_time=found.bottleneck,
    )


def _overlaps(scene: Scene, planner: PathPlanner, targets: list[int]) -> dict[float, np.ndarray]:
    """Per agent radius, the (K, K) bool matrix of target pairs one agent can cover at once.

    Empty when no pair overlaps for any radius (the common case: plain assignment).
    """
    out: dict[float, np.ndarray] = {}
    k = len(targets)
    for radius in sorted({float(a.radius) for a in scene.agents}):
        pair = np.eye(k, dtype=bool)
        for i in range(k):
            for j in range(i + 1, k):
                pair[i, j] = pair[j, i] = planner.reach_overlap(radius, targets[i], targets[j])
        if pair.sum() > k:
            out[radius] = pair
    if not out:
        return {}
    for radius in {float(a.radius) for a in scene.agents} - out.keys():
        out[radius] = np.eye(k, dtype=bool)
    return out


def _plan_groups(
    scene: Scene,
    planner: PathPlanner,
    v: tuple[int, ...],
    rule: str,
    targets: list[int],
    best: np.ndarray,
    worst: np.ndarray,
    overlaps: dict[float, np.ndarray],
) -> GoalPlan:
    """Simultaneous rules where reach discs overlap: one agent may cover a group of targets
    from a point inside all their discs. Exact: every split of the targets into groups, each
    to its own agent, minimising (largest time, total) (:func:`_best_partition`)."""
    k = len(targets)
    full = 1 << k
    costs: list[list[float]] = []
    worst_costs: list[list[float]] = []
    routes: dict[tuple[int, int], Route] = {}
    for a, agent in enumerate(scene.agents):
        pair = overlaps[float(agent.radius)]
        row, wrow = [0.0] * full, [0.0] * full
        for mask in range(1, full):
            members = [t for t in range(k) if mask >> t & 1]
            if len(members) == 1:
                row[mask], wrow[mask] = best[a, members[0]], worst[a, members[0]]
                continue
            if not all(pair[i, j] for i in members for j in members):
                row[mask] = wrow[mask] = math.inf
                continue
            route, _ = planner.route_to_group(a, tuple(targets[t] for t in members))
            if route is None:
                row[mask] = wrow[mask] = math.inf
                continue
            routes[(a, mask)] = route
            row[mask] = route.length / agent.max_speed
            wl = route.worst_length if route.worst_length is not None else route.length
            wrow[mask] = wl / agent.max_speed
        costs.append(row)
        worst_costs.append(wrow)
    found = _best_partition(costs, k)
    if found is None:
        return _infeasible(
            v,
            rule,
            f"goal has {k} targets and no way for the {len(scene.agents)} agents to cover them "
            "all at once, even with one agent covering targets whose reach discs overlap",
        )
    (par, _), subsets = found
    assignment: dict[str, list[str]] = {}
    paths: dict[str, np.ndarray] = {}
    for a, mask in enumerate(subsets):
        if not mask:
            continue
        members = [t for t in range(k) if mask >> t & 1]
        agent = scene.agents[a]
        assignment[agent.id] = [scene.landmarks[targets[t]].id for t in members]
        if len(members) == 1:
            route, _ = planner.route_to_landmark(a, targets[members[0]])
        else:
            route = routes[(a, mask)]
        assert route is not None
        paths[agent.id] = route.points
    worst_par = None
    if worst_costs != costs:
        wf = _best_partition(worst_costs, k)
        worst_par = None if wf is None else wf[0][0]
    shared = [aid for aid, lms in assignment.items() if len(lms) > 1]
    note = (
        f"{', '.join(shared)} covers several targets at once (their reach discs overlap)"
        if shared
        else None
    )
    return GoalPlan(v, rule, True, par, assignment, paths, None, True, worst_par, par, note)


# -- all_visited ---------------------------------------------------------------------------
Key = tuple[float, float]  # (largest agent time, total time): compared lexicographically


def _orders(start: np.ndarray, gap: np.ndarray) -> tuple[list[float], list[list[int]]]:
    """Held-Karp: for every subset of targets, the cheapest visiting order from the start."""
    k = start.shape[0]
    full = 1 << k
    dp = np.full((full, k), np.inf)
    parent = np.full((full, k), -1, dtype=np.int64)
    for t in range(k):
        dp[1 << t, t] = start[t]
    for mask in range(1, full):
        members = [t for t in range(k) if mask >> t & 1]
        if len(members) < 2:
            continue
        for last in members:
            prev_mask = mask ^ (1 << last)
            prevs = [p for p in members if p != last]
            cand = dp[prev_mask, prevs] + gap[prevs, last]
            j = int(np.argmin(cand))
            if cand[j] < dp[mask, last]:
                dp[mask, last] = cand[j]
                parent[mask, last] = prevs[j]
    cost = [0.0] * full
    order: list[list[int]] = [[] for _ in range(full)]
    for mask in range(1, full):
        last = int(np.argmin(dp[mask]))
        cost[mask] = float(dp[mask, last])
        if math.isinf(cost[mask]):
            continue
        seq, m, t = [], mask, last
        while t >= 0:
            seq.append(t)
            m, t = m ^ (1 << t), int(parent[m, t])
        order[mask] = seq[::-1]
    return cost, order


def _best_partition(costs: list[list[float]], k: int) -> tuple[Key, list[int]] | None:
    """Split the targets among agents (disjoint subsets) minimising (max time, total)."""
    full = (1 << k) - 1
    inf: Key = (math.inf, math.inf)
    prev: list[Key] = [(c, c) for c in costs[0]]
    choice: list[list[int]] = [list(range(full + 1))]
    for a in range(1, len(costs)):
        cur: list[Key] = [inf] * (full + 1)
        pick = [0] * (full + 1)
        ca = costs[a]
        for u in range(full + 1):
            s = u
            while True:
                rest = prev[u ^ s]
                key = (max(rest[0], ca[s]), rest[1] + ca[s])
                if key < cur[u]:
                    cur[u], pick[u] = key, s
                if s == 0:
                    break
                s = (s - 1) & u
        prev = cur
        choice.append(pick)
    if math.isinf(prev[full][0]):
        return None
    subsets = [0] * len(costs)
    u = full
    for a in range(len(costs) - 1, -1, -1):
        subsets[a] = choice[a][u]
        u ^= subsets[a]
    return prev[full], subsets


def _visit_costs(scene: Scene, planner: PathPlanner, targets: list[int]) -> list[np.ndarray]:
    """Per agent: (K, K) travel time between targets' reach regions."""
    out = []
    for agent in scene.agents:
        gap = np.zeros((len(targets), len(targets)))
        for i, li in enumerate(targets):
            for j, lj in enumerate(targets):
                if i < j:
                    d = planner.landmark_gap(agent.radius, li, lj) / agent.max_speed
                    gap[i, j] = gap[j, i] = d
        out.append(gap)
    return out


def _plan_visits(
    scene: Scene,
    planner: PathPlanner,
    v: tuple[int, ...],
    targets: list[int],
    best: np.ndarray,
    worst: np.ndarray,
    routes: list[list[Route | None]],
) -> GoalPlan:
    rule = "all_visited"
    # each target must stay covered for the hold time; an agent moving on to a target whose
    # reach region it is not already in (gap > 0) cannot be holding both at once
    hold = float(scene.goals.hold_time)
    gaps = [g + hold * (g > 0) for g in _visit_costs(scene, planner, targets)]
    best, worst = best + hold, worst + hold
    k = len(targets)
    if k <= EXACT_LIMIT:
        tables = [_orders(best[a], gaps[a]) for a in range(len(scene.agents))]
        found = _best_partition([t[0] for t in tables], k)
        if found is None:
            return _infeasible(v, rule, "no split of the targets among the agents reaches all")
        (par, _), subsets = found
        sequences = [tables[a][1][s] if s else [] for a, s in enumerate(subsets)]
        exact, note = True, None
        worst_par = None
        if np.any(worst != best):
            wt = [_orders(worst[a], gaps[a])[0] for a in range(len(scene.agents))]
            wf = _best_partition(wt, k)
            worst_par = None if wf is None else wf[0][0]
    else:
        par = float(np.max(np.min(best, axis=0)))
        sequences = _greedy_sequences(best, gaps)
        exact = False
        worst_par = float(np.max(np.min(worst, axis=0)))
        note = (
            f"{k} targets (more than {EXACT_LIMIT}): par time is a bound (each target's "
            "nearest agent), the assignment a greedy plan"
        )
    assignment: dict[str, list[str]] = {}
    paths: dict[str, np.ndarray] = {}
    path_time = 0.0
    for a, seq in enumerate(sequences):
        if not seq:
            continue
        agent = scene.agents[a]
        assignment[agent.id] = [scene.landmarks[targets[t]].id for t in seq]
        pts = _chain(planner, a, [targets[t] for t in seq], routes[a][seq[0]])
        paths[agent.id] = pts
        path_time = max(path_time, polyline_length(pts) / agent.max_speed)
    return GoalPlan(
        v, rule, True, par, assignment, paths, None, exact, worst_par, path_time, note, hold
    )


def _chain(planner: PathPlanner, agent: int, order: list[int], first: Route | None) -> np.ndarray:
    """Concrete polyline visiting ``order``: each leg starts where the last one ended."""
    assert first is not None
    pieces = [first.points]
    here = first.end
    for lm in order[1:]:
        route = planner.path_to_landmark(agent, lm, start_xy=here)
        if route is None:  # cannot happen for targets in one part; keep what we have
            break
        pieces.append(route.points[1:])
        here = route.end
    return np.concatenate(pieces, axis=0)


def _greedy_sequences(best: np.ndarray, gaps: list[np.ndarray]) -> list[list[int]]:
    """Nearest-first plan: each target (closest first) joins the agent finishing it soonest."""
    agents = best.shape[0]
    seqs: list[list[int]] = [[] for _ in range(agents)]
    clock = np.zeros(agents)
    for t in np.argsort(np.min(best, axis=0), kind="stable"):
        arrive = np.array(
            [
                clock[a] + (best[a, t] if not seqs[a] else gaps[a][seqs[a][-1], t])
                for a in range(agents)
            ]
        )
        a = int(np.argmin(arrive))
        seqs[a].append(int(t))
        clock[a] = arrive[a]
    return seqs


def plan_all(
    scene: Scene, table: GoalTable | None = None, planner: PathPlanner | None = None
) -> list[GoalPlan]:
    """Plans for every goal of the scene's goal table, sharing one path cache."""
    table = enumerate_goals(scene) if table is None else table
    planner = shared_planner(scene) if planner is None else planner
    return [plan_goal(scene, table.vectors[i], planner=planner) for i in range(len(table))]


__all__ = ["EXACT_LIMIT", "GoalPlan", "plan_all", "plan_goal"]
