"""Never lose work: recovery copies, refused files, unsaved-changes prompt, settings."""

from __future__ import annotations

import json
from pathlib import Path

from PySide6.QtCore import Qt

from arena_studio.core.resources import DEFAULT_DEMO_SCENE, demo_path
from arena_studio.core.scene.model import load_scene
from arena_studio.editing.tools import ToolEvent


def test_autosave_then_restore_after_crash(make_window, tmp_path):
    first = make_window()
    first.open_path(demo_path(DEFAULT_DEMO_SCENE))
    first.editor.tools["tool.landmark"].press(ToolEvent((3.0, 5.0), tol=0.01))
    assert first.document.dirty
    assert first.autosave_now()
    assert not first.autosave_now()  # nothing new since the last copy
    edited = first.document.scene
    copies = list((tmp_path / "recovery").glob("*.scene.json"))
    assert len(copies) == 1
    # The copy is an ordinary scene file, read back by the core loader.
    assert load_scene(copies[0]) == edited

    # "Crash": the first window never closes cleanly; a new one starts.
    second = make_window()
    assert second.offer_recovery()
    assert second.dialogs.asked_restore == 1
    assert second.document.scene == edited
    assert second.document.dirty  # restored work still needs saving
    assert second.document.path == Path(demo_path(DEFAULT_DEMO_SCENE)).resolve()
    assert not [
        p
        for p in (tmp_path / "recovery").glob("*.meta.json")
        if second.recovery.session not in p.name
    ]


def test_declined_restore_deletes_copy(make_window):
    first = make_window()
    first.editor.tools["tool.landmark"].press(ToolEvent((1.0, 1.0)))
    first.autosave_now()
    second = make_window()
    second.dialogs.restore_answer = False
    assert not second.offer_recovery()
    assert second.recovery.orphans() == []


def test_newer_or_damaged_file_leaves_document_untouched(main_window, tmp_path):
    win = main_window
    win.open_path(demo_path(DEFAULT_DEMO_SCENE))
    win.editor.tools["tool.landmark"].press(ToolEvent((2.0, 2.0)))
    before, path_before = win.document.scene, win.document.path
    newer = json.loads(demo_path(DEFAULT_DEMO_SCENE).read_text())
    newer["version"] = 99
    (tmp_path / "newer.scene.json").write_text(json.dumps(newer))
    (tmp_path / "broken.scene.json").write_text('{"format": "arena-studio.scene", "vers')
    assert not win.open_path(tmp_path / "newer.scene.json")
    assert "newer" in win.dialogs.errors[-1][1]
    assert not win.open_path(tmp_path / "broken.scene.json")
    assert "line 1" in win.dialogs.errors[-1][1]
    assert win.document.scene == before and win.document.path == path_before
    assert win.document.dirty
    assert win.dialogs.asked_unsaved == 0  # refused before anything was replaced


def test_unsaved_changes_prompt_and_cancel_keeps_window(qtbot, main_window):
    win = main_window
    win.editor.tools["tool.landmark"].press(ToolEvent((2.0, 2.0)))
    assert "•" in win.windowTitle()
    win.dialogs.unsaved_answer = "cancel"
    assert not win.close()
    assert win.isVisible()
    win.dialogs.unsaved_answer = "discard"
    win.new_scene()
    assert win.document.scene.landmarks == ()
    assert win.dialogs.asked_unsaved == 2


def test_tape_goes_to_replay_hook(main_window, tmp_path):
    tape = tmp_path / "run.tape"
    tape.write_bytes(b"not really a tape")
    before = main_window.document.scene
    main_window.open_path(tape)
    assert main_window.document.scene == before


def test_settings_persist_recent_files_theme_and_layout(make_window, tmp_path):
    first = make_window()
    scene_file = tmp_path / "keep.scene.json"
    first.open_path(demo_path(DEFAULT_DEMO_SCENE))
    assert first.save_to(scene_file)
    first.actions_by_id["view.dark"].trigger()
    first.addDockWidget(Qt.DockWidgetArea.LeftDockWidgetArea, first.docks["findings"])
    first.docks["goals"].hide()
    first.close()
    second = make_window()
    assert second.recent_files()[0] == str(scene_file.resolve())
    assert second.theme.name == "dark"
    # places come back; a panel hidden last time is shown again (never lost)
    left = Qt.DockWidgetArea.LeftDockWidgetArea
    assert second.dockWidgetArea(second.docks["findings"]) == left
    assert second.docks["goals"].toggleViewAction().isChecked()
    assert second.recent_menu.actions()[0].text() == "keep.scene.json"


def test_dropping_a_scene_file_opens_it(qtbot, main_window):
    from PySide6.QtCore import QMimeData, QPointF, Qt, QUrl
    from PySide6.QtGui import QDropEvent

    mime = QMimeData()
    mime.setUrls([QUrl.fromLocalFile(str(demo_path("lab-wing.scene.json")))])
    event = QDropEvent(
        QPointF(50, 50),
        Qt.DropAction.CopyAction,
        mime,
        Qt.MouseButton.NoButton,
        Qt.KeyboardModifier.NoModifier,
    )
    main_window.dropEvent(event)
    assert main_window.document.path.name == "lab-wing.scene.json"
    assert main_window.document.scene == load_scene(demo_path("lab-wing.scene.json"))
    assert "lab-wing.scene.json" in main_window.windowTitle()


def test_no_argument_start_opens_demo_scene_and_demo_tape(main_window):
    from arena_studio.app.launch import _open_demo_tape

    _open_demo_tape(main_window)
    assert main_window.open_demo()
    assert main_window.modes.currentWidget() is main_window.canvas
    assert main_window.document.path.name == DEFAULT_DEMO_SCENE
    assert main_window.dialogs.errors == []
    page = main_window.replay_page  # the replay mode holds the demo tape, ready to show
    assert page.session is not None and len(page.session) > 0
    page.session.wait_summaries(30000)  # let its background work finish before teardown


def test_standard_shortcuts_from_the_action_table(main_window):
    # Common desktop practice, no source: Ctrl+Y and Ctrl+Shift+Z both redo.
    keys = {a.toString() for a in main_window.actions_by_id["edit.redo"].shortcuts()}
    assert {"Ctrl+Shift+Z", "Ctrl+Y"} <= keys
    assert main_window.actions_by_id["file.save_as"].shortcut().toString() == "Ctrl+Shift+S"
    assert main_window.actions_by_id["edit.undo"].shortcut().toString() == "Ctrl+Z"
    file_menu = main_window.menuBar().actions()[0].menu()
    assert main_window.recent_menu.menuAction() in file_menu.actions()
