"""Cut a recorded run into episodes and resample each on a fixed time step.

Three ways to split: at gaps in the pose stream longer than ``gap`` seconds, at the messages
of a marker topic (each starts an episode; poses before the first are left out), or one
episode per bag. Each episode is sampled from its start every ``dt`` seconds up to its end;
an agent's pose comes only from its own samples inside the episode (held before its first
and after its last one), so a gap never leaks poses from a neighbouring episode.
"""

from __future__ import annotations

import math

import numpy as np

from arena_studio.core.robot.pose_math import interp_poses

Stream = tuple[np.ndarray, np.ndarray]  # times (s, sorted), poses (N, 3)


def spans_by_gap(streams: list[Stream], gap: float) -> list[tuple[float, float]]:
    """Episodes between pauses: all agents' sample times merged, cut where none for ``gap`` s."""
    times = np.sort(np.concatenate([t for t, _ in streams if len(t)] or [np.empty(0)]))
    if not len(times):
        return []
    cuts = np.flatnonzero(np.diff(times) > gap)
    starts = np.concatenate([[0], cuts + 1])
    ends = np.concatenate([cuts, [len(times) - 1]])
    return [(float(times[a]), float(times[b])) for a, b in zip(starts, ends, strict=True)]


def spans_by_marker(streams: list[Stream], markers: list[float]) -> list[tuple[float, float]]:
    """Episodes from each marker to the next (the last to the end of the poses)."""
    ends = [float(t[-1]) for t, _ in streams if len(t)]
    if not markers or not ends:
        return []
    last = max(ends)
    marks = sorted(markers)
    return [(m, marks[i + 1] if i + 1 < len(marks) else max(last, m)) for i, m in enumerate(marks)]


def spans_whole(streams: list[Stream]) -> list[tuple[float, float]]:
    """One episode over everything recorded."""
    firsts = [float(t[0]) for t, _ in streams if len(t)]
    lasts = [float(t[-1]) for t, _ in streams if len(t)]
    return [(min(firsts), max(lasts))] if firsts else []


def time_grid(start: float, end: float, dt: float) -> np.ndarray:
    """``start, start + dt, ...`` up to ``end`` (a point within 1e-9 s of it counts)."""
    n = math.floor((end - start) / dt + 1e-9) + 1
    return start + dt * np.arange(max(n, 1))


def resample_span(
    streams: list[Stream], start: float, end: float, dt: float
) -> tuple[np.ndarray | None, list[int]]:
    """Poses (T, A, 3) on the grid of one episode, or None and the agents without samples."""
    grid = time_grid(start, end, dt)
    out = np.empty((len(grid), len(streams), 3))
    missing = []
    for a, (t, p) in enumerate(streams):
        inside = (t >= start - 1e-9) & (t <= end + 1e-9)
        if not inside.any():
            missing.append(a)
            continue
        out[:, a] = interp_poses(t[inside], p[inside], grid)
    return (None if missing else out), missing


__all__ = ["resample_span", "spans_by_gap", "spans_by_marker", "spans_whole", "time_grid"]
