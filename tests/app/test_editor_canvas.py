"""Canvas navigation: y up, wheel zoom about the cursor, panning, cursor coordinates, par times."""

from __future__ import annotations

import math

from PySide6.QtCore import QPoint, QPointF, Qt
from PySide6.QtGui import QWheelEvent

from arena_studio.core.resources import DEFAULT_DEMO_SCENE, demo_path
from arena_studio.core.scene.model import Agent, Landmark, Room, Scene, Start

from .conftest import view_point


def _wheel(canvas, pos: QPoint, steps: int) -> None:
    event = QWheelEvent(
        QPointF(pos),
        QPointF(canvas.viewport().mapToGlobal(pos)),
        QPoint(0, 0),
        QPoint(0, 120 * steps),
        Qt.MouseButton.NoButton,
        Qt.KeyboardModifier.NoModifier,
        Qt.ScrollPhase.NoScrollPhase,
        False,
    )
    canvas.wheelEvent(event)


def test_y_axis_points_up_and_aspect_is_locked(main_window):
    canvas = main_window.canvas
    a, b = view_point(main_window, 0, 0), view_point(main_window, 0, 1)
    c = view_point(main_window, 1, 0)
    assert b.y() < a.y()  # one metre up is higher on screen
    assert math.isclose(a.y() - b.y(), c.x() - a.x(), abs_tol=1)  # same px per metre
    t = canvas.transform()
    assert math.isclose(t.m11(), -t.m22())


def test_wheel_zoom_keeps_the_point_under_the_cursor(qtbot, main_window):
    win = main_window
    win.open_path(demo_path(DEFAULT_DEMO_SCENE))
    qtbot.wait(20)
    canvas = win.canvas
    pos = QPoint(300, 200)
    before = canvas.world_at(pos)
    ppm = canvas.pixels_per_metre()
    _wheel(canvas, pos, 2)
    assert math.isclose(canvas.pixels_per_metre(), ppm * 1.44, rel_tol=1e-6)
    after = canvas.world_at(pos)
    assert math.dist(before, after) <= 2 / canvas.pixels_per_metre()


def test_middle_drag_pans_and_cursor_coordinates_show(qtbot, main_window):
    win = main_window
    win.open_path(demo_path(DEFAULT_DEMO_SCENE))
    qtbot.wait(20)  # let the layout settle after opening
    vp = win.canvas.viewport()
    start = win.canvas.world_at(QPoint(400, 300))
    qtbot.mousePress(vp, Qt.MouseButton.MiddleButton, pos=QPoint(400, 300))
    qtbot.mouseMove(vp, QPoint(450, 300))
    qtbot.mouseMove(vp, QPoint(500, 340))
    qtbot.mouseRelease(vp, Qt.MouseButton.MiddleButton, pos=QPoint(500, 340))
    moved = win.canvas.world_at(QPoint(500, 340))
    assert math.dist(start, moved) <= 2 / win.canvas.pixels_per_metre()  # content followed
    assert win.document.undo_stack.count() == 0  # panning is not an edit
    qtbot.mouseMove(vp, view_point(win, 3.0, 2.0))
    numbers = [float(t) for t in win.coords_label.text().split() if t[0].isdigit()]
    tol = 1.5 / win.canvas.pixels_per_metre()  # within a pixel or so
    assert math.isclose(numbers[0], 3.0, abs_tol=tol) and math.isclose(numbers[1], 2.0, abs_tol=tol)


def test_goals_panel_shows_par_time_per_goal(main_window):
    # One agent 4 m from a landmark with a 0.5 m reach, top speed 0.8 m/s. Common practice, no
    # source: no route can beat the straight-line distance to the reach circle at top speed.
    scene = Scene(
        name="par",
        rooms=(Room("hall", ((0, 0), (8, 0), (8, 4), (0, 4))),),
        landmarks=(Landmark("bin", "Bin", (5.0, 2.0), 0.5, "free"),),
        agents=(Agent("rover", 0.25, 0.8, 2.0, Start(pose=(1.0, 2.0, 0.0))),),
    )
    win = main_window
    win.document.reset(scene, None)
    win.run_checks_now()
    table = win.goals_panel.table
    assert table.rowCount() == 1
    text = table.item(0, 2).text()
    assert text.endswith(" s"), text
    assert float(text[:-2]) >= (4.0 - 0.5) / 0.8 - 0.05


def test_goal_table_lists_at_most_its_limit_and_says_so(main_window):
    from arena_studio.app.editor.goals_panel import MAX_TABLE_GOALS
    from tests.fuzz import big_scenes

    count = MAX_TABLE_GOALS + 100
    win = main_window
    win.document.reset(Scene.from_dict(big_scenes.many_landmarks(count)), None)
    win.goals_panel._fill_table()
    assert win.goals_panel.table.rowCount() == MAX_TABLE_GOALS
    assert f"{count} goals" in win.goals_panel.summary.text()
    assert f"first {MAX_TABLE_GOALS} are listed" in win.goals_panel.summary.text()
