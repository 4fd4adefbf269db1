"""Actions follow the page on screen: editing keys never reach the hidden editor in replay,
and the View zoom actions act on the canvas the user sees.

The behaviour checked is the desktop convention that a hidden view takes no commands
(common practice, no source); the scene is compared with the document before the keys, and
zoom with the canvas' own pixels-per-metre.
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtTest import QTest

from arena_studio.app.actions import ACTIONS
from arena_studio.core.resources import DEFAULT_DEMO_SCENE, demo_path

from .test_replay_support import write_test_tape


def _open_both(win, tmp_path):
    assert win.open_path(demo_path(DEFAULT_DEMO_SCENE))
    win.editor.select_all()
    assert win.editor.selection()
    tape = write_test_tape(tmp_path / "hall.tape", episodes=2)
    assert win.open_path(tape)
    page = win.replay_page
    assert page.wait_loaded()
    return page


def test_editing_actions_are_off_in_replay_and_back_in_layout(make_window, tmp_path):
    win = make_window()
    page = _open_both(win, tmp_path)
    assert win.mode == "replay" and win.modes.currentWidget() is page
    layout_only = [a.id for a in ACTIONS if a.modes == ("layout",)]
    assert {"edit.delete", "edit.select_all", "edit.undo", "tool.room_polygon"} <= set(layout_only)
    for action_id in layout_only:
        assert not win.actions_by_id[action_id].isEnabled(), action_id
    assert win.actions_by_id["view.zoom_in"].isEnabled()
    assert win.actions_by_id["mode.replay"].isChecked()

    win.set_mode("layout")
    assert win.actions_by_id["edit.delete"].isEnabled()  # the selection is still there
    assert win.actions_by_id["tool.room_polygon"].isEnabled()
    assert not page.replay_actions["play"].isEnabled()  # playback keys belong to replay


def test_editing_keys_in_replay_leave_the_scene_alone(make_window, tmp_path, qtbot):
    win = make_window()
    page = _open_both(win, tmp_path)
    scene, selection, tool = win.document.scene, win.editor.selection(), win.editor.tool.name
    page.canvas.setFocus()
    qtbot.waitUntil(lambda: page.canvas.hasFocus(), timeout=2000)
    for key, mods in (
        (Qt.Key.Key_Delete, Qt.KeyboardModifier.NoModifier),
        (Qt.Key.Key_2, Qt.KeyboardModifier.NoModifier),
        (Qt.Key.Key_A, Qt.KeyboardModifier.ControlModifier),
        (Qt.Key.Key_Z, Qt.KeyboardModifier.ControlModifier),
        (Qt.Key.Key_Up, Qt.KeyboardModifier.NoModifier),
    ):
        QTest.keyClick(page.canvas, key, mods)
    assert win.document.scene == scene
    assert win.editor.selection() == selection
    assert win.editor.tool.name == tool
    # The same Delete in the layout editor does delete: the key itself works.
    win.set_mode("layout")
    win.canvas.setFocus()
    qtbot.waitUntil(lambda: win.canvas.hasFocus(), timeout=2000)
    QTest.keyClick(win.canvas, Qt.Key.Key_Delete)
    assert win.document.scene != scene


def test_zoom_actions_act_on_the_visible_canvas(make_window, tmp_path):
    win = make_window()
    page = _open_both(win, tmp_path)
    editor_ppm = win.canvas.pixels_per_metre()
    replay_ppm = page.canvas.pixels_per_metre()
    win.actions_by_id["view.zoom_in"].trigger()
    assert abs(page.canvas.pixels_per_metre() / replay_ppm - 1.25) < 1e-6
    assert win.canvas.pixels_per_metre() == editor_ppm
    win.actions_by_id["view.fit"].trigger()
    assert abs(page.canvas.pixels_per_metre() - replay_ppm) < 1e-6  # fitted again

    win.actions_by_id["mode.layout"].trigger()
    assert win.mode == "layout"
    editor_ppm = win.canvas.pixels_per_metre()  # shown again: it refits to its new size
    win.actions_by_id["view.zoom_out"].trigger()
    assert abs(win.canvas.pixels_per_metre() / editor_ppm - 0.8) < 1e-6


def test_new_scene_from_replay_goes_to_the_editor(make_window, tmp_path):
    win = make_window()
    _open_both(win, tmp_path)
    win.actions_by_id["file.new"].trigger()  # FakeDialogs discards unsaved changes
    assert win.mode == "layout" and win.modes.currentWidget() is win.canvas
    assert win.actions_by_id["tool.select"].isEnabled()


def test_no_key_is_bound_twice_in_one_page(make_window):
    # Qt's shortcut map: two enabled actions (or one action twice) on one key sequence are
    # ambiguous and neither fires (QAction::activatedAmbiguously, Qt documentation).
    win = make_window()
    for mode in ("layout", "replay"):
        seen: dict[str, str] = {}
        for spec in ACTIONS:
            if spec.modes and mode not in spec.modes:
                continue
            for seq in win.actions_by_id[spec.id].shortcuts():
                text = seq.toString()
                assert text not in seen, f"{text}: {seen.get(text)} and {spec.id}"
                seen[text] = spec.id


def test_ctrl_q_closes_a_window_with_nothing_unsaved(make_window, qtbot):
    win = make_window()
    assert win.open_path(demo_path(DEFAULT_DEMO_SCENE))
    quit_keys = [s.toString() for s in win.actions_by_id["file.quit"].shortcuts()]
    assert quit_keys == ["Ctrl+Q"]  # once, even where the platform's Quit key is Ctrl+Q too
    win.canvas.setFocus()
    qtbot.waitUntil(lambda: win.canvas.hasFocus(), timeout=2000)  # window active: keys count
    QTest.keyClick(win.canvas, Qt.Key.Key_Q, Qt.KeyboardModifier.ControlModifier)
    qtbot.waitUntil(lambda: not win.isVisible(), timeout=2000)


def test_key_sequences_lists_each_key_once(qapp):
    from PySide6.QtGui import QKeySequence

    from arena_studio.app.actions import ActionSpec, key_sequences

    twice = ActionSpec("x.twice", "Twice", ("Ctrl+Q", "Ctrl+Q", "Ctrl+Y"))
    assert [s.toString() for s in key_sequences(twice)] == ["Ctrl+Q", "Ctrl+Y"]
    undo = QKeySequence.keyBindings(QKeySequence.StandardKey.Undo)
    both = ActionSpec(
        "x.undo", "Undo", (QKeySequence.StandardKey.Undo, *[s.toString() for s in undo])
    )
    assert len(key_sequences(both)) == len(undo)
