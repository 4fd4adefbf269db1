"""Ctrl+S on a bundled demo saves the user's copy elsewhere and leaves the demo as shipped;
saving an edited scene beside an open tape does not repeat the "differs from the tape" warning.

Bytes of the demo file are compared before and after (a plain file comparison); the saved copy
is read back with the standard-library json parser, an outside reader of the scene format.
"""

from __future__ import annotations

import json

from arena_studio.core.resources import DEFAULT_DEMO_SCENE, demo_path

from .test_replay_support import write_test_tape


def test_save_on_the_demo_goes_to_save_as(main_window, tmp_path):
    win = main_window
    demo = demo_path(DEFAULT_DEMO_SCENE)
    shipped = demo.read_bytes()
    assert win.open_path(demo)
    win.editor.select_all()
    win.editor.nudge(1, 0, fine=False)
    assert win.document.dirty
    copy = tmp_path / "my-greenhouse.scene.json"
    win.dialogs.save_answer = str(copy)
    win.actions_by_id["file.save"].trigger()
    assert demo.read_bytes() == shipped
    assert json.loads(copy.read_text(encoding="utf-8"))["name"] == win.document.scene.name
    assert win.document.path == copy.resolve() and not win.document.dirty
    # From now on Save writes the copy in place, without asking.
    win.editor.nudge(0, 1, fine=False)
    win.dialogs.save_answer = None
    win.actions_by_id["file.save"].trigger()
    assert not win.document.dirty and demo.read_bytes() == shipped


def test_saving_an_edited_scene_beside_a_tape_does_not_warn(main_window, tmp_path):
    win = main_window
    tape = write_test_tape(tmp_path / "hall.tape", episodes=2)
    assert win.open_path(tape)
    said: list[str] = []
    win.replay_page.warn = lambda title, text: said.append(text)
    win.replay_page.open_scene_copy()  # the tape's own scene, unsaved, in the editor
    win.editor.select_all()
    win.editor.nudge(1, 0, fine=False)
    win.dialogs.save_answer = str(tmp_path / "edited.scene.json")
    assert win.save()
    assert said == []
    # opening it beside the tape says so in the status bar, with no modal box
    assert win.open_path(tmp_path / "edited.scene.json")
    assert said == []
    assert "edited.scene.json" in win.message_label.text()
    assert "differs" in win.message_label.text()
