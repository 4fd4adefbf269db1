"""Editor wording: counted nouns agree with their number, the scene takes its file's name
on Save As, and a clean start with the demo tape says nothing about matching scenes.

The plural rule (one -> singular, else plural) is English grammar, common practice.
"""

from __future__ import annotations

import json

from arena_studio.core.checks.checker import check_scene
from arena_studio.core.scene.model import GoalSpec, Landmark, Room, Scene
from arena_studio.core.wording import count

from .test_replay_support import small_scene, write_test_tape


def test_count_agrees_with_the_number():
    assert count(1, "target") == "1 target"
    assert count(0, "agent") == "0 agents"
    assert count(2, "agent") == "2 agents"
    assert count(1, "vertex", "vertices") == "1 vertex"
    assert count(3, "vertex", "vertices") == "3 vertices"


def test_goal_findings_count_targets_and_agents():
    scene = Scene(
        name="hall",
        rooms=(Room("hall", ((0.0, 0.0), (6.0, 0.0), (6.0, 4.0), (0.0, 4.0))),),
        landmarks=(Landmark("a", "A", (2.0, 2.0), 0.5, "free"),),
        goals=GoalSpec(families=(1,)),
    )
    texts = [f.message for f in check_scene(scene)]
    needs = [t for t in texts if "needs" in t]
    assert needs, texts
    assert all("1 targets" not in t and "agent(s)" not in t for t in texts)
    assert any("needs 1 target covered" in t and "0 agents" in t for t in needs)


def test_properties_contents_line(main_window):
    win = main_window
    room = Room("hall", ((0.0, 0.0), (6.0, 0.0), (6.0, 4.0), (0.0, 4.0)))
    win.document.reset(Scene(name="hall", rooms=(room,)), None)
    win.editor.set_selection(())
    texts = [label.text() for label in win.properties.findChildren(type(win.message_label))]
    line = next(t for t in texts if "room" in t and "landmark" in t)
    assert line == "1 room, 0 obstacles, 0 landmarks, 0 agents"


def test_save_as_names_an_untitled_scene(main_window, tmp_path):
    win = main_window
    win.new_scene()
    assert win.document.scene.name == "Untitled scene"
    win.dialogs.save_answer = str(tmp_path / "my.scene.json")
    assert win.save_as()
    assert win.document.scene.name == "my"
    assert json.loads((tmp_path / "my.scene.json").read_text(encoding="utf-8"))["name"] == "my"
    assert not win.document.dirty
    win.dialogs.save_answer = str(tmp_path / "other.scene.json")
    assert win.save_as()  # a named scene keeps its name
    assert win.document.scene.name == "my"


def test_opening_the_tapes_own_scene_says_nothing_about_it(main_window, tmp_path):
    win = main_window
    tape = write_test_tape(tmp_path / "hall.tape", episodes=2)
    own = tmp_path / "hall.scene.json"
    from arena_studio.core.scene.model import save_scene

    save_scene(small_scene(), own)
    assert win.open_path(tape)
    said: list[str] = []
    win.replay_page.warn = lambda title, text: said.append(text)
    assert win.open_path(own)
    assert said == []
    assert "recorded in" not in win.message_label.text()
    assert win.message_label.text() == "Opened hall.scene.json"


def test_layout_editor_beside_a_first_tape_shows_the_tapes_scene(main_window, tmp_path):
    win = main_window
    tape = write_test_tape(tmp_path / "hall.tape", episodes=2)
    assert win.open_path(tape)
    win.set_mode("layout")
    assert win.document.scene == small_scene()
    assert not win.document.dirty and win.document.path is None
    # the tape's scene, not an empty one the checker finds errors in
    assert [f for f in check_scene(win.document.scene) if f.severity == "error"] == []
    assert [f for f in check_scene(Scene(name="Untitled scene")) if f.severity == "error"]


def test_a_scene_being_edited_is_kept_when_a_tape_opens(main_window, tmp_path):
    win = main_window
    win.editor.apply(Scene(name="mine"), "Rename")
    tape = write_test_tape(tmp_path / "hall.tape", episodes=2)
    assert win.open_path(tape)
    assert win.document.scene == Scene(name="mine")
