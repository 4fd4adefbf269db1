"""Fast drawing paths: bulk-built paths and sprite blits must match what Qt draws directly.

Reference: Qt itself (a general-purpose library): a QPainterPath built element by element with
moveTo/lineTo, and the same shapes painted straight onto an image or into an SVG document.
"""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import QBuffer, QByteArray, QIODevice, QRectF, QSize
from PySide6.QtGui import QImage, QPainter, QPainterPath
from PySide6.QtSvg import QSvgGenerator

from arena_studio.render.episode_painter import blits_exactly
from arena_studio.render.fastpath import rows_path


def _elements(path: QPainterPath) -> list[tuple[int, float, float]]:
    out = []
    for i in range(path.elementCount()):
        e = path.elementAt(i)
        out.append((int(e.type.value), e.x, e.y))
    return out


def _qt_path(world: np.ndarray, scale: float, ox: float, oy: float) -> QPainterPath:
    path = QPainterPath()
    for row in world:
        for k, (x, y) in enumerate(row):
            px, py = ox + scale * x, oy - scale * y
            if k == 0:
                path.moveTo(px, py)
            else:
                path.lineTo(px, py)
    return path


def test_rows_path_equals_the_path_qt_builds_point_by_point(qapp):
    rng = np.random.default_rng(4)
    world = rng.uniform(-5, 30, (7, 23, 2))
    got = rows_path(world, 31.25, 12.5, 700.0)
    want = _qt_path(world, 31.25, 12.5, 700.0)
    assert _elements(got) == _elements(want)  # exact: same arithmetic, same element types


def test_rows_path_breaks_a_row_at_a_missing_point(qapp):
    world = np.array([[[0, 0], [1, 1], [np.nan, 2], [3, 3], [4, 4]]], dtype=float)
    got = rows_path(world, 10.0, 0.0, 100.0)
    moves = [e for e in _elements(got) if e[0] == 0]  # MoveToElement
    assert len(_elements(got)) == 4 and len(moves) == 2


def test_rows_path_of_an_empty_window_is_empty(qapp):
    assert rows_path(np.zeros((0, 5, 2)), 1.0, 0.0, 0.0).isEmpty()
    assert rows_path(np.zeros((3, 0, 2)), 1.0, 0.0, 0.0).isEmpty()


@pytest.mark.parametrize("kind", ["image", "scaled", "svg"])
def test_sprites_only_where_a_blit_lands_exactly(qapp, kind):
    # Sprites stand in for shapes only on an unscaled raster device; SVG must keep vector
    # shapes (text as text) and a scaled painter would blur a pre-drawn sprite.
    data = QByteArray()  # the buffer reads and writes it in place: keep it alive
    buffer = QBuffer(data)
    if kind == "svg":
        buffer.open(QIODevice.OpenModeFlag.WriteOnly)
        device = QSvgGenerator()
        device.setOutputDevice(buffer)
        device.setSize(QSize(64, 64))
        device.setViewBox(QRectF(0, 0, 64, 64))
    else:
        device = QImage(64, 64, QImage.Format.Format_RGB32)
    painter = QPainter(device)
    try:
        if kind == "scaled":
            painter.scale(2.0, 2.0)
        assert blits_exactly(painter) is (kind == "image")
    finally:
        painter.end()
        buffer.close()


def test_line_pieces_cover_the_line_end_to_end() -> None:
    # Plane geometry (common practice, no source): collinear pieces that abut exactly,
    # start and end on the line's end points, each about WIDE_PIECE_PX long.
    import itertools
    import math

    from arena_studio.render.fastpath import WIDE_PIECE_PX, line_pieces

    pieces = line_pieces(288.9, 329.7, 202.9, 141.5)
    assert (pieces[0].x1(), pieces[0].y1()) == (288.9, 329.7)
    assert (pieces[-1].x2(), pieces[-1].y2()) == (202.9, 141.5)
    total = math.hypot(202.9 - 288.9, 141.5 - 329.7)
    assert sum(p.length() for p in pieces) == pytest.approx(total)
    for a, b in itertools.pairwise(pieces):
        assert (a.x2(), a.y2()) == (b.x1(), b.y1())
        assert WIDE_PIECE_PX <= a.length() < 2 * WIDE_PIECE_PX
    assert len(line_pieces(0.0, 0.0, 5.0, 0.0)) == 1  # shorter than one piece: one piece


def test_hairline_pieces_cut_only_steep_lines() -> None:
    # Plane geometry (common practice, no source); the cut rule is what Qt's 1 px stroker
    # needs here (fastpath.line_pieces): shallow lines whole, steep ones at most
    # HAIRLINE_PIECE_PX tall, and the pieces still run end to end along the line.
    import itertools

    from arena_studio.render.fastpath import HAIRLINE_PIECE_PX, line_pieces

    assert len(line_pieces(0.0, 0.0, 600.0, 400.0, width=1.0)) == 1  # ~34 degrees: whole
    steep = line_pieces(10.0, 500.0, 110.0, 20.5, width=1.0)
    assert len(steep) == int(np.ceil(479.5 / HAIRLINE_PIECE_PX))
    assert all(abs(p.dy()) <= HAIRLINE_PIECE_PX for p in steep)
    assert (steep[0].x1(), steep[0].y1()) == (10.0, 500.0)
    assert (steep[-1].x2(), steep[-1].y2()) == (110.0, 20.5)
    for a, b in itertools.pairwise(steep):
        assert (a.x2(), a.y2()) == (b.x1(), b.y1())
    assert len(line_pieces(0.0, 0.0, 600.0, 400.0, width=1.5)) > 1  # wide pens: by length


def test_grouped_paths_equal_one_path_per_group_and_window(qapp):
    # Reference: the path Qt builds point by point (_qt_path) for each group and window,
    # including an empty window and a group whose window has a missing point.
    from arena_studio.render.fastpath import grouped_rows_paths

    rng = np.random.default_rng(4)
    groups = [rng.uniform(0, 10, (r, 30, 2)) for r in (3, 1, 2)]
    groups[2][1, 12] = np.nan
    windows = [slice(0, 11), np.array([10, 12, 14, 15]), slice(20, 30), slice(5, 5)]
    got = grouped_rows_paths(groups, windows, 7.5, 12.0, 300.0)
    assert [len(row) for row in got] == [3, 3, 3, 3]
    for w, window in enumerate(windows):
        for g, group in enumerate(groups):
            want = group[:, window]
            if not np.isfinite(want).all():
                from arena_studio.render.fastpath import rows_path

                expected = _elements(rows_path(want, 7.5, 12.0, 300.0))  # breaks at the gap
            else:
                expected = _elements(_qt_path(want, 7.5, 12.0, 300.0))
            assert _elements(got[w][g]) == expected
