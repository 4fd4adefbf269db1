"""Per-episode and batch metrics of recorded episodes, vectorised over steps.

Success and coverage come from :mod:`arena_studio.core.sim.observe` (the single source of truth
the viewer and simulators share). Definitions:

- *judged goal*: the episode's team goal; without one, the agents' common pursued goal when
  they are aligned; otherwise none (the episode cannot succeed).
- *success* under the scene's rule: ``goal_reached`` over the whole episode; ``all_at_end``
  -> its last step, the other rules -> any step. *Success step*: the first True step (for
  ``all_at_end`` the first step of the run of True steps that lasts to the end).
  *time to success* = success step * dt.
- *covered_by*: for each target, the agent covering it at the success step (the nearest when
  several do; for ``all_visited`` the first agent that covered it); on failure, at the last
  step. None when nobody covers it.
- *path length*: sum of step displacements per agent (m).
- *par-time ratio* = par time / time to success (1 is perfect; lower is slower). Par time from
  :func:`arena_studio.core.planning.partime.plan_goal` when that module is available.
- *aligned*: every agent's pursued goal is recorded and equal, and equal to the team goal when
  one is given; None when the tape records no pursued goals.
- *collisions*: onsets of agent-agent overlap (centre distance < sum of radii) counted per
  pair, and onsets of an agent's centre leaving its free space (rooms minus obstacles shrunk
  by its radius, with :data:`FREE_SPACE_TOLERANCE`).
- *still time*: seconds an agent moved slower than ``max(5 % of top speed, 0.02 m/s)`` and
  turned slower than :data:`STILL_TURN` rad/s.
"""

from __future__ import annotations

import threading
from collections import Counter, defaultdict
from collections.abc import Sequence
from dataclasses import asdict, dataclass, field
from functools import lru_cache
from typing import TYPE_CHECKING, Any

import numpy as np

from arena_studio.core.geometry.inside_test import InsideTest
from arena_studio.core.geometry.regions import free_space, per_thread_cache
from arena_studio.core.scene.model import Scene
from arena_studio.core.sim.observe import coverage, goal_reached
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape.episode_scene import episode_scene

if TYPE_CHECKING:
    from arena_studio.core.analysis.events import Event

#: how far (m) a centre may stray outside free space before it counts as leaving it
FREE_SPACE_TOLERANCE = 0.01
STILL_SPEED_FRACTION = 0.05
STILL_SPEED_MIN = 0.02
STILL_TURN = 0.05


@dataclass(frozen=True)
class EpisodeMetrics:
    index: int
    steps: int
    duration: float
    goal: tuple[int, ...] | None  # target landmark indices of the judged goal
    goal_key: str | None  # target landmark ids joined by "+"
    kind: str | None  # "individual" | "cooperative" | None
    success: bool
    success_step: int | None
    time_to_success: float | None
    covered_by: dict[str, str | None]  # target landmark id -> agent id
    path_length: tuple[float, ...]  # per agent, m
    par_time: float | None
    par_ratio: float | None
    aligned: bool | None
    collisions: int  # agent-agent overlap onsets
    free_space_exits: int  # onsets of a centre leaving free space
    still_time: tuple[float, ...]  # per agent, s
    diagnosis: str | None = None
    diagnosis_code: str | None = None
    diagnosis_step: int | None = None
    complete: bool = True
    collision_pairs: tuple[tuple[int, int, int], ...] = field(default=(), repr=False)
    outcome: dict[str, Any] | None = None  # what the simulator reported (the tape's end record)

    def to_dict(self) -> dict[str, Any]:
        out = asdict(self)
        out["goal"] = None if self.goal is None else list(self.goal)
        out["path_length"] = [round(v, 6) for v in self.path_length]
        out["still_time"] = [round(v, 6) for v in self.still_time]
        out.pop("collision_pairs")
        return out


# -- per-step arrays (shared with diagnosis and events) -----------------------------------
def step_lengths(poses: np.ndarray) -> np.ndarray:
    """(T - 1, A) distance (m) each agent moved in each step.

    ``sqrt(dx * dx + dy * dy)`` rather than ``np.hypot``: four times faster on long tapes,
    the same to the last bit or two at room scale, and the batched metrics use the same
    formula so both paths agree exactly.
    """
    dx = np.diff(poses[:, :, 0], axis=0)
    dy = np.diff(poses[:, :, 1], axis=0)
    return np.sqrt(dx * dx + dy * dy)


def step_speeds(episode: Episode) -> tuple[np.ndarray, np.ndarray]:
    """(T, A) speed (m/s) and |turn rate| (rad/s) of each step, the first step copied."""
    p = episode.poses
    if p.shape[0] < 2:
        zeros = np.zeros(p.shape[:2])
        return zeros, zeros
    d = step_lengths(p) / episode.dt
    turn = np.diff(p[:, :, 2], axis=0)
    turn = np.abs((turn + np.pi) % (2 * np.pi) - np.pi) / episode.dt
    return np.vstack([d[:1], d]), np.vstack([turn[:1], turn])


def still_mask(scene: Scene, episode: Episode) -> np.ndarray:
    speed, turn = step_speeds(episode)
    top = np.array([a.max_speed for a in scene.agents], dtype=np.float64)
    limit = np.maximum(STILL_SPEED_FRACTION * top, STILL_SPEED_MIN)
    return (speed < limit[None, :]) & (turn < STILL_TURN)


def overlap_mask(scene: Scene, episode: Episode) -> np.ndarray:
    """(T, A, A) bool: agents i and j overlap at step t (upper triangle only)."""
    p = episode.poses
    radii = np.array([a.radius for a in scene.agents], dtype=np.float64)
    i, j = np.triu_indices(p.shape[1], k=1)
    dx = p[:, i, 0] - p[:, j, 0]
    dy = p[:, i, 1] - p[:, j, 1]
    reach = radii[i] + radii[j]
    out = np.zeros((p.shape[0], p.shape[1], p.shape[1]), dtype=bool)
    out[:, i, j] = dx * dx + dy * dy < reach * reach
    return out


class _SceneMemo(threading.local):
    """Per-scene results, looked up by identity first: hashing a whole scene value on every
    episode costs more than the metrics of a short episode. One memo per thread, because
    the values hold GEOS prepared geometry, which is not thread-safe."""

    def __init__(self) -> None:
        self.scene: Scene | None = None
        self.values: dict[Any, Any] = {}

    def get(self, scene: Scene, key: Any, make: Any) -> Any:
        if self.scene is not scene:
            self.scene, self.values = scene, {}
        if key not in self.values:
            self.values[key] = make()
        return self.values[key]


_MEMO = _SceneMemo()


def _prepared_free_space(scene: Scene, radius: float) -> Any:
    return _MEMO.get(scene, ("free", radius), lambda: _make_free_space(scene, radius))


@per_thread_cache(maxsize=128)
def _make_free_space(scene: Scene, radius: float) -> InsideTest:
    """Free space shrunk by ``radius`` less the tolerance, as a fast exact inside test."""
    return InsideTest(free_space(scene, max(radius - FREE_SPACE_TOLERANCE, 0.0)))


def outside_mask(scene: Scene, episode: Episode) -> np.ndarray:
    """(T, A) bool: agent centre outside its free space (beyond the tolerance)."""
    p = episode.poses
    out = np.zeros(p.shape[:2], dtype=bool)
    for a, agent in enumerate(scene.agents[: p.shape[1]]):
        test = _prepared_free_space(scene, float(agent.radius))
        out[:, a] = ~test.contains_xy(p[:, a, 0], p[:, a, 1])
    return out


def onsets(mask: np.ndarray) -> np.ndarray:
    """Bool array of the same shape: True where ``mask`` turns True (step 0 counts)."""
    prev = np.zeros_like(mask[:1])
    return mask & ~np.concatenate([prev, mask[:-1]], axis=0)


# -- goals ----------------------------------------------------------------------------------
def goal_key(scene: Scene, targets: Sequence[int]) -> str:
    return "+".join(scene.landmarks[i].id for i in targets)


def aligned_goals(episode: Episode) -> bool | None:
    """Did every agent pursue the team goal? Judged on the pursued goals; an episode that
    recorded only each agent's share (``assigned_targets``) is aligned when every share lies
    within the team goal and the shares together cover it. None when neither is recorded."""
    goals = episode.pursued_goals
    if not goals:
        return _shares_aligned(episode)
    if any(g is None for g in goals):
        return False
    first = goals[0]
    assert first is not None
    if any(g is None or not np.array_equal(first, g) for g in goals[1:]):
        return False
    return episode.team_goal is None or bool(np.array_equal(first, episode.team_goal))


def _shares_aligned(episode: Episode) -> bool | None:
    shares = getattr(episode, "assigned_targets", ())
    if not shares or episode.team_goal is None:
        return None
    team = np.asarray(episode.team_goal).astype(bool)
    union = np.zeros_like(team)
    for share in shares:
        if share is None:
            continue
        s = np.asarray(share).astype(bool)
        if (s & ~team).any():
            return False
        union |= s
    return bool(np.array_equal(union, team))


def judged_goal(episode: Episode) -> np.ndarray | None:
    if episode.team_goal is not None:
        return episode.team_goal
    if aligned_goals(episode) and episode.pursued_goals:
        return episode.pursued_goals[0]
    return None


@lru_cache(maxsize=1024)
def par_time_of(scene: Scene, targets: tuple[int, ...]) -> float | None:
    """Par time of a goal from core.partime, or None when infeasible."""
    from arena_studio.core.planning.partime import plan_goal  # lazy: the planner pulls in scipy

    vector = np.zeros(len(scene.landmarks), dtype=np.uint8)
    vector[list(targets)] = 1
    try:
        plan = plan_goal(scene, vector)
    except Exception:  # a planning failure leaves the par time unknown, never the metrics
        return None
    return float(plan.par_time) if plan.feasible and plan.par_time is not None else None


def success_of(scene: Scene, goal: np.ndarray, episode: Episode) -> tuple[bool, int | None]:
    """Success and success step under the scene's rule (see the module docstring)."""
    reached = np.asarray(goal_reached(scene, goal, episode.poses[:, :, :2], dt=episode.dt))
    if scene.goals.rule == "all_at_end":
        if not reached[-1]:
            return False, None
        falses = np.flatnonzero(~reached)
        return True, int(falses[-1] + 1) if falses.size else 0
    hits = np.flatnonzero(reached)
    return (True, int(hits[0])) if hits.size else (False, None)


def _covered_by(
    scene: Scene,
    episode: Episode,
    targets: Sequence[int],
    cover: np.ndarray,
    step: int,
    at: int,
) -> dict[str, str | None]:
    """``cover[step]`` is the coverage at episode step ``at``."""
    ids = [a.id for a in scene.agents]
    out: dict[str, str | None] = {}
    xy = episode.poses[at, :, :2]
    for lm in targets:
        landmark = scene.landmarks[lm]
        if scene.goals.rule == "all_visited":
            hits = np.argwhere(cover[: step + 1, :, lm])
            out[landmark.id] = ids[int(hits[0, 1])] if hits.size else None
            continue
        agents = np.flatnonzero(cover[step, :, lm])
        if agents.size == 0:
            out[landmark.id] = None
            continue
        d = np.hypot(*(xy[agents] - np.asarray(landmark.position)).T)
        out[landmark.id] = ids[int(agents[np.argmin(d)])]
    return out


# -- the metrics -------------------------------------------------------------------------
def episode_metrics(scene: Scene, episode: Episode) -> EpisodeMetrics:
    """All per-episode metrics (see the module docstring for each definition). An episode
    that recorded its own landmark positions is judged where its landmarks stood."""
    from arena_studio.core.analysis.diagnosis import diagnose

    scene = episode_scene(scene, episode)
    if episode.agent_count != len(scene.agents):
        raise ValueError(
            f"episode {episode.index}: {episode.agent_count} agents, scene has {len(scene.agents)}"
        )
    poses = episode.poses
    full_cover: list[np.ndarray] = []

    def cover_all() -> np.ndarray:  # (T, A, L), computed once and only when needed
        if not full_cover:
            full_cover.append(coverage(scene, poses[:, :, :2]))
        return full_cover[0]

    goal = judged_goal(episode)
    targets = tuple(int(i) for i in np.flatnonzero(goal)) if goal is not None else None
    if targets == ():
        targets = None
    success, step = (False, None)
    if targets is not None:
        assert goal is not None
        success, step = success_of(scene, goal, episode)
    at = step if step is not None else episode.steps - 1
    covered: dict[str, str | None] = {}
    if targets:
        all_visited = scene.goals.rule == "all_visited"
        cover_at = cover_all() if all_visited else coverage(scene, poses[at : at + 1, :, :2])
        covered = _covered_by(scene, episode, targets, cover_at, at if all_visited else 0, at)
    seg = step_lengths(poses)
    # a running sum, step after step: its rounding does not depend on the array's layout
    # (numpy's sum switches to pairwise summation for some shapes), so metrics_batch agrees
    path_length = (
        tuple(float(v) for v in np.cumsum(seg, axis=0)[-1]) if seg.size else (0.0,) * poses.shape[1]
    )
    still = still_mask(scene, episode)
    still_time = tuple(float(v) for v in still.sum(axis=0) * episode.dt)
    overlap = overlap_mask(scene, episode)
    pair_onsets = onsets(overlap)
    outside = outside_mask(scene, episode)
    par = (
        _MEMO.get(scene, ("par", targets), lambda: par_time_of(scene, targets)) if targets else None
    )
    tts = None if step is None else step * episode.dt
    ratio = None
    if par is not None and tts is not None:
        ratio = par / tts if tts > 0 else (1.0 if par == 0 else None)
    kind = None if targets is None else ("individual" if len(targets) == 1 else "cooperative")
    pairs = tuple((int(t), int(i), int(j)) for t, i, j in np.argwhere(pair_onsets))
    base = EpisodeMetrics(
        index=episode.index,
        steps=episode.steps,
        duration=episode.duration,
        goal=targets,
        goal_key=None if targets is None else goal_key(scene, targets),
        kind=kind,
        success=success,
        success_step=step,
        time_to_success=tts,
        covered_by=covered,
        path_length=path_length,
        par_time=par,
        par_ratio=ratio,
        aligned=aligned_goals(episode),
        collisions=len(pairs),
        free_space_exits=int(onsets(outside).sum()),
        still_time=still_time,
        complete=episode.complete,
        collision_pairs=pairs,
        outcome=episode.outcome,
    )
    if success:
        return base
    found = diagnose(scene, episode, base, cover_all(), still)
    if found is None:
        return base
    from dataclasses import replace

    return replace(base, diagnosis=found.text, diagnosis_code=found.code, diagnosis_step=found.step)


def _rate(hits: int, total: int) -> float | None:
    return hits / total if total else None


def specialisation(scene: Scene, metrics: Sequence[EpisodeMetrics]) -> dict[str, float | None]:
    """Per cooperative goal: how consistently the same agent covers the same target.

    Over the successful episodes of goal g, let n(l, a) count the episodes in which agent a
    covered target l at success (``covered_by``). The score is the mean over g's targets of
    ``max_a n(l, a) / sum_a n(l, a)``: 1.0 when every target is always covered by the same
    agent (fully specialised), about 1/A when agents take targets at random. None when the
    goal never succeeded.
    """
    tallies: dict[str, dict[str, Counter[str]]] = defaultdict(lambda: defaultdict(Counter))
    goals: set[str] = set()
    for m in metrics:
        if m.kind != "cooperative" or m.goal_key is None:
            continue
        goals.add(m.goal_key)
        if not m.success:
            continue
        for lm, agent in m.covered_by.items():
            if agent is not None:
                tallies[m.goal_key][lm][agent] += 1
    out: dict[str, float | None] = {}
    for key in sorted(goals):
        shares = [max(c.values()) / sum(c.values()) for c in tallies.get(key, {}).values() if c]
        out[key] = float(np.mean(shares)) if shares else None
    return out


def summarize_metrics(scene: Scene, episodes_metrics: Sequence[EpisodeMetrics]) -> dict[str, Any]:
    """Summary over many episodes: success by goal and kind, alignment, specialisation."""
    ms = list(episodes_metrics)
    n = len(ms)

    def group(items: list[EpisodeMetrics]) -> dict[str, Any]:
        wins = [m for m in items if m.success]
        times = [m.time_to_success for m in wins if m.time_to_success is not None]
        ratios = [m.par_ratio for m in wins if m.par_ratio is not None]
        return {
            "episodes": len(items),
            "successes": len(wins),
            "success_rate": _rate(len(wins), len(items)),
            "mean_time_to_success": float(np.mean(times)) if times else None,
            "mean_par_ratio": float(np.mean(ratios)) if ratios else None,
        }

    by_goal: dict[str, list[EpisodeMetrics]] = defaultdict(list)
    for m in ms:
        by_goal[m.goal_key or "(no goal)"].append(m)
    known = [m for m in ms if m.aligned is not None]
    diagnoses = Counter(m.diagnosis_code for m in ms if m.diagnosis_code)
    summary = group(ms)
    summary.update(
        {
            "alignment_rate": _rate(sum(1 for m in known if m.aligned), len(known)),
            "by_kind": {
                kind: group([m for m in ms if m.kind == kind])
                for kind in ("individual", "cooperative")
            },
            "by_goal": {
                key: {"kind": items[0].kind, **group(items)} for key, items in by_goal.items()
            },
            "aligned": group([m for m in known if m.aligned]),
            "misaligned": group([m for m in known if not m.aligned]),
            "specialisation": specialisation(scene, ms),
            "diagnoses": dict(sorted(diagnoses.items())),
            "collisions": sum(m.collisions for m in ms),
            "free_space_exits": sum(m.free_space_exits for m in ms),
            "incomplete_episodes": sum(1 for m in ms if not m.complete),
        }
    )
    summary["episodes"] = n
    return summary


def episode_events(
    scene: Scene, episode: Episode, metrics: EpisodeMetrics | None = None
) -> list[Event]:
    """The episode's timeline events; see :func:`.events.episode_events`."""
    from arena_studio.core.analysis.events import episode_events as events_of

    return events_of(scene, episode, metrics)


__all__ = [
    "EpisodeMetrics",
    "episode_events",
    "episode_metrics",
    "specialisation",
    "summarize_metrics",
]
