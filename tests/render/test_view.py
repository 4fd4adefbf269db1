"""ViewTransform and the numpy path builder, checked against Qt's own geometry classes.

Reference: QTransform.map (Qt's affine mapping) for the world -> pixel mapping; QPainterPath
built element by element (moveTo/lineTo) for the fast path builder.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from PySide6.QtCore import QPointF, QRectF
from PySide6.QtGui import QPainterPath

from arena_studio.render.fastpath import polylines_path, segments_path
from arena_studio.render.view import ViewTransform

coords = st.floats(-1e4, 1e4, allow_nan=False)


@settings(max_examples=60, deadline=None)
@given(coords, coords, st.floats(0.01, 1e3))
def test_mapping_matches_qtransform_and_round_trips(x, y, scale):
    view = ViewTransform(scale, 17.0, 400.0)
    p = view.to_px(x, y)
    q = view.qtransform().map(QPointF(x, y))  # Qt's affine map as the reference
    assert p.x() == pytest.approx(q.x(), rel=1e-9, abs=1e-6)
    assert p.y() == pytest.approx(q.y(), rel=1e-9, abs=1e-6)
    wx, wy = view.to_world(p.x(), p.y())
    assert wx == pytest.approx(x, rel=1e-9, abs=1e-6)
    assert wy == pytest.approx(y, rel=1e-9, abs=1e-6)
    arr = view.map_array(np.array([[x, y]]))
    assert arr[0, 0] == pytest.approx(p.x()) and arr[0, 1] == pytest.approx(p.y())


def test_y_points_up_on_screen():
    view = ViewTransform(10.0, 0.0, 100.0)
    assert view.to_px(0, 1).y() < view.to_px(0, 0).y()


@settings(max_examples=40, deadline=None)
@given(st.floats(0.1, 100), st.floats(0.1, 100), st.integers(50, 2000), st.integers(50, 2000))
def test_fit_keeps_aspect_centres_and_respects_margin(ww, wh, w, h):
    margin = 10.0
    view = ViewTransform.fit((0.0, 0.0, ww, wh), (0.0, 0.0, float(w), float(h)), margin)
    lo, hi = view.to_px(0, 0), view.to_px(ww, wh)
    # aspect locked: one scale on both axes
    assert (hi.x() - lo.x()) / ww == pytest.approx((lo.y() - hi.y()) / wh)
    # inside the margin on both axes and touching it on at least one
    assert lo.x() >= margin - 1e-6 and hi.x() <= w - margin + 1e-6
    assert hi.y() >= margin - 1e-6 and lo.y() <= h - margin + 1e-6
    fills_x = hi.x() - lo.x() == pytest.approx(w - 2 * margin)
    fills_y = lo.y() - hi.y() == pytest.approx(h - 2 * margin)
    assert fills_x or fills_y
    # centred
    assert (lo.x() + hi.x()) / 2 == pytest.approx(w / 2)
    assert (lo.y() + hi.y()) / 2 == pytest.approx(h / 2)


def test_fit_accepts_a_qrectf_and_refuses_bad_scales():
    view = ViewTransform.fit((0, 0, 2, 1), QRectF(100, 50, 400, 400), 0)
    assert view.to_px(0, 1).x() == pytest.approx(100.0)
    with pytest.raises(ValueError):
        ViewTransform(0.0, 0, 0)


def _elements(path: QPainterPath) -> list[tuple[int, float, float]]:
    out = []
    for i in range(path.elementCount()):
        e = path.elementAt(i)
        out.append((int(e.type.value), e.x, e.y))
    return out


def test_polylines_path_equals_a_path_built_point_by_point():
    rng = np.random.default_rng(3)
    xy = rng.uniform(-50, 50, (40, 2))
    starts = np.zeros(40, bool)
    starts[[0, 7, 9, 30]] = True  # Qt merges back-to-back moveTo, so no 1-point runs
    reference = QPainterPath()
    for (x, y), s in zip(xy, starts, strict=True):
        if s:
            reference.moveTo(x, y)
        else:
            reference.lineTo(x, y)
    built = polylines_path(xy, starts)
    assert _elements(built) == _elements(reference)
    assert built.boundingRect() == reference.boundingRect()


def test_segments_and_non_finite_points():
    a = np.array([[0.0, 0.0], [5.0, 5.0]])
    b = np.array([[1.0, 0.0], [6.0, 5.0]])
    path = segments_path(a, b)
    assert [e[0] for e in _elements(path)] == [0, 1, 0, 1]  # MoveTo, LineTo, MoveTo, LineTo
    xy = np.array([[0.0, 0.0], [1.0, 1.0], [np.nan, 0.0], [2.0, 2.0], [3.0, 3.0]])
    broken = polylines_path(xy, np.array([True, False, False, False, False]))
    assert [e[0] for e in _elements(broken)] == [0, 1, 0, 1]
    assert polylines_path(np.zeros((0, 2)), np.zeros(0, bool)).elementCount() == 0


def test_fit_scene_keeps_every_reach_ring_inside(qapp):
    """A wall landmark's reach ring pokes out of the room; the fitted frame still holds it.

    Reference: shapely's ``contains`` (OGC Simple Features) of each ring's pixel box in the
    frame's rectangle less its margin."""
    import shapely

    from arena_studio.core.resources import demo_path
    from arena_studio.core.scene.model import load_scene

    rect = (0.0, 0.0, 1000.0, 560.0)
    margin = 14.0
    for name in ("greenhouse", "lab-wing", "parking-level"):
        scene = load_scene(demo_path(f"{name}.scene.json"))
        view = ViewTransform.fit_scene(scene, rect, margin_px=margin)
        frame = shapely.box(margin - 1e-6, margin - 1e-6, 1000 - margin + 1e-6, 560 - margin + 1e-6)
        for lm in scene.landmarks:
            (x, y), r = lm.position, lm.reach_radius
            a, b = view.to_px(x - r, y + r), view.to_px(x + r, y - r)
            ring = shapely.box(a.x(), a.y(), b.x(), b.y())
            assert frame.contains(ring), f"{name}: {lm.id}'s ring leaves the frame"
