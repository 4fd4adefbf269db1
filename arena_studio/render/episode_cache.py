"""Everything about one episode the frame painter needs, computed once per episode.

Scrubbing draws a frame per step; this cache makes each frame a handful of array slices: no
re-decoding, no per-step coverage or collision search. One cache per (scene, episode), kept
in a weak dictionary so it disappears with its episode.
"""

from __future__ import annotations

import weakref
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from arena_studio.core.analysis.roles import derive_roles, pursued_mask, tape_roles, team_mask
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape.episode_scene import episode_scene

_CACHES: weakref.WeakKeyDictionary[Episode, EpisodeCache] = weakref.WeakKeyDictionary()


@dataclass
class EpisodeCache:
    scene: Scene
    episode: Episode
    xy: np.ndarray  # (T, A, 2) float64 world positions
    heading: np.ndarray  # (T, A) float64
    radius: np.ndarray  # (A,) metres
    roles: np.ndarray  # (T, A) uint8 derived role codes
    tape_codes: np.ndarray  # (T, A) int16, -1 = none
    tape_labels: tuple[str, ...]
    team: np.ndarray  # (L,) bool
    has_team_goal: bool
    pursued: np.ndarray  # (A, L) bool
    covered_first: np.ndarray  # (A, L) int64 first step agent a covered landmark l, -1 never
    covered: np.ndarray  # (T, L) bool: landmark l covered by anyone at step t
    collisions: np.ndarray  # (K, 4) float64: step, x, y, kind (0 agent-agent, 1 wall)
    par_paths: list[np.ndarray] | None = None  # per agent world polylines (lazy)
    _par_done: bool = field(default=False, repr=False)
    _groups: dict[int, list[np.ndarray]] = field(default_factory=dict, repr=False)
    _step_length: float | None = field(default=None, repr=False)
    _landmarks: tuple[np.ndarray, np.ndarray] | None = field(default=None, repr=False)
    _arrivals: dict[int, tuple[tuple[int, ...], list[int]]] = field(
        default_factory=dict, repr=False
    )
    #: pre-drawn trail blocks per view, owned by render.trail_blocks
    trail_blocks: dict[tuple[Any, ...], Any] = field(default_factory=dict, repr=False)
    #: other per-episode values painters work out once (keys name their owner)
    memo: dict[tuple[Any, ...], Any] = field(default_factory=dict, repr=False)

    @property
    def steps(self) -> int:
        return int(self.xy.shape[0])

    @property
    def agents(self) -> int:
        return int(self.xy.shape[1])

    def group_xy(self, n_colors: int) -> list[np.ndarray]:
        """World positions regrouped by identity colour: ``[g]`` is (agents of colour g, T, 2),
        agent-major and contiguous, so a trail window of one colour is a plain slice (no
        per-frame transpose of the whole (T, A, 2) block). Built once per palette size."""
        groups = self._groups.get(n_colors)
        if groups is None:
            groups = [
                np.ascontiguousarray(self.xy[:, g::n_colors].transpose(1, 0, 2))
                for g in range(min(n_colors, self.agents))
            ]
            self._groups[n_colors] = groups
        return groups

    def team_indices(self) -> list[int]:
        """Indices of the landmarks on the team goal."""
        return np.flatnonzero(self.team).tolist()

    def arrivals(self, landmark: int) -> tuple[tuple[int, ...], list[int]]:
        """The agents that ever cover ``landmark``, in order of their first cover (ties by
        scene order), and those first steps: the agents there by step ``t`` are the first
        ``bisect_right(steps, t)``."""
        got = self._arrivals.get(landmark)
        if got is None:
            firsts = self.covered_first[:, landmark]
            reached = np.flatnonzero(firsts >= 0)
            order = reached[np.argsort(firsts[reached], kind="stable")]
            got = (tuple(order.tolist()), firsts[order].tolist())
            self._arrivals[landmark] = got
        return got

    def landmark_arrays(self) -> tuple[np.ndarray, np.ndarray]:
        """(L, 2) landmark positions and (L,) reach radii, in metres."""
        if self._landmarks is None:
            marks = self.scene.landmarks
            self._landmarks = (
                np.array([m.position for m in marks], dtype=np.float64).reshape(-1, 2),
                np.array([m.reach_radius for m in marks], dtype=np.float64),
            )
        return self._landmarks

    def step_length(self) -> float:
        """Median distance an agent moves in one step (metres), over moving steps only, so
        trails can skip steps that would land within a pixel or two of each other."""
        if self._step_length is None:
            d = np.linalg.norm(np.diff(self.xy, axis=0), axis=-1) if self.steps > 1 else None
            moving = d[np.isfinite(d) & (d > 0)] if d is not None else np.zeros(0)
            self._step_length = float(np.median(moving)) if len(moving) else 0.0
        return self._step_length

    def par_time_paths(self) -> list[np.ndarray] | None:
        """Par-time paths of the team goal (core.partime), computed on first use."""
        if not self._par_done:
            self._par_done = True
            self.par_paths = _par_paths(self.scene, self.episode)
        return self.par_paths


def episode_cache(scene: Scene, episode: Episode) -> EpisodeCache:
    """The cache for ``episode`` drawn on ``scene``, built on first use."""
    cache = _CACHES.get(episode)
    if cache is None or (cache.scene is not scene and cache.scene != scene):
        cache = build_cache(scene, episode)
        _CACHES[episode] = cache
    return cache


def build_cache(scene: Scene, episode: Episode) -> EpisodeCache:
    drawn_on, scene = scene, episode_scene(scene, episode)  # where its landmarks stood
    poses = np.asarray(episode.poses, dtype=np.float64)
    if poses.ndim != 3 or poses.shape[2] < 3:
        raise ValueError(
            f"episode {episode.index}: poses must have shape (steps, agents, 3), got {poses.shape}"
        )
    agents = poses.shape[1]
    xy = np.ascontiguousarray(poses[..., :2])
    radius = np.array(
        [scene.agents[i].radius if i < len(scene.agents) else 0.25 for i in range(agents)]
    )
    team = team_mask(scene, episode)
    covered_agent = _coverage(scene, xy)  # (T, A, L)
    any_cov = covered_agent.any(axis=0)
    first = np.where(any_cov, covered_agent.argmax(axis=0), -1).astype(np.int64)
    tape_codes, tape_labels = tape_roles(episode)
    return EpisodeCache(
        scene=drawn_on,
        episode=episode,
        xy=xy,
        heading=np.ascontiguousarray(poses[..., 2]),
        radius=radius,
        roles=derive_roles(scene, episode),
        tape_codes=tape_codes,
        tape_labels=tape_labels,
        team=team,
        has_team_goal=episode.team_goal is not None,
        pursued=pursued_mask(scene, episode),
        covered_first=first,
        covered=np.asarray(covered_agent.any(axis=1)),
        collisions=_collisions(scene, episode, xy, radius),
    )


def _coverage(scene: Scene, xy: np.ndarray) -> np.ndarray:
    from arena_studio.core.analysis.roles import _coverage as coverage

    steps, agents = xy.shape[:2]
    n = len(scene.landmarks)
    out = np.zeros((steps, agents, n), dtype=bool)
    chunk = max(1, (1 << 21) // max(1, agents * max(n, 1)))
    for t0 in range(0, steps, chunk):
        out[t0 : t0 + chunk] = coverage(scene, xy[t0 : t0 + chunk])
    return out


def _collisions(scene: Scene, episode: Episode, xy: np.ndarray, radius: np.ndarray) -> np.ndarray:
    """Onsets of contact: two agent discs overlapping, or a disc crossing a wall/obstacle edge.

    Only the first step of each contact is kept, at the contact point (midpoint of the two
    centres, or the agent centre for walls). Same definitions as core.metrics and the
    replay events (strict overlap; centre outside its free space), so marks and scrub bar agree.
    """
    steps, agents = xy.shape[:2]
    events: list[np.ndarray] = []
    tol = 0.0
    # agent-agent, pair by pair in time chunks (A <= ~64) or by a k-d tree per step
    if agents >= 2:
        if agents <= 64:
            ia, ib = np.triu_indices(agents, 1)
            reach = radius[ia] + radius[ib] - tol
            chunk = max(1, (1 << 21) // len(ia))
            prev = np.zeros(len(ia), dtype=bool)
            for t0 in range(0, steps, chunk):
                p = xy[t0 : t0 + chunk]
                d = np.linalg.norm(p[:, ia] - p[:, ib], axis=-1)
                touch = d < reach
                before = np.vstack([prev[None], touch[:-1]])
                onset = touch & ~before
                prev = touch[-1]
                ts, ks = np.nonzero(onset)
                mid = (p[ts, ia[ks]] + p[ts, ib[ks]]) / 2
                events.append(np.column_stack([ts + t0, mid, np.zeros(len(ts))]))
        else:
            events.append(_tree_collisions(xy, radius, tol))
    # walls and obstacles: core.metrics' own test (centre outside its free space), so the
    # marks agree with the replay's events and the metrics' counts
    if len(scene.rooms):
        from arena_studio.core.analysis.metrics import onsets, outside_mask

        ts, ag = np.nonzero(onsets(outside_mask(scene, episode)))
        events.append(np.column_stack([ts, xy[ts, ag], np.ones(len(ts))]))
    if not events:
        return np.zeros((0, 4))
    out = np.concatenate(events, axis=0)
    return out[np.argsort(out[:, 0], kind="stable")]


def _tree_collisions(xy: np.ndarray, radius: np.ndarray, tol: float) -> np.ndarray:
    from scipy.spatial import cKDTree

    steps = xy.shape[0]
    reach = 2 * float(radius.max()) - tol
    prev: set[tuple[int, int]] = set()
    rows: list[tuple[float, float, float, float]] = []
    for t in range(steps):
        pairs = cKDTree(xy[t]).query_pairs(reach, output_type="ndarray")
        now = set()
        for i, j in pairs:
            if np.linalg.norm(xy[t, i] - xy[t, j]) < radius[i] + radius[j] - tol:
                now.add((int(i), int(j)))
                if (i, j) not in prev:
                    m = (xy[t, i] + xy[t, j]) / 2
                    rows.append((t, m[0], m[1], 0.0))
        prev = now
    return np.array(rows, dtype=np.float64).reshape(-1, 4)


def _par_paths(scene: Scene, episode: Episode) -> list[np.ndarray] | None:
    if episode.team_goal is None:
        return None
    from arena_studio.core.planning.partime import plan_goal  # lazy: the planner pulls in scipy

    try:
        plan: Any = plan_goal(scene, tuple(int(v) for v in np.asarray(episode.team_goal)))
    except Exception:  # a planning failure must not stop a replay or a clip
        return None
    if not getattr(plan, "feasible", False):
        return None
    return [np.asarray(p, dtype=np.float64).reshape(-1, 2) for p in plan.paths.values()]
