"""The issue's whole story with the mouse: two rooms joined by a doorway, an obstacle, six
landmarks, two starts, one- and two-hot goals plus an explicit goal; save, quit, reopen."""

from __future__ import annotations

import math

from PySide6.QtCore import Qt
from PySide6.QtGui import QTransform
from shapely.geometry import Polygon

from arena_studio.core.geometry.regions import walkable_area
from arena_studio.core.scene.model import Scene, load_scene

from .conftest import view_point


def _drag(qtbot, win, a, b):
    vp = win.canvas.viewport()
    qtbot.mousePress(vp, Qt.MouseButton.LeftButton, pos=view_point(win, *a))
    qtbot.mouseMove(vp, view_point(win, (a[0] + b[0]) / 2, (a[1] + b[1]) / 2))
    qtbot.mouseRelease(vp, Qt.MouseButton.LeftButton, pos=view_point(win, *b))


def _click(qtbot, win, x, y, mods=Qt.KeyboardModifier.NoModifier):
    qtbot.mouseClick(win.canvas.viewport(), Qt.MouseButton.LeftButton, mods, view_point(win, x, y))


def test_two_room_layout_round_trip(qtbot, make_window, tmp_path):
    win = make_window()
    win.new_scene()
    win.canvas.setTransform(QTransform.fromScale(45.0, -45.0))
    win.canvas.centre_on((7.0, 3.0))
    win.canvas._sync_scale()
    assert win.canvas.grid_step() == 0.5  # clicks below land on whole half metres

    tool = win.actions_by_id
    tool["tool.room_rect"].trigger()
    _drag(qtbot, win, (0, 0), (6, 5))  # west room
    _drag(qtbot, win, (7, 0), (13, 5))  # east room
    _drag(qtbot, win, (5.5, 2), (7.5, 3))  # doorway bridging both
    # Reference: GEOS union of the three rooms is one connected walkable area.
    assert walkable_area(win.document.scene).geom_type == "Polygon"

    tool["tool.obstacle_rect"].trigger()
    _drag(qtbot, win, (2, 2), (4, 3))

    tool["tool.landmark"].trigger()
    ppm = win.canvas.pixels_per_metre()
    near = 2 / ppm  # two pixels off the wall line
    for x, y in [(0 + near, 4), (3, 5 - near), (13 - near, 1), (10, 0 + near)]:
        _click(qtbot, win, x, y)  # wall-mounted
    for x, y in [(1.5, 1.0), (10.0, 3.5)]:
        _click(qtbot, win, x, y)  # free-standing
    lms = win.document.scene.landmarks
    assert [lm.mount for lm in lms] == ["wall"] * 4 + ["free"] * 2

    tool["tool.start_pose"].trigger()
    _drag(qtbot, win, (1, 0.5), (2, 0.5))
    tool["tool.start_region"].trigger()
    for x, y in [(11, 3.5), (12, 3.5), (12, 4.5), (11, 4.5)]:
        _click(qtbot, win, x, y)
    qtbot.keyClick(win.canvas, Qt.Key.Key_Return)
    agents = win.document.scene.agents
    assert len(agents) == 2
    assert math.isclose(agents[0].start.pose[2], 0.0, abs_tol=1e-9)
    assert Polygon(agents[1].start.region).area == 1.0

    goals = win.goals_panel
    goals.family_boxes[1].setChecked(True)
    goals.family_boxes[2].setChecked(True)
    tool["tool.select"].trigger()
    _click(qtbot, win, 1.5, 1.0)
    _click(qtbot, win, 10.0, 3.5, Qt.KeyboardModifier.ShiftModifier)
    _click(qtbot, win, 13 - 2 / ppm, 1, Qt.KeyboardModifier.ShiftModifier)
    assert not goals.add_button.isEnabled()  # Add goal works on picks, not a selection
    goals.pick_button.click()  # the selected landmarks become the picks
    goals.add_button.click()
    g = win.document.scene.goals
    assert g.families == (1, 2)
    assert g.vectors == ((0, 0, 1, 0, 1, 1),)
    # Reference: C(6,1) + C(6,2) k-hot goals (math.comb) plus one explicit 3-hot goal.
    expected = math.comb(6, 1) + math.comb(6, 2) + 1
    assert goals.table.rowCount() == expected

    # Three targets at once need three agents: the checker flags the goal in the list.
    win.run_checks_now()
    assert "unreachable" in goals.table.item(expected - 1, 3).text()
    goals.rule.setCurrentIndex(goals.rule.findData("all_visited"))
    win.run_checks_now()
    assert not [f for f in win.findings if f.severity == "error"], win.findings
    assert "unreachable" not in goals.table.item(expected - 1, 3).text()

    # Undo anything, then redo it all.
    edited = win.document.scene
    stack = win.document.undo_stack
    while stack.canUndo():
        stack.undo()
    assert win.document.scene == Scene(name="Untitled scene")
    while stack.canRedo():
        stack.redo()
    assert win.document.scene == edited

    target = tmp_path / "two-rooms.scene.json"
    win.dialogs.save_answer = str(target)
    win.actions_by_id["file.save"].trigger()  # unnamed: asks for a file name
    assert not win.document.dirty and "•" not in win.windowTitle()
    assert win.document.scene.name == "two-rooms"  # the file name named the scene
    edited = win.document.scene
    assert win.close()

    again = make_window()
    assert again.open_path(again.recent_files()[0])
    assert again.document.scene == edited
    assert load_scene(target) == edited
