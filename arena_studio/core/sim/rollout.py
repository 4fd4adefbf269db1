"""Preview rollout: scripted (not learned) agents that record realistic tapes of a scene.

Each episode draws a team goal from the scene's goal set (seeded). ``shared`` mode gives that
goal to every agent and splits its targets by the par-time assignment
(:func:`.planning.partime.plan_goal`); ``independent`` mode lets every agent draw its
own goal and act on its own plan of it, so cooperative goals often fail. ``greedy`` mode gives
every agent the team goal (they are aligned) but no split: each drives to the target nearest
to it, waits there for a patience of its own (drawn between :data:`PATIENCE` seconds), then
moves on to the nearest target it has not visited, and stays at the last one. Nobody knows
what the others do, so two agents often crowd one target while another stays empty, or reach
their targets at different times. Every agent drives
the shortest collision-free route (:class:`arena_studio.core.geometry.paths.PathPlanner`) to each of
its targets with :class:`~arena_studio.core.sim.controller.PathFollower` on unicycle kinematics
(:mod:`arena_studio.core.sim.kinematics`); a step that would carry an agent out of its free space
becomes a turn in place. Agents do not avoid each other (the metrics count their collisions).

An episode ends when every agent has settled (arrived, idle or stuck) for the hold time plus
one second, or at its time limit: ``max_time`` when given, else the scene's
:func:`default_time_limit` (twice the longest par time of any goal plus 10 s, at least 20 s,
so even a detour through every target fits). With ``par_limit=(lo, hi)`` each episode's limit
is instead drawn between ``lo`` and ``hi`` times its team goal's par time (capped by the
limit above); below 1x the team cannot make it, so such tapes show agents still on their way
when time runs out.

Two knobs make sweeps of tapes whose quality varies (e.g. the demo sweep of ``arena-studio
runs``): ``skill`` in (0, 1] scales every agent's top speed and turn rate to
``MIN_PACE + (1 - MIN_PACE) * skill`` of its own (1 = full speed), so with ``par_limit`` less
skilled teams run out of time more often; ``shared_share`` in [0, 1] makes each episode
``shared`` with that probability and ``independent`` otherwise (a separate random stream,
``default_rng([seed, i, 1])``, so the episodes' own draws are unchanged).

Message options (:class:`MessageOptions`) add an announcement before each episode: one agent
(the speaker) pursues the team goal and tells everyone a code word for it from a fixed code
book (goal ``g`` -> :func:`code_word`), with probability ``error`` a wrong word instead; every
other agent adopts the goal the word stands for with probability ``adopt`` and otherwise keeps
the goal it drew itself (as in ``independent`` mode). Those draws use their own stream,
``default_rng([seed, i, 2])``.

Episode ``i`` uses ``numpy.random.default_rng([seed, i])``, so any episode can be
regenerated alone. What "the same again" means: with the same inputs, package versions and
machine, a run writes a byte-identical tape. Across numpy/scipy/shapely versions and CPUs
(whose SIMD paths round differently) the floating-point results may differ in the last bits,
so a regenerated run is the same in meaning only: the same episodes, goals, outcomes,
diagnoses and step counts, every pose within :data:`REGENERATED_POSE_TOLERANCE`.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import numpy as np
import shapely
import shapely.ops
from shapely.geometry import LineString, Point

from arena_studio.core.geometry.paths import PathPlanner
from arena_studio.core.geometry.regions import free_space, region_area
from arena_studio.core.planning.goal_set import enumerate_goals
from arena_studio.core.planning.partime import plan_goal
from arena_studio.core.scene.model import Scene
from arena_studio.core.sim.controller import FollowerLimits, LegFollower, PathFollower
from arena_studio.core.sim.kinematics import unicycle_step
from arena_studio.core.tape import TapeWriter

Mode = Literal["shared", "independent", "greedy"]
MODES: tuple[str, ...] = ("shared", "independent", "greedy")
#: greedy mode: seconds an agent waits at a target before it moves on (drawn per agent)
PATIENCE = (1.0, 6.0)
#: default time limit = TIME_LIMIT_FACTOR x the longest par time + TIME_LIMIT_SLACK, >= MIN
TIME_LIMIT_FACTOR = 2.0
TIME_LIMIT_SLACK = 10.0
MIN_TIME_LIMIT = 20.0
#: an agent that moved less than this (m) over STUCK_WINDOW seconds while en route is stuck
STUCK_DISTANCE = 0.05
STUCK_WINDOW = 3.0
#: how deep (fraction of the reach radius) an agent drives into a target's reach disc
REACH_DEPTH = 0.5
#: a run regenerated on other library versions or another CPU keeps every position within
#: this many metres (and heading within this many radians) of the recorded one; same versions
#: on the same machine give the very same bytes (tests/core/sim/test_rollout.py checks both)
REGENERATED_POSE_TOLERANCE = 1e-6
#: slowest pace (share of full speed and turn rate) a skill near 0 gives
MIN_PACE = 0.2


@dataclass(frozen=True)
class MessageOptions:
    """Who announces (agent index), how often the word is wrong, how often others adopt it."""

    speaker: int = 0
    error: float = 0.0
    adopt: float = 1.0

    def __post_init__(self) -> None:
        if not 0 <= self.error <= 1:
            raise ValueError(f"message error rate must be in [0, 1], got {self.error}")
        if not 0 <= self.adopt <= 1:
            raise ValueError(f"adoption probability must be in [0, 1], got {self.adopt}")
        if self.speaker < 0:
            raise ValueError(f"speaker must be an agent index >= 0, got {self.speaker}")


#: code words start here, so a word is never mistaken for a goal's index in the goal table
CODE_OFFSET = 10


def code_word(goal_index: int) -> int:
    """The fixed code book: goal ``g`` of the goal table is announced as ``g + CODE_OFFSET``."""
    return goal_index + CODE_OFFSET


@dataclass
class EpisodeRun:
    """One simulated episode, ready for :meth:`TapeWriter.begin_episode` and ``steps``."""

    poses: np.ndarray  # (T, A, 3)
    done: np.ndarray  # (T, A) bool
    team_goal: np.ndarray
    pursued_goals: list[np.ndarray]
    roles: list[list[tuple[int, str]]]
    messages: list[dict[str, Any]]
    outcome: dict[str, Any] = field(default_factory=dict)


class Rollout:
    """Runs episodes of one scene; planner, goal table and plans are cached across episodes."""

    def __init__(self, scene: Scene, dt: float = 0.1, max_time: float | None = None) -> None:
        if not scene.agents:
            raise ValueError("the scene has no agents")
        self.scene = scene
        self.dt = float(dt)
        self.table = enumerate_goals(scene)
        if len(self.table) == 0:
            raise ValueError("the scene has no goals to draw")
        self.planner = PathPlanner(scene)
        self._assignments: dict[int, dict[int, list[int]]] = {}
        self._par: dict[int, float | None] = {}
        self.max_time = float(max_time) if max_time is not None else self.default_time_limit()
        self._free = []
        self._guards = []
        self._guard_free = []
        self.pace = 1.0  # share of full speed and turn rate; set per episode from ``skill``
        for agent in scene.agents:
            geom = free_space(scene, agent.radius)
            guard = free_space(scene, max(agent.radius - 0.002, 0.0))
            shapely.prepare(guard)
            self._free.append(geom)
            self._guards.append(guard)
            self._guard_free.append(guard.buffer(1e-6))

    # -- planning ----------------------------------------------------------------------------
    def assignment(self, goal_index: int) -> dict[int, list[int]]:
        """Agent index -> landmark indices, from the par-time plan of goal ``goal_index``."""
        if goal_index not in self._assignments:
            self._assignments[goal_index] = self._plan_assignment(goal_index)
        return self._assignments[goal_index]

    def par_time(self, goal_index: int) -> float | None:
        """Par time (s) of goal ``goal_index`` (the slower end for start regions), or None."""
        self.assignment(goal_index)
        return self._par.get(goal_index)

    def default_time_limit(self) -> float:
        """TIME_LIMIT_FACTOR x the longest par time over the goal set + TIME_LIMIT_SLACK (s),
        at least MIN_TIME_LIMIT, rounded up to a whole second."""
        pars = [self.par_time(g) for g in range(len(self.table))]
        longest = max((p for p in pars if p is not None), default=0.0)
        return float(max(MIN_TIME_LIMIT, math.ceil(TIME_LIMIT_FACTOR * longest + TIME_LIMIT_SLACK)))

    def _plan_assignment(self, goal_index: int) -> dict[int, list[int]]:
        scene = self.scene
        vector = self.table.vectors[goal_index]
        plan = plan_goal(scene, vector, planner=self.planner)
        if plan.feasible and plan.par_time is not None:
            self._par[goal_index] = max(plan.par_time, plan.par_time_worst or 0.0)
        if not plan.feasible:
            return {}
        return {
            scene.agent_index(aid): [scene.landmark_index(lid) for lid in lids]
            for aid, lids in plan.assignment.items()
        }

    def _route(self, agent: int, landmarks: list[int], start: np.ndarray) -> np.ndarray | None:
        """Route through the agent's landmarks in order, ending inside the last reach disc."""
        pts = [start[None, :]]
        here = (float(start[0]), float(start[1]))
        for lm in landmarks:
            route = self.planner.path_to_landmark(agent, lm, start_xy=here)
            if route is None:
                return None
            deeper = self._deeper(agent, lm, route.points[-1])
            pts.append(route.points[1:])
            pts.append(deeper[None, :])
            here = (float(deeper[0]), float(deeper[1]))
        return np.vstack(pts)

    def _deeper(self, agent: int, lm: int, end: np.ndarray) -> np.ndarray:
        """A point deeper in the landmark's reach disc, on a straight leg in free space.

        Planner routes end on the rim of the reach disc, where rounding can put the centre a
        hair outside it. The agent drives on towards the landmark until REACH_DEPTH of the
        radius, or to the free point nearest the landmark (a wall landmark's centre is out of
        free space), whichever is reachable in a straight line.
        """
        landmark = self.scene.landmarks[lm]
        centre = np.asarray(landmark.position, dtype=np.float64)
        target = self.planner.target(self.scene.agents[agent].radius, lm)
        if target.is_empty:
            return np.asarray(end, dtype=np.float64)
        nearest = shapely.ops.nearest_points(target, Point(centre))[0]
        deepest = np.array([nearest.x, nearest.y])
        span = deepest - end
        length = float(np.hypot(*span))
        if length < 1e-9:
            return np.asarray(end, dtype=np.float64)
        # stop where the leg first comes within REACH_DEPTH * radius of the landmark, if it does
        want = REACH_DEPTH * landmark.reach_radius
        u = span / length
        rel = end - centre
        b, c = float(rel @ u), float(rel @ rel) - want * want
        disc = b * b - c
        stop = length
        if disc >= 0:
            s_in = -b - math.sqrt(disc)
            if 0 <= s_in < length:
                stop = s_in
        for frac in (1.0, 0.5, 0.25, 0.1, 0.05):
            goal = end + u * stop * frac
            if self._guard_free[agent].covers(LineString([end, goal])):
                return goal
        return np.asarray(end, dtype=np.float64)

    # -- starts ------------------------------------------------------------------------------
    def start_poses(self, rng: np.random.Generator) -> np.ndarray:
        out = np.zeros((len(self.scene.agents), 3))
        for a, agent in enumerate(self.scene.agents):
            start = agent.start
            if start.pose is not None:
                out[a] = start.pose
                continue
            assert start.region is not None
            region = region_area(start.region).intersection(self._free[a])
            if region.is_empty:
                region = region_area(start.region)
            minx, miny, maxx, maxy = region.bounds
            for _ in range(1000):
                x, y = rng.uniform(minx, maxx), rng.uniform(miny, maxy)
                if region.covers(Point(x, y)):
                    break
            heading = start.heading if start.heading is not None else rng.uniform(-math.pi, math.pi)
            out[a] = (x, y, heading)
        return out

    # -- one episode ---------------------------------------------------------------------------
    def episode(
        self,
        seed: int,
        index: int,
        mode: Mode,
        par_limit: tuple[float, float] | None = None,
        skill: float = 1.0,
        talk: MessageOptions | None = None,
        pool: Sequence[int] | None = None,
    ) -> EpisodeRun:
        """One episode; ``pool``: goal indices the team goal cycles through by ``index``
        (the random draws stay the same, so the rest of the episode is drawn as before)."""
        if mode not in MODES:
            raise ValueError(f"unknown goal mode {mode!r} (expected {', '.join(MODES)})")
        if not 0 < skill <= 1:
            raise ValueError(f"skill must be in (0, 1], got {skill}")
        self.pace = 1.0 if skill == 1 else MIN_PACE + (1 - MIN_PACE) * float(skill)
        rng = np.random.default_rng([seed, index])
        scene = self.scene
        n_agents = len(scene.agents)
        team = int(self.table.sample(rng, 1)[0])
        if pool:
            team = int(pool[index % len(pool)])
        start = self.start_poses(rng)
        if mode == "independent":
            pursued = [int(g) for g in self.table.sample(rng, n_agents)]
        else:
            pursued = [team] * n_agents
        said: list[dict[str, Any]] = []
        if talk is not None and mode == "greedy":
            raise ValueError("announcements need goal mode shared or independent, not greedy")
        if talk is not None:
            pursued, said = self._announce(talk, seed, index, team, pursued)
        followers: list[PathFollower | LegFollower | None] = []
        roles: list[list[tuple[int, str]]] = []
        if mode == "greedy":
            patience = rng.uniform(*PATIENCE, size=n_agents)
            plans = [self._greedy_order(a, team, start[a, :2]) for a in range(n_agents)]
            for a in range(n_agents):
                follower = self._legs(a, plans[a], start[a, :2], patience[a])
                followers.append(follower)
                roles.append([(0, follower.label if follower else "waits")])
        else:
            plans = [self.assignment(g).get(a, []) for a, g in enumerate(pursued)]
            for a, agent in enumerate(scene.agents):
                route = self._route(a, plans[a], start[a, :2]) if plans[a] else None
                if route is None:
                    followers.append(None)
                    roles.append([(0, "waits")])
                    continue
                limits = FollowerLimits(
                    agent.max_speed * self.pace, agent.max_turn_rate * self.pace
                )
                followers.append(PathFollower(route, limits))
                roles.append([(0, f"heads to {scene.landmarks[plans[a][-1]].id}")])
        limit = self.max_time
        if par_limit is not None:
            factor = float(rng.uniform(*par_limit))
            par = self.par_time(team)
            if par is not None:
                limit = min(limit, max(self.dt, factor * par))
        run = self._simulate(start, followers, roles, team, pursued, plans, limit)
        if said:
            run.messages = said
        return run

    def _announce(
        self, talk: MessageOptions, seed: int, index: int, team: int, pursued: list[int]
    ) -> tuple[list[int], list[dict[str, Any]]]:
        """The speaker's announcement and the goals the others take after hearing it."""
        n_agents = len(self.scene.agents)
        if talk.speaker >= n_agents:
            raise ValueError(f"speaker {talk.speaker} but the scene has {n_agents} agents")
        rng = np.random.default_rng([seed, index, 2])
        n_goals = len(self.table)
        said_goal = team
        if rng.random() < talk.error and n_goals > 1:
            said_goal = int((team + rng.integers(1, n_goals)) % n_goals)
        own = [int(g) for g in self.table.sample(rng, n_agents)]
        adopts = rng.random(n_agents) < talk.adopt
        goals = list(pursued)
        for a in range(n_agents):
            if a == talk.speaker:
                goals[a] = team
            else:
                goals[a] = said_goal if adopts[a] else own[a]
        speaker = self.scene.agents[talk.speaker].id
        return goals, [{"from": speaker, "to": None, "step": None, "value": code_word(said_goal)}]

    def _greedy_order(self, agent: int, goal_index: int, start: np.ndarray) -> list[int]:
        """The team goal's targets in the order one agent visits them alone: nearest first."""
        left = list(self.table.targets(goal_index))
        here = (float(start[0]), float(start[1]))
        order: list[int] = []
        while left:
            best: tuple[float, int, np.ndarray] | None = None
            for lm in left:
                route = self.planner.path_to_landmark(agent, lm, start_xy=here)
                if route is not None and (best is None or route.length < best[0]):
                    best = (route.length, lm, route.points[-1])
            if best is None:
                break
            order.append(best[1])
            left.remove(best[1])
            end = self._deeper(agent, best[1], best[2])
            here = (float(end[0]), float(end[1]))
        return order

    def _legs(
        self, agent: int, order: list[int], start: np.ndarray, patience: float
    ) -> LegFollower | None:
        spec = self.scene.agents[agent]
        limits = FollowerLimits(spec.max_speed * self.pace, spec.max_turn_rate * self.pace)
        legs: list[tuple[PathFollower, str, int]] = []
        here = np.asarray(start, dtype=np.float64)
        wait = round(patience / self.dt)
        for lm in order:
            route = self._route(agent, [lm], here)
            if route is None:
                break
            legs.append((PathFollower(route, limits), self.scene.landmarks[lm].id, wait))
            here = route[-1]
        return LegFollower(legs) if legs else None

    def _simulate(
        self,
        start: np.ndarray,
        followers: list[PathFollower | LegFollower | None],
        roles: list[list[tuple[int, str]]],
        team: int,
        pursued: list[int],
        plans: list[list[int]],
        limit: float,
    ) -> EpisodeRun:
        scene, dt = self.scene, self.dt
        n_agents = len(scene.agents)
        max_steps = max(1, round(limit / dt))
        settle_steps = math.ceil((scene.goals.hold_time + 1.0) / dt)
        window = round(STUCK_WINDOW / dt)
        poses = np.empty((max_steps + 1, n_agents, 3))
        done = np.zeros((max_steps + 1, n_agents), dtype=bool)
        poses[0] = start
        stuck = [False] * n_agents
        settled_for = 0
        t = 0
        v = np.zeros(n_agents)
        w = np.zeros(n_agents)
        while t < max_steps:
            current = poses[t]
            for a, f in enumerate(followers):
                if f is None or stuck[a]:
                    v[a] = w[a] = 0.0
                    continue
                v[a], w[a] = f.command(current[a], dt)
            nxt = unicycle_step(current, v, w, dt)
            for a, f in enumerate(followers):
                if f is not None and v[a] > 0:
                    inside = shapely.intersects_xy(self._guards[a], nxt[a, 0], nxt[a, 1])
                    if not inside:
                        v[a], w[a] = f.turn_towards_carrot(current[a], dt)
                        nxt[a] = unicycle_step(current[a], v[a], w[a], dt)
            t += 1
            poses[t] = nxt
            for a, f in enumerate(followers):
                if f is None:
                    continue
                if isinstance(f, LegFollower):
                    if f.label != roles[a][-1][1]:
                        roles[a].append((t, f.label))
                elif f.finished and not done[t - 1, a]:
                    roles[a].append((t, f"holds {scene.landmarks[plans[a][-1]].id}"))
                done[t, a] = f.finished
                waiting = isinstance(f, LegFollower) and f.waiting
                if not f.finished and not waiting and not stuck[a] and t >= window:
                    moved = np.hypot(*(poses[t, a, :2] - poses[t - window, a, :2]))
                    turned = abs(poses[t, a, 2] - poses[t - window, a, 2])
                    if moved < STUCK_DISTANCE and turned < 0.1:
                        stuck[a] = True
                        roles[a].append((t, "stuck"))
            settled = all(f is None or f.finished or stuck[a] for a, f in enumerate(followers))
            settled_for = settled_for + 1 if settled else 0
            if settled_for >= settle_steps:
                break
        reason = "settled" if settled_for >= settle_steps else "time limit"
        ids = [lm.id for lm in scene.landmarks]
        goal_words = ["+".join(ids[i] for i in self.table.targets(g)) for g in pursued]
        messages = [
            {"from": scene.agents[a].id, "to": "all", "goal": goal_words[a]}
            for a in range(n_agents)
        ]
        return EpisodeRun(
            poses=poses[: t + 1].copy(),
            done=done[: t + 1].copy(),
            team_goal=self.table.vectors[team].copy(),
            pursued_goals=[self.table.vectors[g].copy() for g in pursued],
            roles=roles,
            messages=messages,
            outcome={"ended": reason, "time": round(t * dt, 6), "time_limit": round(limit, 6)},
        )


def cooperative_pool(sim: Rollout, seed: int, size: int) -> list[int]:
    """``size`` cooperative goals (two targets or more) drawn once per seed, so a tape shows
    each of them several times: successes and failures of one goal, side by side."""
    coop = [g for g in range(len(sim.table.vectors)) if len(sim.table.targets(g)) >= 2]
    if not coop:
        raise ValueError("the scene has no cooperative goal for a goal pool")
    rng = np.random.default_rng([seed, 7919])
    picked = rng.choice(len(coop), size=min(size, len(coop)), replace=False)
    return [coop[int(k)] for k in sorted(picked.tolist())]


def run_rollout(
    scene: Scene,
    out: str | Path,
    *,
    episodes: int,
    seed: int,
    mode: Mode,
    max_time: float | None = None,
    dt: float = 0.1,
    advance: Callable[[int], None] | None = None,
    keep_partial: bool = False,
    par_limit: tuple[float, float] | None = None,
    skill: float = 1.0,
    shared_share: float | None = None,
    metadata: Mapping[str, Any] | None = None,
    talk: MessageOptions | None = None,
    goal_pool: int | None = None,
    every_other: Mode | None = None,
) -> int:
    """Simulate ``episodes`` episodes into the tape ``out``; returns the episodes written.

    ``max_time`` None takes the scene's default time limit (see the module docstring).
    ``skill`` and ``shared_share`` are the sweep knobs of the module docstring (with
    ``shared_share`` given, ``mode`` is only recorded as the tape's default); ``metadata``
    is added to the tape header's (e.g. ``condition``, ``seed``, ``step``); ``talk`` adds
    the announcement of :class:`MessageOptions`.
    """
    if shared_share is not None and not 0 <= shared_share <= 1:
        raise ValueError(f"shared_share must be in [0, 1], got {shared_share}")
    sim = Rollout(scene, dt=dt, max_time=max_time)
    pool = cooperative_pool(sim, seed, goal_pool) if goal_pool else None
    meta: dict[str, Any] = {
        "generator": "arena-studio rollout",
        "mode": mode,
        "seed": int(seed),
        "max_time": sim.max_time,
        "note": "scripted preview agents, not a learned policy",
    }
    if par_limit is not None:
        meta["par_limit"] = [float(par_limit[0]), float(par_limit[1])]
    if skill != 1:
        meta["skill"] = float(skill)
    if goal_pool:
        meta["goal_pool"] = int(goal_pool)
    if every_other is not None:
        if every_other not in MODES:
            raise ValueError(f"unknown goal mode {every_other!r} (expected {', '.join(MODES)})")
        meta["every_other"] = every_other
    if shared_share is not None:
        meta["shared_share"] = float(shared_share)
    if talk is not None:
        meta["messages"] = {
            "speaker": scene.agents[min(talk.speaker, len(scene.agents) - 1)].id,
            "error": float(talk.error),
            "adopt": float(talk.adopt),
            "code_book": f"goal table index + {CODE_OFFSET}",
        }
    meta.update(metadata or {})
    with TapeWriter(out, scene, dt=dt, metadata=meta, keep_partial=keep_partial) as writer:
        for i in range(episodes):
            mode_i = mode
            if shared_share is not None:
                draw = float(np.random.default_rng([seed, i, 1]).random())
                mode_i = "shared" if draw < shared_share else "independent"
            elif every_other is not None and i % 2 == 1:
                mode_i = every_other  # odd episodes: e.g. a coordinated team beside a greedy one
            run = sim.episode(
                seed, i, mode_i, par_limit=par_limit, skill=skill, pool=pool, talk=talk
            )
            writer.begin_episode(
                team_goal=run.team_goal,
                pursued_goals=run.pursued_goals,
                roles=run.roles,
                messages=run.messages,
            )
            writer.steps(run.poses, done=run.done)
            writer.end_episode(run.outcome)
            if advance is not None:
                advance(1)
    return episodes


__all__ = [
    "CODE_OFFSET",
    "MIN_PACE",
    "MODES",
    "PATIENCE",
    "EpisodeRun",
    "MessageOptions",
    "Rollout",
    "code_word",
    "run_rollout",
]
