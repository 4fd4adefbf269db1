"""Roles an agent carries in an episode: derived from its motion, or read from the tape.

Qt-free so a simulator or a notebook gets the same labels as the viewer. Derived roles are
small ints (:data:`ROLE_NAMES` gives their words), computed for every step at once::

    codes = derive_roles(scene, episode)   # (T, A) uint8

Definitions (per agent ``a`` and step ``t``; "team targets" are the landmarks of the episode's
team goal, every landmark when the tape has none; "covers" means the agent's centre is within
the landmark's reach radius, the README's definition, via ``observe.coverage``):

``HOLDING``  (holding a target) covers at least one team target.
``OFF_GOAL`` (off the team goal) covers only landmarks outside the team goal, or is moving and
             its *aim* (below) is a landmark outside the team goal.
``IDLE``     (idle) mean speed over the last :data:`WINDOW_S` seconds below
             ``max(IDLE_SPEED_FRACTION * max_speed, IDLE_SPEED_MIN)``, and none of the above.
``HEADING``  (heading to a target) moving and its aim is a team target.
``MOVING``   (moving) none of the above: moving but aiming at no landmark.

The *aim* of a moving agent: over the last :data:`WINDOW_S` seconds it moved along a
displacement ``v``; every landmark whose next waypoint on the agent's shortest path to it
(:mod:`~arena_studio.core.geometry.waypoints`: a doorway corner while the landmark is out of
sight, the landmark's reach once in sight) lies within :data:`AIM_CONE_DEG` of ``v`` is a candidate,
the agent's own targets (its share when the tape records shares, else its pursued goal)
first; the aim is the candidate with the shortest path. Within a window of the start the
displacement is measured from step 0.

Tape labels (free strings a simulator wrote) map to codes by :func:`tape_roles`.
"""

from __future__ import annotations

import math

import numpy as np

from arena_studio.core.scene.model import Scene
from arena_studio.core.sim.observe import coverage
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape.episode_scene import episode_scene

MOVING, HEADING, HOLDING, IDLE, OFF_GOAL = 0, 1, 2, 3, 4
ROLE_NAMES: tuple[str, ...] = (
    "moving",
    "heading to target",
    "holding target",
    "idle",
    "off team goal",
)
#: seconds of motion looked at for speed and aim
WINDOW_S = 0.5
#: an agent is idle below this fraction of its top speed ...
IDLE_SPEED_FRACTION = 0.05
#: ... or below this absolute speed (m/s), whichever is larger
IDLE_SPEED_MIN = 0.02
#: half-angle of the cone an agent's recent motion must point a landmark into
AIM_CONE_DEG = 30.0
#: cap on distance-array elements handled at once (keeps memory flat for long episodes)
_CHUNK_ELEMENTS = 1 << 21


def _coverage(scene: Scene, positions: np.ndarray) -> np.ndarray:
    """(..., A, 2) -> (..., A, L) bool: the shared definition in ``observe.coverage``."""
    return np.asarray(coverage(scene, positions), dtype=bool)


def team_mask(scene: Scene, episode: Episode) -> np.ndarray:
    """(L,) bool: the team goal's targets, every landmark when the episode has no team goal."""
    n = len(scene.landmarks)
    if episode.team_goal is None:
        return np.ones(n, dtype=bool)
    goal = np.asarray(episode.team_goal).astype(bool).reshape(-1)
    if goal.shape[0] != n:
        raise ValueError(
            f"episode {episode.index}: team goal has {goal.shape[0]} entries, "
            f"the scene has {n} landmarks"
        )
    return goal


def pursued_mask(scene: Scene, episode: Episode) -> np.ndarray:
    """(A, L) bool: each agent's own targets: its share of the team goal when the tape
    records shares (``assigned_targets``), else its pursued goal's targets (all False when
    the tape has neither)."""
    a, n = episode.agent_count, len(scene.landmarks)
    out = np.zeros((a, n), dtype=bool)
    own = episode.assigned_targets or episode.pursued_goals
    for i, goal in enumerate(own[:a]):
        if goal is not None:
            g = np.asarray(goal).astype(bool).reshape(-1)
            if g.shape[0] != n:
                raise ValueError(
                    f"episode {episode.index}: pursued goal of agent {i} has {g.shape[0]} "
                    f"entries, the scene has {n} landmarks"
                )
            out[i] = g
    return out


def derive_roles(scene: Scene, episode: Episode) -> np.ndarray:
    """(T, A) uint8 role codes for every step (see the module docstring for definitions)."""
    scene = episode_scene(scene, episode)
    poses = np.asarray(episode.poses, dtype=np.float64)
    steps, agents = poses.shape[0], poses.shape[1]
    out = np.full((steps, agents), MOVING, dtype=np.uint8)
    if steps == 0 or agents == 0:
        return out
    team = team_mask(scene, episode)
    pursued = pursued_mask(scene, episode)
    lm = np.array([lmk.position for lmk in scene.landmarks], dtype=np.float64).reshape(-1, 2)
    n_lm = lm.shape[0]

    xy = poses[..., :2]
    lag = max(1, round(WINDOW_S / episode.dt)) if episode.dt > 0 else 1
    back = np.maximum(np.arange(steps) - lag, 0)
    disp = xy - xy[back]  # (T, A, 2) displacement over the window
    span = (np.arange(steps) - back).astype(np.float64) * episode.dt
    with np.errstate(invalid="ignore", divide="ignore"):
        speed = np.linalg.norm(disp, axis=-1) / np.where(span > 0, span, np.inf)[:, None]
    top = np.array(
        [scene.agents[i].max_speed if i < len(scene.agents) else 1.0 for i in range(agents)]
    )
    still = speed < np.maximum(IDLE_SPEED_FRACTION * top, IDLE_SPEED_MIN)[None, :]
    out[still] = IDLE
    if n_lm == 0:
        return out

    cos_cone = math.cos(math.radians(AIM_CONE_DEG))
    chunk = max(1, _CHUNK_ELEMENTS // max(1, agents * n_lm))
    for t0 in range(0, steps, chunk):
        t1 = min(steps, t0 + chunk)
        p = xy[t0:t1]
        covered = _coverage(scene, p)  # (t, A, L)
        holding = (covered & team).any(-1)
        covers_other = (covered & ~team).any(-1) & ~holding

        moving = ~still[t0:t1]
        way, dist = _aims(scene, p, moving, lm, lag)  # next waypoints, path lengths (t, A, L)
        to_lm = way - p[:, :, None, :]  # (t, A, L, 2): toward each landmark along its path
        d = disp[t0:t1]
        dn = np.linalg.norm(d, axis=-1)
        leg = np.linalg.norm(to_lm, axis=-1)
        with np.errstate(invalid="ignore", divide="ignore"):
            cos = (to_lm * d[:, :, None, :]).sum(-1) / (leg * dn[:, :, None])
        in_cone = np.nan_to_num(cos, nan=-1.0) >= cos_cone
        # pursued targets first: when one is in the cone, other landmarks cannot be the aim
        pursued_in_cone = (in_cone & pursued[None]).any(-1, keepdims=True)
        rank = np.where(pursued_in_cone & ~pursued[None], np.inf, dist)
        rank = np.where(in_cone, rank, np.inf)
        aim = rank.argmin(-1)  # (t, A)
        has_aim = np.isfinite(rank.min(-1))

        block = out[t0:t1]
        aim_team = team[aim]
        block[moving & has_aim & aim_team] = HEADING
        block[moving & has_aim & ~aim_team] = OFF_GOAL
        block[covers_other] = OFF_GOAL
        block[holding] = HOLDING
    return out


def _aims(
    scene: Scene, p: np.ndarray, moving: np.ndarray, lm: np.ndarray, every: int
) -> tuple[np.ndarray, np.ndarray]:
    """(t, A, L, 2) next waypoint toward each landmark and (t, A, L) path length, from the
    positions ``p`` (t, A, 2). Only moving agents are planned for (the rest keep the
    straight line, which no rule reads). Planning costs ~1000x the cone test, so it runs at
    every ``every``-th moving step, and at every step between two planned ones whose
    waypoints differ; between two planned steps with the same waypoint every step aims at
    it (its path length adjusted by the straight part)."""
    # lazy: the path planner's modules load with the first roles derived (off the UI
    # thread in the viewer), not with the viewer's first paint
    from arena_studio.core.geometry.waypoints import next_waypoints

    way = np.broadcast_to(lm[None, None], (*p.shape[:2], *lm.shape)).copy()
    dist = np.linalg.norm(way - p[:, :, None, :], axis=-1)
    for a in range(min(p.shape[1], len(scene.agents))):
        rows = np.flatnonzero(moving[:, a])
        if rows.size == 0:
            continue
        sampled = np.zeros(rows.size, dtype=bool)
        sampled[:: max(1, every)] = True
        sampled[-1] = True
        for k in range(lm.shape[0]):
            w = np.full((rows.size, 2), np.nan)
            length = np.full(rows.size, np.nan)
            known = sampled.copy()
            idx = np.flatnonzero(sampled)
            w[idx], length[idx] = next_waypoints(scene, a, k, p[rows[idx], a])
            # between planned steps whose waypoints differ: plan every step
            change = np.flatnonzero(np.any(w[idx[1:]] != w[idx[:-1]], axis=1))
            fill = np.concatenate(
                [np.arange(idx[c] + 1, idx[c + 1]) for c in change] or [np.zeros(0, int)]
            )
            if fill.size:
                w[fill], length[fill] = next_waypoints(scene, a, k, p[rows[fill], a])
                known[fill] = True
            src = np.flatnonzero(known)[np.cumsum(known) - 1]  # latest planned step
            rest = length[src] - np.hypot(*(w[src] - p[rows[src], a]).T)
            way[rows, a, k] = w[src]
            dist[rows, a, k] = np.hypot(*(w[src] - p[rows, a]).T) + rest
    return way, dist


def tape_roles(episode: Episode) -> tuple[np.ndarray, tuple[str, ...]]:
    """Tape role labels as ``(codes (T, A) int16, labels)``; code -1 before an agent's first label.

    Labels are numbered in order of first appearance (agent by agent), so the same tape always
    gives the same numbering and the legend lists them in a stable order.
    """
    steps, agents = episode.steps, episode.agent_count
    codes = np.full((steps, agents), -1, dtype=np.int16)
    labels: list[str] = []
    index: dict[str, int] = {}
    for a, timeline in enumerate(episode.roles[:agents]):
        for k, (step, label) in enumerate(timeline):
            if label not in index:
                index[label] = len(labels)
                labels.append(label)
            end = timeline[k + 1][0] if k + 1 < len(timeline) else steps
            s0 = min(max(int(step), 0), steps)
            codes[s0 : min(max(int(end), s0), steps), a] = index[label]
    return codes, tuple(labels)


__all__ = [
    "AIM_CONE_DEG",
    "IDLE_SPEED_FRACTION",
    "IDLE_SPEED_MIN",
    "ROLE_NAMES",
    "WINDOW_S",
    "derive_roles",
    "pursued_mask",
    "tape_roles",
    "team_mask",
]
