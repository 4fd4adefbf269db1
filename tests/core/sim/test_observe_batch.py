"""Batched coverage and success tests agree with the one-episode functions they speed up.

References: ``math.hypot`` (C library) for the reach test, point by point; the agreed
contract of ``observe.goal_reached`` (notes/api_contracts.md), applied episode by episode, for
``goal_reached_batch``.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from arena_studio.core.scene.model import RULES
from arena_studio.core.sim.observe import (
    coverage,
    coverage_fast,
    goal_reached,
    goal_reached_batch,
    segment_starts,
)
from tests.core.tape_helpers import box_scene

SCENE = box_scene()
LANDMARKS = [(2.0, 8.0), (8.0, 8.0), (5.0, 2.0)]  # box_scene, reach 0.5


def _rim_points(rng: np.random.Generator, n: int) -> np.ndarray:
    """Points on, just inside and just outside the reach rims (a few ulps either way)."""
    lm = np.array(LANDMARKS)[rng.integers(0, 3, n)]
    ang = rng.uniform(-math.pi, math.pi, n)
    r = 0.5 * (1 + rng.choice([-1e-15, -1e-16, 0.0, 1e-16, 1e-15, 1e-9, -1e-9], n))
    return lm + r[:, None] * np.column_stack([np.cos(ang), np.sin(ang)])


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 2**32 - 1))
def test_coverage_fast_is_coverage_bit_for_bit(seed: int) -> None:
    rng = np.random.default_rng(seed)
    pts = np.vstack([_rim_points(rng, 300), rng.uniform(-1, 11, (300, 2))])
    pts[rng.integers(0, len(pts), 3)] = [np.nan, 1.0]
    pts[rng.integers(0, len(pts), 2)] = [np.inf, -np.inf]
    rng.shuffle(pts)
    positions = pts.reshape(-1, 2, 2)  # (T, A=2, 2)
    fast = coverage_fast(SCENE, positions)
    assert np.array_equal(fast, coverage(SCENE, positions))
    # reference: math.hypot per point and landmark, reach inclusive. On the rim itself
    # math.hypot and the C library's hypot (numpy) may round one ulp apart, so there only
    # the bit-for-bit match with coverage() above applies.
    for (t, a, k), got in np.ndenumerate(fast):
        x, y = positions[t, a]
        lx, ly = LANDMARKS[k]
        d = math.hypot(lx - x, ly - y)
        if not abs(d - 0.5) < 1e-12:
            assert got == (d <= 0.5)


def _random_episodes(rng: np.random.Generator, count: int) -> tuple[list[np.ndarray], np.ndarray]:
    tracks, goals = [], []
    for _ in range(count):
        steps = int(rng.integers(1, 25))
        # agents hop between landmark centres and random points, so targets come and go
        anchors = np.vstack([LANDMARKS, rng.uniform(0, 10, (3, 2))])
        pos = anchors[rng.integers(0, len(anchors), (steps, 2))]
        pos += rng.normal(0, 0.2, pos.shape)
        tracks.append(pos)
        goal = rng.integers(0, 2, 3).astype(np.uint8)
        goal[rng.integers(0, 3)] = 1
        goals.append(goal)
    return tracks, np.array(goals)


@settings(max_examples=60, deadline=None)
@given(
    st.integers(0, 2**32 - 1),
    st.integers(1, 8),
    st.sampled_from(RULES),
    st.sampled_from([0.0, 0.1, 0.25, 1.0]),
)
def test_goal_reached_batch_matches_goal_reached(seed: int, count: int, rule: str, hold: float):
    rng = np.random.default_rng(seed)
    tracks, goals = _random_episodes(rng, count)
    lengths = [len(t) for t in tracks]
    got = goal_reached_batch(
        SCENE, goals, np.concatenate(tracks), lengths, rule=rule, dt=0.1, hold_time=hold
    )
    starts, _ = segment_starts(lengths)
    for e, track in enumerate(tracks):
        want = goal_reached(SCENE, goals[e], track, rule=rule, dt=0.1, hold_time=hold)
        s = starts[e]
        assert np.array_equal(got[s : s + len(track)], want), (e, rule, hold)


def test_goal_reached_batch_refuses_bad_input() -> None:
    pos = np.zeros((4, 2, 2))
    with pytest.raises(ValueError, match="episode 1 has no targets"):
        goal_reached_batch(SCENE, np.array([[1, 0, 0], [0, 0, 0]]), pos, [2, 2])
    with pytest.raises(ValueError, match="same episodes"):
        goal_reached_batch(SCENE, np.array([[1, 0, 0]]), pos, [3])
    with pytest.raises(ValueError, match="at least one step"):
        goal_reached_batch(SCENE, np.array([[1, 0, 0], [1, 0, 0]]), pos, [4, 0])


# -- coverage_planes_sparse and goal_reached_planes (the metrics' batched path) --------------
# References as above: coverage() itself (bit for bit, including rim points a few ulps either
# side, far-away points, non-finite ones) and math.hypot off the rim; goal_reached() applied
# episode by episode.
from arena_studio.core.geometry.inside_test import InsideTest, _largest_rectangle  # noqa: E402
from arena_studio.core.sim.observe import (  # noqa: E402
    coverage_planes_sparse,
    goal_reached_planes,
)


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 2**32 - 1), st.booleans())
def test_coverage_planes_sparse_is_coverage_bit_for_bit(seed: int, limit: bool) -> None:
    rng = np.random.default_rng(seed)
    pts = np.vstack([_rim_points(rng, 300), rng.uniform(-1, 11, (300, 2))])
    # squares' corners and edges: just inside and outside the bounding square of each disc
    corner = np.array(LANDMARKS)[rng.integers(0, 3, 40)] + rng.choice([-0.5, 0.5], (40, 2)) * (
        1 + rng.choice([-1e-7, 0.0, 1e-7], (40, 1))
    )
    pts = np.vstack([pts, corner])
    pts[rng.integers(0, len(pts), 3)] = [np.nan, 1.0]
    pts[rng.integers(0, len(pts), 2)] = [np.inf, -np.inf]
    pts[rng.integers(0, len(pts), 2)] = [1e300, 8.0]
    rng.shuffle(pts)
    positions = pts[: len(pts) // 2 * 2].reshape(-1, 2, 2)  # (T, A=2, 2)
    only = np.array([True, False, True]) if limit else None
    planes = coverage_planes_sparse(SCENE, positions[..., 0], positions[..., 1], only=only)
    want = np.moveaxis(coverage(SCENE, positions), -1, 0)
    if limit:
        want[1] = False
    assert np.array_equal(planes, want)
    for (k, t, a), got in np.ndenumerate(planes):
        if limit and k == 1:
            continue
        x, y = positions[t, a]
        lx, ly = LANDMARKS[k]
        d = math.hypot(lx - x, ly - y)
        if not abs(d - 0.5) < 1e-12:
            assert got == (d <= 0.5)


@settings(max_examples=60, deadline=None)
@given(
    st.integers(0, 2**32 - 1),
    st.integers(1, 8),
    st.sampled_from(RULES),
    st.sampled_from([0.0, 0.1, 0.25, 1.0]),
    st.booleans(),
)
def test_goal_reached_planes_matches_goal_reached(
    seed: int, count: int, rule: str, hold: float, same_goal: bool
) -> None:
    rng = np.random.default_rng(seed)
    tracks, goals = _random_episodes(rng, count)
    if same_goal:
        goals[:] = goals[0]
    lengths = [len(t) for t in tracks]
    pos = np.concatenate(tracks)
    covered = coverage(SCENE, pos).any(axis=1).T  # (L, N)
    got = goal_reached_planes(SCENE, goals, covered, lengths, rule=rule, dt=0.1, hold_time=hold)
    starts, _ = segment_starts(lengths)
    for e, track in enumerate(tracks):
        want = goal_reached(SCENE, goals[e], track, rule=rule, dt=0.1, hold_time=hold)
        s = starts[e]
        assert np.array_equal(got[s : s + len(track)], want), (e, rule, hold)


def test_inside_test_box_answers_like_geos() -> None:
    # reference: shapely.intersects_xy (GEOS) point for point, on a room with a pillar, with
    # points on, just inside and just outside its edges and on the covered box's edges
    import shapely

    room = shapely.Polygon([(0, 0), (10, 0), (10, 10), (0, 10)]).difference(shapely.box(4, 4, 6, 6))
    test = InsideTest(room)
    rng = np.random.default_rng(7)
    xs = rng.uniform(-1, 11, 20000)
    ys = rng.uniform(-1, 11, 20000)
    edges = np.array([0.0, 4.0, 6.0, 10.0])
    xs[:4000] = rng.choice(edges, 4000) + rng.choice([-1e-12, 0.0, 1e-12], 4000)
    test.contains_xy(xs, ys)  # builds the grid and the covered box
    assert test._box is not None
    x0, y0, x1, y1 = test._box
    xs[4000:4100] = rng.choice([x0, x1], 100)
    ys[4000:4100] = rng.uniform(y0, y1, 100)
    xs[4100] = np.nan
    got = test.contains_xy(xs, ys)
    assert np.array_equal(got, shapely.intersects_xy(room, xs, ys))


def test_largest_rectangle_against_brute_force() -> None:
    # reference: every rectangle of small random masks enumerated (common practice, no source)
    rng = np.random.default_rng(3)
    for _ in range(150):
        mask = rng.random((int(rng.integers(1, 9)), int(rng.integers(1, 9)))) < rng.uniform(0.3, 1)
        found = _largest_rectangle(mask)
        rows, cols = mask.shape
        best = max(
            (
                (i1 - i0 + 1) * (j1 - j0 + 1)
                for i0 in range(rows)
                for i1 in range(i0, rows)
                for j0 in range(cols)
                for j1 in range(j0, cols)
                if mask[i0 : i1 + 1, j0 : j1 + 1].all()
            ),
            default=0,
        )
        if found is None:
            assert best == 0
        else:
            i0, j0, i1, j1 = found
            assert mask[i0 : i1 + 1, j0 : j1 + 1].all()
            assert (i1 - i0 + 1) * (j1 - j0 + 1) == best


@pytest.mark.parametrize("shrink", [0.0, 0.013, 0.3])
def test_inside_test_sub_cells_answer_like_geos(shrink: float) -> None:
    # reference: shapely.intersects_xy (GEOS) point for point; a room with a round pillar
    # (curved edges make many mixed cells and sub-cells), points beyond the bounds, on the
    # walls within 1e-13 m, and non-finite ones
    import shapely

    room = (
        shapely.Polygon([(0, 0), (10, 0), (10, 10), (0, 10)])
        .difference(shapely.Point(5, 5).buffer(1.3))
        .buffer(-shrink)
    )
    test = InsideTest(room)
    rng = np.random.default_rng(11)
    xs = rng.uniform(-1, 11, 60000)
    ys = rng.uniform(-1, 11, 60000)
    xs[:3000] = rng.choice([0.0, shrink, 10 - shrink, 10.0], 3000) + rng.choice(
        [-1e-13, 0.0, 1e-13], 3000
    )
    xs[3000:3010] = np.nan
    xs[3010:3020] = np.inf
    ys[3020:3030] = -np.inf
    assert np.array_equal(test.contains_xy(xs, ys), shapely.intersects_xy(room, xs, ys))
    assert test._sub.size  # the sub-grid was built and used
