"""Explicit goals by clicking landmarks: the Goals panel's pick mode, the canvas mark, Enter,
undo, and removing a goal from the list.

The goal a user built is checked against ``core.goals.enumerate_goals`` (the enumeration the
simulator samples from; its order rule is the README's "families, then explicit vectors"),
so the test reads the model the way a simulator would. Clicking a landmark to toggle it is
the usual pick-list interaction (common practice, no source).
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtTest import QTest

from arena_studio.core.planning.goal_set import enumerate_goals
from arena_studio.core.resources import DEFAULT_DEMO_SCENE, demo_path

from .conftest import view_point


def _click_landmark(qtbot, win, landmark_id: str) -> None:
    lm = next(lm for lm in win.document.scene.landmarks if lm.id == landmark_id)
    # A little off the centre: the reach disc counts, the user need not hit the glyph exactly.
    x, y = lm.position[0] + 0.15, lm.position[1] - 0.1
    qtbot.mouseClick(win.canvas.viewport(), Qt.MouseButton.LeftButton, pos=view_point(win, x, y))


def _indices(scene, ids):
    return tuple(i for i, lm in enumerate(scene.landmarks) if lm.id in ids)


def test_pick_landmarks_on_the_canvas_and_add_the_goal(qtbot, main_window):
    win = main_window
    assert win.open_path(demo_path(DEFAULT_DEMO_SCENE))
    panel = win.goals_panel
    before = enumerate_goals(win.document.scene).vectors.shape[0]
    assert "Pick on canvas" in panel.pick_hint.text() and panel.pick_button.toolTip()

    panel.pick_button.click()
    assert win.editor.tool.name == "tool.goal_pick"
    assert win.actions_by_id["tool.goal_pick"].isChecked()
    for lid in ("valve-west", "seed-tray", "tool-rack", "seed-tray"):  # the last one toggles out
        _click_landmark(qtbot, win, lid)
    assert win.editor.goal_picks == ("valve-west", "tool-rack")
    scene = win.document.scene
    assert win.canvas.layer.picked == _indices(scene, {"valve-west", "tool-rack"})
    assert "West valve + Tool rack" in panel.picked_label.text()
    _click_landmark(qtbot, win, "water-tank")
    assert scene == win.document.scene  # picking is not an edit

    win.canvas.setFocus()
    QTest.keyClick(win.canvas, Qt.Key.Key_Return)
    table = enumerate_goals(win.document.scene)
    targets = {tuple(int(i) for i in row.nonzero()[0]) for row in table.vectors}
    assert _indices(scene, {"valve-west", "tool-rack", "water-tank"}) in targets
    assert table.vectors.shape[0] == before + 1
    assert win.editor.goal_picks == () and win.canvas.layer.picked == ()
    assert win.editor.tool.name == "tool.goal_pick"  # ready for the next goal
    chosen = panel.table.selectionModel().selectedRows()  # the new goal is shown in the list
    assert [r.row() for r in chosen] == [table.vectors.shape[0] - 1]
    assert panel.remove_button.isEnabled()

    win.document.undo_stack.undo()  # one undo step takes the goal back
    assert enumerate_goals(win.document.scene).vectors.shape[0] == before


def test_leaving_pick_mode_drops_the_picks_and_escape_clears_them(qtbot, main_window):
    win = main_window
    assert win.open_path(demo_path(DEFAULT_DEMO_SCENE))
    panel = win.goals_panel
    panel.pick_button.click()
    _click_landmark(qtbot, win, "sensor-north")
    win.canvas.setFocus()
    QTest.keyClick(win.canvas, Qt.Key.Key_Escape)
    assert win.editor.goal_picks == ()
    _click_landmark(qtbot, win, "sensor-north")
    win.actions_by_id["tool.select"].trigger()
    assert not panel.pick_button.isChecked() and win.editor.goal_picks == ()
    assert win.canvas.layer.picked == ()


def test_add_goal_waits_for_pick_mode_and_selected_landmarks_become_picks(qtbot, main_window):
    win = main_window
    assert win.open_path(demo_path(DEFAULT_DEMO_SCENE))
    panel = win.goals_panel
    assert not panel.add_button.isEnabled()
    ids = ("valve-west", "sensor-north", "potting-bench")
    win.editor.set_selection([("landmarks", i) for i in ids])
    assert not panel.add_button.isEnabled()  # selecting is not picking
    panel.add_from_selection()
    assert win.document.scene.goals.vectors == ()
    panel.pick_button.click()  # the selected landmarks are the first picks
    assert win.editor.goal_picks == ids
    assert panel.add_button.isEnabled()
    panel.add_button.click()
    assert not panel.add_button.isEnabled()  # the picks cleared for the next goal
    scene = win.document.scene
    vec = tuple(1 if lm.id in ids else 0 for lm in scene.landmarks)
    assert scene.goals.vectors == (vec,)

    rows = [tuple(int(b) for b in v) for v in enumerate_goals(scene).vectors]
    panel.table.selectRow(0)  # a 1-hot family goal: not removable from the list
    assert not panel.remove_button.isEnabled()
    panel.table.selectRow(rows.index(vec))
    assert panel.remove_button.isEnabled()
    panel.remove_button.click()
    win.actions_by_id["tool.select"].trigger()
    _click_landmark(qtbot, win, "seed-tray")
    assert not panel.add_button.isEnabled()
    assert win.document.scene.goals.vectors == ()


def test_a_goal_a_family_already_has_is_added_with_a_note(qtbot, main_window):
    win = main_window
    assert win.open_path(demo_path(DEFAULT_DEMO_SCENE))  # families 1-hot and 2-hot
    win.goals_panel.pick_button.click()
    for lid in ("valve-west", "seed-tray"):
        _click_landmark(qtbot, win, lid)
    win.goals_panel.add_button.click()
    assert len(win.document.scene.goals.vectors) == 1
    assert "2-hot family" in win.message_label.text()
    # core.goals merges the duplicate into the family's goal: the goal count does not grow.
    assert enumerate_goals(win.document.scene).vectors.shape[0] == 6 + 15
