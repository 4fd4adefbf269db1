"""After undo the undone object is gone from the canvas at once, not at the next mouse move.

The check looks at the pixels the canvas's QGraphicsScene paints (QGraphicsScene.render into
a QImage, Qt's own rendering path), counting pixels of the theme's start colour around the
point where the start pose was placed.
"""

from __future__ import annotations

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QImage, QPainter

from arena_studio.core.scene.model import Room, Scene

from .conftest import view_point


def _start_pixels(win, x: float, y: float) -> int:
    canvas = win.canvas
    vp = canvas.viewport()
    image = QImage(vp.width(), vp.height(), QImage.Format.Format_ARGB32)
    image.fill(QColor("white"))
    painter = QPainter(image)
    canvas.render(painter, QRectF(image.rect()), vp.rect())
    painter.end()
    centre = canvas.mapFromScene(QPointF(x, y))
    want = win.theme.qcolor("start")
    count = 0
    for px in range(centre.x() - 12, centre.x() + 13):
        for py in range(centre.y() - 12, centre.y() + 13):
            c = QColor(image.pixel(px, py))
            if (
                abs(c.red() - want.red())
                + abs(c.green() - want.green())
                + abs(c.blue() - want.blue())
                < 40
            ):
                count += 1
    return count


def test_undone_start_pose_leaves_the_canvas(main_window, qtbot):
    win = main_window
    room = Room("hall", ((0.0, 0.0), (8.0, 0.0), (8.0, 5.0), (0.0, 5.0)))
    win.document.reset(Scene(name="hall", rooms=(room,)), None)
    win.canvas.fit_scene()
    assert _start_pixels(win, 4.0, 2.5) == 0
    win.actions_by_id["tool.start_pose"].trigger()
    vp = win.canvas.viewport()
    a, b = view_point(win, 4.0, 2.5), view_point(win, 4.0, 4.0)
    qtbot.mousePress(vp, Qt.MouseButton.LeftButton, pos=a)
    qtbot.mouseMove(vp, b)
    qtbot.mouseRelease(vp, Qt.MouseButton.LeftButton, pos=b)
    assert len(win.document.scene.agents) == 1
    assert _start_pixels(win, 4.0, 2.5) > 20
    win.canvas.setFocus()
    qtbot.keyClick(win.canvas, Qt.Key.Key_Z, Qt.KeyboardModifier.ControlModifier)
    assert win.document.scene.agents == ()
    # no mouse move in between: the canvas's own scene no longer paints it
    assert win.canvas.layer.scene_value.agents == ()
    assert _start_pixels(win, 4.0, 2.5) == 0
    win.actions_by_id["edit.redo"].trigger()
    assert _start_pixels(win, 4.0, 2.5) > 20
