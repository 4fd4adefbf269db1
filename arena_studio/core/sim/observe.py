"""Reference observations and success tests for simulators, metrics and the replay viewer.

These functions are the single source of truth for "what an agent sees" and "did the team
reach its goal": the replay viewer, the metrics and any simulator that imports this package
all call them, so they cannot disagree. Everything is vectorised with numpy over leading
axes (time, batch); nothing loops over steps in Python.

Conventions (DESIGN.md): metres, x right, y up, heading counter-clockwise from +x. The body
frame has x forward and y to the left, so a landmark on the agent's left has a positive
bearing. Bearings are wrapped into the half-open interval (-pi, pi].

Public API::

    from arena_studio.core.sim.observe import observe, coverage, goal_reached, wrap_angle
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from arena_studio.core.scene.model import RULES, Scene

TWO_PI = 2.0 * math.pi


def wrap_angle(angle: Any) -> np.ndarray:
    """Wrap angles into (-pi, pi].

    The common ``((a + pi) % 2pi) - pi`` maps pi to -pi (the wrong end of the interval), so
    we use ``pi - ((pi - a) % 2pi)``, whose range is (-pi, pi], and repair the one rounding
    case where ``%`` returns 2pi for a tiny negative argument. Values already inside the
    interval are returned unchanged (bit for bit).
    """
    a = np.asarray(angle, dtype=np.float64)
    wrapped = math.pi - np.mod(math.pi - a, TWO_PI)
    wrapped = np.where(wrapped <= -math.pi, wrapped + TWO_PI, wrapped)
    inside = (a > -math.pi) & (a <= math.pi)
    return np.where(inside, a, wrapped)


def _landmark_arrays(scene: Scene) -> tuple[np.ndarray, np.ndarray]:
    if scene.landmarks:
        pos = np.array([lm.position for lm in scene.landmarks], dtype=np.float64)
        reach = np.array([lm.reach_radius for lm in scene.landmarks], dtype=np.float64)
    else:
        pos = np.zeros((0, 2), dtype=np.float64)
        reach = np.zeros((0,), dtype=np.float64)
    return pos, reach


def _as_array(values: Any, last: int, name: str, min_ndim: int = 2) -> np.ndarray:
    arr = np.asarray(values, dtype=np.float64)
    if arr.ndim < min_ndim or arr.shape[-1] != last:
        raise ValueError(
            f"{name}: expected an array of shape (..., A, {last}), got shape {arr.shape}"
        )
    return arr


def observe(scene: Scene, poses: Any) -> dict[str, np.ndarray]:
    """Range and body-frame bearing from every agent to every landmark and every other agent.

    ``poses`` is (A, 3) for one step or (T, A, 3) (any leading axes) of (x, y, heading).
    Returns ``landmark_range`` / ``landmark_bearing`` of shape (..., A, L) and
    ``agent_range`` / ``agent_bearing`` of shape (..., A, A), where ``[..., i, j]`` is what
    agent i observes of j. An agent's entry for itself has range 0 and bearing 0.
    Bearing = wrap(atan2(dy, dx) - heading).
    """
    p = _as_array(poses, 3, "poses")
    x, y, heading = p[..., 0], p[..., 1], p[..., 2]
    lm_pos, _ = _landmark_arrays(scene)

    dx = lm_pos[:, 0] - x[..., :, None]  # (..., A, L)
    dy = lm_pos[:, 1] - y[..., :, None]
    landmark_range = np.hypot(dx, dy)
    landmark_bearing = wrap_angle(np.arctan2(dy, dx) - heading[..., :, None])

    adx = x[..., None, :] - x[..., :, None]  # (..., A, A): [i, j] = x_j - x_i
    ady = y[..., None, :] - y[..., :, None]
    agent_range = np.hypot(adx, ady)
    agent_bearing = wrap_angle(np.arctan2(ady, adx) - heading[..., :, None])
    count = p.shape[-2]
    eye = np.eye(count, dtype=bool)
    agent_range = np.where(eye, 0.0, agent_range)
    agent_bearing = np.where(eye, 0.0, agent_bearing)
    return {
        "landmark_range": landmark_range,
        "landmark_bearing": landmark_bearing,
        "agent_range": agent_range,
        "agent_bearing": agent_bearing,
    }


def coverage(scene: Scene, positions: Any) -> np.ndarray:
    """(..., A, L) bool: agent a's centre is within landmark l's reach radius (inclusive).

    ``positions`` is (..., A, 2); poses (..., A, 3) are accepted too (heading ignored).
    """
    arr = np.asarray(positions, dtype=np.float64)
    if arr.ndim >= 2 and arr.shape[-1] == 3:
        arr = arr[..., :2]
    arr = _as_array(arr, 2, "positions")
    lm_pos, reach = _landmark_arrays(scene)
    dx = lm_pos[:, 0] - arr[..., :, 0, None]
    dy = lm_pos[:, 1] - arr[..., :, 1, None]
    return np.hypot(dx, dy) <= reach


def _targets(scene: Scene, goal: Any) -> np.ndarray:
    g = np.asarray(goal).reshape(-1)
    count = len(scene.landmarks)
    if g.shape[0] != count:
        raise ValueError(f"goal has {g.shape[0]} entries but the scene has {count} landmarks")
    targets = np.flatnonzero(g)
    if targets.size == 0:
        raise ValueError("goal has no targets (every entry is 0)")
    return targets


def _run_lengths(cond: np.ndarray) -> np.ndarray:
    """For a (T, ...) bool array: how many consecutive steps up to and including t are True."""
    steps = cond.shape[0]
    idx = np.arange(steps).reshape((steps,) + (1,) * (cond.ndim - 1))
    last_false = np.maximum.accumulate(np.where(cond, -1, idx), axis=0)
    return idx - last_false


def hold_steps(hold_time: float, dt: float | None) -> int:
    """Extra steps a condition must stay true after it first holds to count as held.

    A condition true from step s to step t has held for (t - s) * dt seconds; it counts as
    held once that reaches ``hold_time`` (with a 1e-9 s tolerance for rounding). With
    ``hold_time`` 0 a single step is enough.
    """
    if hold_time <= 0:
        return 0
    if dt is None or not dt > 0:
        raise ValueError("dt (step length, s) > 0 is needed to apply a hold time")
    return max(0, math.ceil(hold_time / dt - 1e-9))


def goal_reached(
    scene: Scene,
    goal: Any,
    positions: Any,
    rule: str | None = None,
    dt: float | None = None,
    hold_time: float | None = None,
) -> Any:
    """Whether the team goal ``goal`` (L,) multi-hot is met under a success rule.

    A target counts as covered at a step when any agent's centre is within its reach radius
    (one agent may cover several targets at once).

    - ``positions`` (A, 2): returns a bool for that step: every target covered now (the
      instantaneous condition of every rule; hold time does not apply to one step).
    - ``positions`` (T, A, 2): returns (T,) bool, True at step t when the rule's success
      condition holds at t. ``all_at_end`` / ``all_at_once``: every target covered, held
      for ``hold_time`` up to t. ``all_visited``: every target has been covered, each for
      ``hold_time`` without a break, at some step <= t. Episode success: ``all_at_end`` ->
      ``result[-1]``; the others -> ``result.any()``; time to success = first True step * dt.

    ``rule`` and ``hold_time`` default to the scene's goal set; ``dt`` is needed only when
    the hold time is positive. Bad shapes or rules raise ValueError with a clear message.
    """
    rule = scene.goals.rule if rule is None else rule
    if rule not in RULES:
        raise ValueError(f"unknown success rule {rule!r} (expected one of {', '.join(RULES)})")
    hold = scene.goals.hold_time if hold_time is None else float(hold_time)
    targets = _targets(scene, goal)
    arr = np.asarray(positions, dtype=np.float64)
    if arr.ndim not in (2, 3):
        raise ValueError(f"positions: expected (A, 2) or (T, A, 2), got shape {arr.shape}")
    covered: np.ndarray = np.asarray(coverage(scene, arr).any(axis=-2))[..., targets]
    if arr.ndim == 2:
        return bool(covered.all())
    extra = hold_steps(hold, dt)
    if rule in ("all_at_end", "all_at_once"):
        return _run_lengths(np.asarray(covered.all(axis=-1))) > extra
    held = _run_lengths(covered) > extra  # (T, K)
    visited = np.logical_or.accumulate(held, axis=0)
    return visited.all(axis=-1)


# -- batched variants (many episodes at once; same answers as the functions above) ----------
#: relative margin around a reach radius inside which coverage_fast recomputes with hypot
_RIM_MARGIN = 1e-9


def coverage_fast(scene: Scene, positions: Any) -> np.ndarray:
    """Exactly :func:`coverage`, cheaper on long arrays: squared distances decide every point
    clearly inside or outside a reach disc; points within a relative 1e-9 of the rim (and
    non-finite ones) are decided by ``np.hypot`` as :func:`coverage` does, so the result is the
    same bit for bit. The squared sum has a relative error of a few 1e-16, far inside the
    margin, so a point the fast test decides cannot be one where ``hypot`` disagrees.
    Returns a (..., A, L) view of landmark-major memory (see :func:`coverage_planes`).
    """
    arr = np.asarray(positions, dtype=np.float64)
    if arr.ndim >= 2 and arr.shape[-1] == 3:
        arr = arr[..., :2]
    arr = _as_array(arr, 2, "positions")
    return np.moveaxis(coverage_planes(scene, arr[..., 0], arr[..., 1]), 0, -1)


def coverage_planes(scene: Scene, x: Any, y: Any, only: Any = None) -> np.ndarray:
    """(L, *x.shape) bool: ``coverage`` with the landmark axis first, from x and y arrays.

    ``only`` (L,) bool limits the work to those landmarks; the other planes are all False.
    """
    xs = np.ascontiguousarray(x, dtype=np.float64)
    ys = np.ascontiguousarray(y, dtype=np.float64)
    lm_pos, reach = _landmark_arrays(scene)
    out = np.empty((len(reach), *xs.shape), dtype=bool)
    tmp = np.empty(xs.shape)
    tmp2 = np.empty(xs.shape)
    for k in range(len(reach)):
        if only is not None and not only[k]:
            out[k] = False
            continue
        lx, ly, r2 = lm_pos[k, 0], lm_pos[k, 1], reach[k] * reach[k]
        np.subtract(lx, xs, out=tmp)
        np.multiply(tmp, tmp, out=tmp)
        np.subtract(ly, ys, out=tmp2)
        np.multiply(tmp2, tmp2, out=tmp2)
        np.add(tmp, tmp2, out=tmp)
        np.less_equal(tmp, r2, out=out[k])
        np.subtract(tmp, r2, out=tmp2)
        np.abs(tmp2, out=tmp2)
        unsure = ~(tmp2 > r2 * _RIM_MARGIN)  # near the rim, or not a number
        if unsure.any():
            where = np.nonzero(unsure)
            out[k][where] = np.hypot(lx - xs[where], ly - ys[where]) <= reach[k]
    return out


def coverage_planes_sparse(scene: Scene, x: Any, y: Any, only: Any = None) -> np.ndarray:
    """:func:`coverage_planes`, bit for bit, cheaper when most points lie far from every disc.

    A point outside a landmark's bounding square grown by a small pad is outside its disc:
    ``hypot(dx, dy) >= |dx|`` and the pad (1e-6 of the radius plus 1e-12 of the landmark's
    coordinate) exceeds every rounding in the comparison. Four comparisons per point and
    landmark settle those; the points inside the square (and no others: a non-finite point
    fails the comparisons and is outside for :func:`coverage` too) get the exact test of
    :func:`coverage_planes`, on those points only.
    """
    xs = np.ascontiguousarray(x, dtype=np.float64)
    ys = np.ascontiguousarray(y, dtype=np.float64)
    if xs.shape != ys.shape:
        raise ValueError(f"x and y differ in shape: {xs.shape} and {ys.shape}")
    lm_pos, reach = _landmark_arrays(scene)
    out = np.zeros((len(reach), *xs.shape), dtype=bool)
    fx, fy = xs.reshape(-1), ys.reshape(-1)
    near = np.empty(fx.shape, dtype=bool)
    part = np.empty(fx.shape, dtype=bool)
    for k in range(len(reach)):
        if only is not None and not only[k]:
            continue
        lx, ly, r = float(lm_pos[k, 0]), float(lm_pos[k, 1]), float(reach[k])
        pad_x = r * 1e-6 + abs(lx) * 1e-12
        pad_y = r * 1e-6 + abs(ly) * 1e-12
        # the x band first over every point, then the y band over the few in it: the same
        # points as all four comparisons at once, in the same (ascending) order
        np.greater_equal(fx, lx - r - pad_x, out=near)
        near &= np.less_equal(fx, lx + r + pad_x, out=part)
        where = np.flatnonzero(near)
        if not where.size:
            continue
        cy = fy[where]
        in_y = cy >= ly - r - pad_y
        in_y &= cy <= ly + r + pad_y
        where, cy = where[in_y], cy[in_y]
        if not where.size:
            continue
        cx = fx[where]
        r2 = reach[k] * reach[k]
        d2 = np.subtract(lx, cx)
        d2 *= d2
        dy = np.subtract(ly, cy)
        dy *= dy
        d2 += dy
        hit = d2 <= r2
        unsure = ~(np.abs(d2 - r2) > r2 * _RIM_MARGIN)  # near the rim (as coverage_planes)
        if unsure.any():
            u = np.flatnonzero(unsure)
            hit[u] = np.hypot(lx - cx[u], ly - cy[u]) <= reach[k]
        out[k].reshape(-1)[where] = hit
    return out


def _batch_goal_args(
    scene: Scene, goals: Any, rule: str | None, hold_time: float | None
) -> tuple[str, float, np.ndarray, np.ndarray]:
    """Checked rule, hold time, (E, L) goals and their target mask for the batched rules."""
    rule = scene.goals.rule if rule is None else rule
    if rule not in RULES:
        raise ValueError(f"unknown success rule {rule!r} (expected one of {', '.join(RULES)})")
    hold = scene.goals.hold_time if hold_time is None else float(hold_time)
    g = np.asarray(goals)
    count = len(scene.landmarks)
    if g.ndim != 2 or g.shape[1] != count:
        raise ValueError(f"goals: expected shape (E, {count}), got {g.shape}")
    tmask = g != 0
    empty = np.flatnonzero(~tmask.any(axis=1))
    if empty.size:
        raise ValueError(f"goal of episode {int(empty[0])} has no targets (every entry is 0)")
    return rule, hold, g, tmask


def goal_reached_planes(
    scene: Scene,
    goals: Any,
    covered: np.ndarray,
    lengths: Any,
    rule: str | None = None,
    dt: float | None = None,
    hold_time: float | None = None,
) -> np.ndarray:
    """:func:`goal_reached_batch` from per-landmark coverage: ``covered`` (L, N) bool says
    landmark l is covered by some agent at row n. Each landmark's row stays contiguous, and
    when every episode has the same goal the target rows need no mask at all."""
    rule, hold, g, tmask = _batch_goal_args(scene, goals, rule, hold_time)
    count = len(scene.landmarks)
    starts, floor = segment_starts(lengths)
    n = floor.shape[0]
    if covered.shape != (count, n) or starts.shape[0] != g.shape[0]:
        raise ValueError("coverage, goals and lengths do not describe the same episodes")
    seg_len = np.diff(np.append(starts, n))
    uniform = bool((tmask == tmask[0]).all())
    extra = hold_steps(hold, dt)
    ok = np.ones(n, dtype=bool)
    idx = np.arange(n)
    for k in np.flatnonzero(tmask.any(axis=0)).tolist():
        if rule in ("all_at_end", "all_at_once"):
            term = covered[k]
        else:  # visited: held (run length > extra) at some row since the episode began
            held = covered[k] if extra == 0 else _run_lengths_seg(covered[k], floor) > extra
            first = np.minimum.reduceat(np.where(held, idx, n), starts)
            term = idx >= np.repeat(first, seg_len)
        ok &= term if uniform else term | ~np.repeat(tmask[:, k], seg_len)
    if rule in ("all_at_end", "all_at_once") and extra > 0:
        return np.asarray(_run_lengths_seg(ok, floor) > extra)
    return ok  # a run length exceeds 0 exactly where the condition holds


def _any_last(arr: np.ndarray, axis: int) -> np.ndarray:
    """``arr.any(axis)`` for a short axis, as a chain of element-wise ORs (much faster)."""
    parts = np.moveaxis(arr, axis, 0)
    if parts.shape[0] == 0:
        return np.zeros(parts.shape[1:], dtype=bool)
    acc = parts[0].copy()
    for part in parts[1:]:
        acc |= part
    return acc


def segment_starts(lengths: Any) -> tuple[np.ndarray, np.ndarray]:
    """(starts, row floor) of episodes laid end to end: ``starts[e]`` is episode e's first
    row; ``floor[row]`` is the first row of that row's episode minus one."""
    n = np.asarray(lengths, dtype=np.int64).reshape(-1)
    if (n < 1).any():
        raise ValueError("every episode needs at least one step")
    starts = np.concatenate([[0], np.cumsum(n)[:-1]]).astype(np.int64)
    return starts, np.repeat(starts - 1, n)


def _run_lengths_seg(cond: np.ndarray, floor: np.ndarray) -> np.ndarray:
    """:func:`_run_lengths` restarted at every episode start (``floor`` from segment_starts)."""
    idx = np.arange(cond.shape[0]).reshape((-1,) + (1,) * (cond.ndim - 1))
    fl = floor.reshape(idx.shape)
    last_false = np.maximum.accumulate(np.where(cond, fl, idx), axis=0)
    return idx - last_false


def goal_reached_batch(
    scene: Scene,
    goals: Any,
    positions: Any,
    lengths: Any,
    rule: str | None = None,
    dt: float | None = None,
    hold_time: float | None = None,
    *,
    cover: np.ndarray | None = None,
) -> np.ndarray:
    """:func:`goal_reached` for E episodes laid end to end, in one pass.

    ``goals`` is (E, L) multi-hot (one goal per episode, each with a target), ``positions``
    (N, A, 2) the episodes' positions concatenated in order, ``lengths`` (E,) their step
    counts (summing to N). Returns (N,) bool: row ``starts[e] + t`` equals
    ``goal_reached(scene, goals[e], positions of episode e, rule, dt, hold_time)[t]``.
    ``cover`` may pass a precomputed ``coverage(scene, positions)`` (N, A, L).
    """
    rule, hold, g, tmask = _batch_goal_args(scene, goals, rule, hold_time)
    starts, floor = segment_starts(lengths)
    if cover is None:
        arr = np.asarray(positions, dtype=np.float64)
        if arr.ndim != 3:
            raise ValueError(f"positions: expected (N, A, 2), got shape {arr.shape}")
        cover = coverage_fast(scene, arr)
    if cover.shape[0] != floor.shape[0] or starts.shape[0] != g.shape[0]:
        raise ValueError("positions, goals and lengths do not describe the same episodes")
    rows_mask = np.repeat(tmask, np.diff(np.append(starts, floor.shape[0])), axis=0)  # (N, L)
    covered = _any_last(cover, -2)  # (N, L)
    extra = hold_steps(hold, dt)
    if rule in ("all_at_end", "all_at_once"):
        every = ~_any_last(~covered & rows_mask, -1)
        return np.asarray(_run_lengths_seg(every, floor) > extra)
    held = _run_lengths_seg(covered, floor) > extra  # (N, L)
    idx = np.arange(held.shape[0])[:, None]
    last_held = np.maximum.accumulate(np.where(held, idx, floor[:, None]), axis=0)
    visited = last_held > floor[:, None]
    return np.asarray(~_any_last(~visited & rows_mask, -1))


__all__ = [
    "coverage",
    "coverage_fast",
    "coverage_planes",
    "coverage_planes_sparse",
    "goal_reached",
    "goal_reached_batch",
    "goal_reached_planes",
    "hold_steps",
    "observe",
    "segment_starts",
    "wrap_angle",
]
