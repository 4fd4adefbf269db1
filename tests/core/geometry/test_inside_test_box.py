"""InsideTest's rectangle shortcut and ``outside_flat``, checked point for point against GEOS.

Reference: ``shapely.intersects_xy`` (GEOS, a general-purpose geometry library). Points are
drawn near and on every edge and corner, at the neighbouring floats on both sides
(``np.nextafter``), and include NaN and infinities.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from arena_studio.core.geometry.inside_test import MIN_POINTS, InsideTest


def _edge_points(x0: float, y0: float, x1: float, y1: float, rng: np.random.Generator):
    """Many points hugging the box's edges and corners, plus non-finite ones."""
    xs = [x0, x1, (x0 + x1) / 2]
    ys = [y0, y1, (y0 + y1) / 2]
    near_x = [v for x in xs for v in (np.nextafter(x, -np.inf), x, np.nextafter(x, np.inf))]
    near_y = [v for y in ys for v in (np.nextafter(y, -np.inf), y, np.nextafter(y, np.inf))]
    gx, gy = np.meshgrid(near_x, near_y)
    px = [gx.ravel(), rng.uniform(x0 - 1, x1 + 1, MIN_POINTS * 2)]
    py = [gy.ravel(), rng.uniform(y0 - 1, y1 + 1, MIN_POINTS * 2)]
    odd = np.array([np.nan, np.inf, -np.inf, x0, np.nan, (x0 + x1) / 2])
    px.append(odd)
    py.append(odd[::-1].copy())
    return np.concatenate(px), np.concatenate(py)


@pytest.mark.parametrize(
    "geometry",
    [
        shapely.box(0.24, 0.24, 19.76, 19.76),
        # the same rectangle with a redundant vertex on one edge: still exactly the box
        shapely.Polygon([(0.24, 0.24), (10.0, 0.24), (19.76, 0.24), (19.76, 19.76), (0.24, 19.76)]),
        shapely.box(-3.1, 2.7, 0.1, 2.9),
    ],
)
def test_rectangle_answers_like_geos(geometry) -> None:
    test = InsideTest(geometry)
    x, y = _edge_points(*geometry.bounds, np.random.default_rng(1))
    want = shapely.intersects_xy(geometry, x, y)  # GEOS
    assert np.array_equal(test.contains_xy(x, y), want)
    assert test._exact_box  # the shortcut was taken
    assert np.array_equal(test.outside_flat(x, y), np.flatnonzero(~want))
    # a 2-D layout (agents x rows, as the batched metrics pass it) gives C-order indices
    x2, y2 = x[: 2 * (x.size // 2)].reshape(2, -1), y[: 2 * (y.size // 2)].reshape(2, -1)
    want2 = shapely.intersects_xy(geometry, x2, y2)
    assert np.array_equal(test.outside_flat(x2, y2), np.flatnonzero(~want2))


@pytest.mark.parametrize(
    "geometry",
    [
        shapely.box(0, 0, 10, 10).difference(shapely.box(4, 4, 6, 6)),  # a hole: not a box
        shapely.Polygon([(0, 0), (10, 0), (10, 10), (0, 9)]),  # one slanted edge
        shapely.box(0, 0, 10, 10).buffer(0.3),  # rounded corners
    ],
)
def test_other_shapes_keep_the_grid_and_agree_with_geos(geometry) -> None:
    test = InsideTest(geometry)
    x, y = _edge_points(*geometry.bounds, np.random.default_rng(2))
    want = shapely.intersects_xy(geometry, x, y)  # GEOS
    assert np.array_equal(test.contains_xy(x, y), want)
    assert not test._exact_box
    assert np.array_equal(test.outside_flat(x, y), np.flatnonzero(~want))


def test_few_points_and_mismatched_shapes() -> None:
    geometry = shapely.box(0, 0, 1, 1)
    test = InsideTest(geometry)
    x, y = np.array([0.0, 0.5, 1.0, 1.5, np.nan]), np.array([0.0, 0.5, 1.0, 0.5, 0.5])
    want = shapely.intersects_xy(geometry, x, y)  # GEOS
    assert np.array_equal(test.outside_flat(x, y), np.flatnonzero(~want))
    with pytest.raises(ValueError, match="differ in shape"):
        test.outside_flat(np.zeros(3), np.zeros(4))


@settings(max_examples=40, deadline=None)
@given(
    x0=st.floats(-50, 50),
    y0=st.floats(-50, 50),
    w=st.floats(1e-3, 40),
    h=st.floats(1e-3, 40),
    seed=st.integers(0, 1000),
)
def test_random_rectangles_against_geos(x0: float, y0: float, w: float, h: float, seed: int):
    geometry = shapely.box(x0, y0, x0 + w, y0 + h)
    test = InsideTest(geometry)
    x, y = _edge_points(*geometry.bounds, np.random.default_rng(seed))
    want = shapely.intersects_xy(geometry, x, y)  # GEOS
    assert np.array_equal(test.contains_xy(x, y), want)
    assert np.array_equal(test.outside_flat(x, y), np.flatnonzero(~want))
