"""Whole-tape numbers for the batch view, from the episode list rows and the poses.

Success by goal, alignment rate, success among aligned vs misaligned episodes, and an
occupancy grid (seconds spent per cell by all agents together). No Qt.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from arena_studio.app.replay.summary import EpisodeSummary
from arena_studio.core.geometry.regions import bounds
from arena_studio.core.scene.model import Scene


@dataclass(frozen=True)
class GoalStat:
    goal: tuple[int, ...]
    label: str
    episodes: int
    successes: int

    @property
    def rate(self) -> float:
        return self.successes / self.episodes if self.episodes else 0.0


@dataclass(frozen=True)
class BatchStats:
    episodes: int
    scored: int  # rows with a success value
    successes: int
    success_rate: float | None
    alignment_rate: float | None
    aligned_success: tuple[int, int]  # successes, episodes among aligned
    misaligned_success: tuple[int, int]  # successes, episodes among misaligned
    goals: tuple[GoalStat, ...]


def _rate(hits: int, total: int) -> float | None:
    return hits / total if total else None


def batch_stats(rows: Iterable[EpisodeSummary]) -> BatchStats:
    """Aggregate loaded rows (placeholders are skipped)."""
    rows = [r for r in rows if r.loaded]
    scored = [r for r in rows if r.success is not None]
    with_align = [r for r in rows if r.aligned is not None]
    aligned = [r for r in scored if r.aligned is True]
    misaligned = [r for r in scored if r.aligned is False]
    by_goal: dict[tuple[int, ...], list[EpisodeSummary]] = {}
    for r in scored:
        if r.goal:
            by_goal.setdefault(r.goal, []).append(r)
    goals = tuple(
        GoalStat(g, rs[0].goal_label, len(rs), sum(1 for r in rs if r.success))
        for g, rs in sorted(by_goal.items(), key=lambda kv: (len(kv[0]), kv[0]))
    )
    return BatchStats(
        episodes=len(rows),
        scored=len(scored),
        successes=sum(1 for r in scored if r.success),
        success_rate=_rate(sum(1 for r in scored if r.success), len(scored)),
        alignment_rate=_rate(sum(1 for r in with_align if r.aligned), len(with_align)),
        aligned_success=(sum(1 for r in aligned if r.success), len(aligned)),
        misaligned_success=(sum(1 for r in misaligned if r.success), len(misaligned)),
        goals=goals,
    )


@dataclass
class Occupancy:
    """Seconds spent per grid cell (all agents summed), over the scene's bounding box."""

    extent: tuple[float, float, float, float]  # minx, miny, maxx, maxy
    cell: float  # metres
    seconds: np.ndarray  # (ny, nx) float64, row 0 at miny

    @classmethod
    def empty(cls, scene: Scene, cells_across: int = 48) -> Occupancy:
        minx, miny, maxx, maxy = bounds(scene, 0.0)
        cell = max(maxx - minx, maxy - miny, 1e-6) / cells_across
        nx = max(int(np.ceil((maxx - minx) / cell)), 1)
        ny = max(int(np.ceil((maxy - miny) / cell)), 1)
        return cls((minx, miny, minx + nx * cell, miny + ny * cell), cell, np.zeros((ny, nx)))

    def dt_floor(self) -> float:
        """A small positive time unit for the log scale (one step of the finest tape)."""
        positive = self.seconds[self.seconds > 0]
        return float(positive.min()) if positive.size else 1.0

    def add(self, poses: np.ndarray, dt: float) -> None:
        """Add every agent position of one episode (``poses`` (T, A, 3)), ``dt`` s each."""
        xy = np.asarray(poses, dtype=np.float64)[..., :2].reshape(-1, 2)
        minx, miny, maxx, maxy = self.extent
        ny, nx = self.seconds.shape
        hist, _, _ = np.histogram2d(
            xy[:, 1], xy[:, 0], bins=(ny, nx), range=((miny, maxy), (minx, maxx))
        )
        self.seconds += hist * dt
