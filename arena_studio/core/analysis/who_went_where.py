"""Who went where: one sentence per episode naming each agent's target and what became of it.

A failure line such as "time ran out while rover-1, rover-3 still moved towards water-tank"
leaves the reader to work out who was where. This statement says it with the scene's labels:
for each agent, the team target it went to and when it arrived, or where it stopped and how
far short of the target nearest to it; then which team targets nobody covered. The viewer's
explanation line, stills and clips all show the same words.

Definitions: "covers" is the shared one (``sim.observe.coverage``: centre within the reach
radius). An agent's target is the team target it covers at ``upto`` (the last one it covered
when it covers several), else the team target it covered last before ``upto``, else the team
target whose reach it is nearest at ``upto``. Its arrival is its first step covering that
target. A target is empty when nobody covers it at ``upto``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from arena_studio.core.analysis.roles import _coverage, team_mask
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape.episode_scene import episode_scene
from arena_studio.core.wording import LandmarkNames


@dataclass(frozen=True)
class AgentWhere:
    agent: str
    target: str | None  # the team target's label, None when the goal has no targets
    arrived_s: float | None  # first time it covered its target, None when it never did
    short_m: float | None  # distance to the target's reach at ``upto`` when not there
    there: bool  # covers its target at ``upto``
    stopped_near: str | None = None  # when not there: the team target nearest it at ``upto``


@dataclass(frozen=True)
class WhoWentWhere:
    rows: tuple[AgentWhere, ...]
    empty: tuple[str, ...]  # labels of team targets nobody covers at ``upto``
    at_s: float

    def text(self) -> str:
        """The statement, e.g. "rover-1 reached Water tank at 8.2 s; rover-3 stopped
        6.1 m short of Potting bench; Potting bench stayed empty"."""
        parts = [_row_words(r) for r in self.rows]
        if self.empty:
            names = " and ".join(self.empty)
            parts.append(f"{names} {'was' if len(self.empty) == 1 else 'were'} left empty")
        return "; ".join(parts)


def _row_words(r: AgentWhere) -> str:
    if r.target is None:
        return f"{r.agent} had no target"
    if r.there and r.arrived_s is not None:
        return f"{r.agent} reached {r.target} at {r.arrived_s:.1f} s"
    short = r.short_m if r.short_m is not None else float("nan")
    near = r.stopped_near or r.target
    if r.arrived_s is not None:
        then = (
            f"ended {short:.1f} m from it"
            if near == r.target
            else (f"stopped {short:.1f} m short of {near}")
        )
        return f"{r.agent} reached {r.target} at {r.arrived_s:.1f} s, left, {then}"
    return f"{r.agent} stopped {short:.1f} m short of {near}"


def who_went_where(scene: Scene, episode: Episode, upto: int | None = None) -> WhoWentWhere:
    """The statement at step ``upto`` (default: the last step) of ``episode``."""
    scene = episode_scene(scene, episode)
    poses = np.asarray(episode.poses, dtype=np.float64)
    steps, agents = poses.shape[0], poses.shape[1]
    if steps == 0 or not scene.landmarks:
        return WhoWentWhere((), (), 0.0)
    end = int(min(max(steps - 1 if upto is None else upto, 0), steps - 1))
    xy = poses[: end + 1, :, :2]
    team = np.flatnonzero(team_mask(scene, episode))
    cover = _coverage(scene, xy)[:, :, team]  # (t, A, K)
    names = LandmarkNames.of(scene)  # labels, told apart when two landmarks share one
    labels = [names.name(scene.landmarks[i].id) for i in team]
    pos = np.array([scene.landmarks[i].position for i in team], dtype=np.float64).reshape(-1, 2)
    reach = np.array([scene.landmarks[i].reach_radius for i in team], dtype=np.float64)
    rows = []
    for a in range(agents):
        name = scene.agents[a].id if a < len(scene.agents) else f"agent {a + 1}"
        rows.append(_agent_row(name, cover[:, a], xy[-1, a], pos, reach, labels, episode.dt))
    empty = tuple(labels[k] for k in range(len(team)) if not cover[-1, :, k].any())
    return WhoWentWhere(tuple(rows), empty, end * float(episode.dt))


def _agent_row(
    name: str,
    cover: np.ndarray,
    last_xy: np.ndarray,
    pos: np.ndarray,
    reach: np.ndarray,
    labels: list[str],
    dt: float,
) -> AgentWhere:
    """``cover``: (t, K) this agent's cover of each team target up to ``upto``."""
    if len(labels) == 0:
        return AgentWhere(name, None, None, None, False)
    now = np.flatnonzero(cover[-1])
    if len(now):
        k = int(now[np.argmax(_first_steps(cover)[now])])  # the one it reached last
    elif cover.any():
        last = np.where(cover.any(axis=0), cover.shape[0] - 1 - np.argmax(cover[::-1], axis=0), -1)
        k = int(np.argmax(last))
    else:
        gap = np.linalg.norm(pos - last_xy[None], axis=1) - reach
        gap = np.where(np.isfinite(gap), gap, np.inf)
        k = int(np.argmin(gap))
        short = float(gap[k]) if math.isfinite(float(gap[k])) else None
        return AgentWhere(name, labels[k], None, short, False)
    first = int(_first_steps(cover)[k])
    there = bool(cover[-1, k])
    if there:
        return AgentWhere(name, labels[k], first * dt, None, True)
    gap = np.linalg.norm(pos - last_xy[None], axis=1) - reach
    gap = np.where(np.isfinite(gap), gap, np.inf)
    near = int(np.argmin(gap))
    short = float(gap[near]) if math.isfinite(float(gap[near])) else None
    return AgentWhere(name, labels[k], first * dt, short, False, labels[near])


def _first_steps(cover: np.ndarray) -> np.ndarray:
    """(K,) first step covering each target, a large number for never."""
    return np.where(cover.any(axis=0), np.argmax(cover, axis=0), np.iinfo(np.int64).max)
