"""Drawing with simulated mouse input: rooms, snapping of landmarks to walls, vertex edits."""

from __future__ import annotations

import math

from PySide6.QtCore import Qt
from shapely.geometry import Point, Polygon

from arena_studio.core.geometry.regions import wall_lines
from arena_studio.core.scene.model import Scene
from arena_studio.editing.tools import ToolEvent

from .conftest import view_point


def _click(qtbot, win, x, y, mods=Qt.KeyboardModifier.NoModifier):
    qtbot.mouseClick(win.canvas.viewport(), Qt.MouseButton.LeftButton, mods, view_point(win, x, y))


def _empty(win, scale=60.0):
    win.document.reset(Scene(name="blank"), None)
    from PySide6.QtGui import QTransform

    win.canvas.setTransform(QTransform.fromScale(scale, -scale))
    win.canvas.centre_on((3.0, 2.0))
    win.canvas._sync_scale()


def test_room_polygon_from_mouse_clicks(qtbot, main_window):
    win = main_window
    _empty(win)
    win.actions_by_id["tool.room_polygon"].trigger()
    corners = [(0, 0), (4, 0), (4, 3), (0, 3)]
    for x, y in corners:
        _click(qtbot, win, x, y)
    qtbot.keyClick(win.canvas, Qt.Key.Key_Return)
    rooms = win.document.scene.rooms
    assert len(rooms) == 1
    # Reference: shapely (GEOS) polygon area of the intended 4 m x 3 m outline.
    assert Polygon(rooms[0].outline).equals(Polygon(corners))
    assert math.isclose(Polygon(rooms[0].outline).area, 12.0)
    assert win.document.undo_stack.count() == 1


def test_room_polygon_closes_on_double_click_and_escape_cancels(qtbot, main_window):
    win = main_window
    _empty(win)
    win.editor.set_tool("tool.room_polygon")
    for x, y in [(0, 0), (3, 0)]:
        _click(qtbot, win, x, y)
    qtbot.keyClick(win.canvas, Qt.Key.Key_Escape)
    assert win.document.scene.rooms == ()
    for x, y in [(0, 0), (3, 0), (3, 2)]:
        _click(qtbot, win, x, y)
    qtbot.mouseDClick(win.canvas.viewport(), Qt.MouseButton.LeftButton, pos=view_point(win, 3, 2))
    assert len(win.document.scene.rooms) == 1
    assert len(win.document.scene.rooms[0].outline) == 3


def test_rectangle_room_by_drag(qtbot, main_window):
    win = main_window
    _empty(win)
    win.editor.set_tool("tool.room_rect")
    vp = win.canvas.viewport()
    qtbot.mousePress(vp, Qt.MouseButton.LeftButton, pos=view_point(win, 0, 0))
    qtbot.mouseMove(vp, view_point(win, 2, 1))
    qtbot.mouseRelease(vp, Qt.MouseButton.LeftButton, pos=view_point(win, 5, 4))
    (room,) = win.document.scene.rooms
    assert Polygon(room.outline).equals(Polygon([(0, 0), (5, 0), (5, 4), (0, 4)]))


def test_landmark_snaps_onto_wall_line(qtbot, main_window):
    win = main_window
    _empty(win)
    win.editor.apply(
        win.document.scene.with_changes(
            rooms=(
                __import__("arena_studio.core.scene.model", fromlist=["Room"]).Room(
                    "hall", ((0, 0), (6, 0), (6, 4), (0, 4))
                ),
            )
        ),
        "room",
    )
    win.editor.set_tool("tool.landmark")
    # A click 3 px inside the east wall (x = 6) lands the landmark on the wall line.
    ppm = win.canvas.pixels_per_metre()
    _click(qtbot, win, 6 - 3 / ppm, 2.3)
    (lm,) = win.document.scene.landmarks
    assert lm.mount == "wall"
    # Reference: shapely distance from the landmark to the walkable area's boundary.
    assert Point(lm.position).distance(wall_lines(win.document.scene)) < 1e-9
    assert math.isclose(lm.position[0], 6.0, abs_tol=1e-9)
    # Far from any wall: free-standing, and Ctrl bypasses wall snapping too.
    _click(qtbot, win, 3.0, 2.0)
    _click(qtbot, win, 6 - 3 / ppm, 1.0, Qt.KeyboardModifier.ControlModifier)
    mounts = [m.mount for m in win.document.scene.landmarks]
    assert mounts == ["wall", "free", "free"]


def test_vertex_drag_is_one_undo_step_and_insert_delete(qtbot, main_window):
    win = main_window
    _empty(win)
    win.editor.set_tool("tool.room_rect")
    vp = win.canvas.viewport()
    qtbot.mousePress(vp, Qt.MouseButton.LeftButton, pos=view_point(win, 0, 0))
    qtbot.mouseRelease(vp, Qt.MouseButton.LeftButton, pos=view_point(win, 4, 3))
    win.editor.set_tool("tool.select")
    before = win.document.scene
    count = win.document.undo_stack.count()
    qtbot.mousePress(vp, Qt.MouseButton.LeftButton, pos=view_point(win, 4, 3))
    for t in (0.2, 0.5, 0.8, 1.0):
        qtbot.mouseMove(vp, view_point(win, 4 + t, 3 + t))
    qtbot.mouseRelease(vp, Qt.MouseButton.LeftButton, pos=view_point(win, 5, 4))
    assert win.document.scene.rooms[0].outline[2] == (5.0, 4.0)
    assert win.document.undo_stack.count() == count + 1  # the drag merged into one command
    win.document.undo_stack.undo()
    assert win.document.scene == before
    # Double-click the middle of the bottom edge: a vertex is inserted there.
    qtbot.mouseDClick(vp, Qt.MouseButton.LeftButton, pos=view_point(win, 2, 0))
    assert (2.0, 0.0) in win.document.scene.rooms[0].outline
    assert len(win.document.scene.rooms[0].outline) == 5
    win.actions_by_id["edit.delete"].trigger()  # deletes the picked (new) vertex
    assert len(win.document.scene.rooms[0].outline) == 4


def test_rubber_band_shift_click_and_arrow_nudge(qtbot, main_window):
    win = main_window
    ed = win.editor
    _empty(win)
    for x in (1.0, 2.0, 3.0):
        ed.tools["tool.landmark"].press(ToolEvent((x, 1.0), tol=0.01))
    ed.set_tool("tool.select")
    vp = win.canvas.viewport()
    qtbot.mousePress(vp, Qt.MouseButton.LeftButton, pos=view_point(win, 0.5, 0.5))
    qtbot.mouseMove(vp, view_point(win, 2.5, 1.5))
    qtbot.mouseRelease(vp, Qt.MouseButton.LeftButton, pos=view_point(win, 2.5, 1.5))
    assert [k[1] for k in ed.selection()] == ["landmark-1", "landmark-2"]
    _click(qtbot, win, 3.0, 1.0, Qt.KeyboardModifier.ShiftModifier)
    assert len(ed.selection()) == 3
    step = win.canvas.grid_step()
    win.canvas.setFocus()
    qtbot.keyClick(win.canvas, Qt.Key.Key_Right)
    qtbot.keyClick(win.canvas, Qt.Key.Key_Up, Qt.KeyboardModifier.ShiftModifier)
    xs = [lm.position for lm in win.document.scene.landmarks]
    assert all(math.isclose(p[0], x + step) for p, x in zip(xs, (1, 2, 3), strict=True))
    assert all(math.isclose(p[1], 1.0 + step / 10) for p in xs)


def test_backspace_while_drawing_drops_the_last_vertex(qtbot, main_window):
    win = main_window
    _empty(win)
    win.editor.tools["tool.landmark"].press(ToolEvent((5.0, 3.0), tol=0.01))
    win.editor.set_tool("tool.obstacle_polygon")
    for x, y in [(0, 0), (2, 0), (2, 2), (9, 9)]:
        _click(qtbot, win, x, y)
    qtbot.keyClick(win.canvas, Qt.Key.Key_Backspace)
    qtbot.keyClick(win.canvas, Qt.Key.Key_Return)
    (obs,) = win.document.scene.obstacles
    assert len(obs.outline) == 3 and (9.0, 9.0) not in obs.outline
    assert len(win.document.scene.landmarks) == 1  # the selection was not deleted
