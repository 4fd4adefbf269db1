"""``arena-studio --screenshot OUT.png TAPE`` and the replay page inside the main window.

The PNG is read back with Pillow (the reference decoder) and must show the identity colours
of the theme's palette file; bad --episode/--time values exit 2 with one line on stderr.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
from PIL import Image
from PySide6.QtCore import QSettings

from .test_replay_support import write_test_tape

REPO = Path(__file__).resolve().parents[2]


def run_cli(tmp_path: Path, *args: str) -> subprocess.CompletedProcess:
    env = dict(
        os.environ,
        QT_QPA_PLATFORM="offscreen",
        XDG_CONFIG_HOME=str(tmp_path / "cfg"),
        XDG_DATA_HOME=str(tmp_path / "data"),
        HOME=str(tmp_path),
    )
    return subprocess.run(
        [sys.executable, "-m", "arena_studio", *args],
        capture_output=True,
        text=True,
        env=env,
        timeout=120,
        cwd=tmp_path,
    )


def test_screenshot_of_a_tape_writes_a_picture_of_the_replay(tmp_path):
    tape = write_test_tape(tmp_path / "hall.tape")
    out = tmp_path / "shot.png"
    done = run_cli(tmp_path, "--screenshot", str(out), str(tape), "--episode", "1", "--time", "3")
    assert done.returncode == 0, done.stderr
    image = np.asarray(Image.open(out).convert("RGB"))
    assert image.shape[0] > 400 and image.shape[1] > 600
    assert len(np.unique(image.reshape(-1, 3), axis=0)) > 200  # not blank
    import json

    palette = json.loads((REPO / "resources/palettes/light.json").read_text())
    for hexcolour in palette["identity"][:2]:  # both rovers' bodies are on screen
        rgb = np.array([int(hexcolour[i : i + 2], 16) for i in (1, 3, 5)])
        close = np.abs(image.astype(int) - rgb).max(axis=-1) <= 12
        assert close.sum() > 30, f"identity colour {hexcolour} not drawn"


def test_screenshot_refuses_bad_episode_and_time(tmp_path):
    tape = write_test_tape(tmp_path / "hall.tape", episodes=2)
    done = run_cli(tmp_path, "--screenshot", str(tmp_path / "a.png"), str(tape), "--episode", "5")
    assert done.returncode == 2
    assert done.stderr.strip().splitlines()[-1] == (
        "arena-studio: --episode 5: the tape has episodes 0 to 1"
    )
    done = run_cli(tmp_path, "--screenshot", str(tmp_path / "b.png"), str(tape), "--time", "99")
    assert done.returncode == 2
    assert "episode 0 lasts 11.90 s" in done.stderr
    assert not (tmp_path / "a.png").exists() and not (tmp_path / "b.png").exists()


def test_main_window_opens_a_tape_in_replay_mode(qtbot, tmp_path):
    from arena_studio.app.main_window import MainWindow

    tape = write_test_tape(tmp_path / "hall.tape")
    settings = QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat)
    window = MainWindow(settings=settings, recovery_dir=tmp_path / "rec")
    qtbot.addWidget(window)
    assert window.open_path(tape)
    page = window.replay_page
    assert window.modes.currentWidget() is page
    assert page.replay_actions["play"].isEnabled()
    assert str(tape.resolve()) in window.recent_files()
    assert page.wait_loaded()
    menus = {a.text(): a.menu() for a in window.menuBar().actions()}
    assert "&Replay" in menus
    entries = [a.text() for a in menus["&Replay"].actions()]
    assert "Export Clip…" in entries and "Go to diagnosis" in entries
    # an editable copy of the tape's scene goes to the layout editor; playback keys go quiet
    page.open_scene_copy()
    assert window.modes.currentWidget() is window.canvas
    assert window.document.scene == page.scene_value and window.document.path is None
    assert not page.replay_actions["play"].isEnabled()
    page.close_tape()
    window.document.undo_stack.setClean()
    window.document.reset(window.document.scene, None)


class RecordingDialogs:
    """Stands in for the window's message boxes and records what the user would read."""

    def __init__(self) -> None:
        self.errors: list[tuple[str, str]] = []

    def error(self, title: str, text: str) -> None:
        self.errors.append((title, text))

    def info(self, title: str, text: str) -> None:
        self.errors.append((title, text))

    def ask_unsaved(self, name: str) -> str:
        return "discard"


def test_a_file_that_is_not_a_tape_gets_one_clear_message(qtbot, tmp_path):
    from arena_studio.app.main_window import MainWindow

    bad = tmp_path / "notes.tape"
    bad.write_bytes(b"these are not the bytes of a tape\n" * 4)
    settings = QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat)
    dialogs = RecordingDialogs()
    window = MainWindow(settings=settings, recovery_dir=tmp_path / "rec", dialogs=dialogs)
    qtbot.addWidget(window)
    assert not window.open_path(bad)
    assert len(dialogs.errors) == 1
    title, text = dialogs.errors[0]
    assert title == "Cannot open tape" and "notes.tape" in text and "Traceback" not in text
    assert window.modes.currentWidget() is window.canvas  # still in the editor


def test_opening_a_different_scene_beside_a_tape_says_so_without_a_box(qtbot, tmp_path):
    from dataclasses import replace

    from arena_studio.app.main_window import MainWindow
    from arena_studio.core.scene.model import save_scene
    from arena_studio.core.tape import open_tape

    tape = write_test_tape(tmp_path / "hall.tape")
    settings = QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat)
    window = MainWindow(
        settings=settings, recovery_dir=tmp_path / "rec", dialogs=RecordingDialogs()
    )
    qtbot.addWidget(window)
    assert window.open_path(tape)
    said: list[str] = []
    window.replay_page.warn = lambda title, text: said.append(text)
    recorded = open_tape(tape).scene
    save_scene(recorded, tmp_path / "same.scene.json")
    save_scene(replace(recorded, name="moved"), tmp_path / "other.scene.json")
    assert window.open_path(tmp_path / "same.scene.json")
    assert said == []  # same content hash (core.scene.Scene.content_hash, SHA-256)
    assert window.open_path(tmp_path / "other.scene.json")
    assert said == []  # no modal box: the status bar says it
    assert "other.scene.json" in window.message_label.text()
    assert "differs from the scene stored in hall.tape" in window.message_label.text()
    window.replay_page.close_tape()


def test_dropping_a_tape_on_the_window_opens_replay(qtbot, tmp_path):
    from PySide6.QtCore import QMimeData, QPointF, Qt, QUrl
    from PySide6.QtGui import QDropEvent

    from arena_studio.app.main_window import MainWindow

    tape = write_test_tape(tmp_path / "dropped.tape", episodes=2)
    settings = QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat)
    window = MainWindow(
        settings=settings, recovery_dir=tmp_path / "rec", dialogs=RecordingDialogs()
    )
    qtbot.addWidget(window)
    mime = QMimeData()
    mime.setUrls([QUrl.fromLocalFile(str(tape))])
    event = QDropEvent(
        QPointF(50, 50),
        Qt.DropAction.CopyAction,
        mime,
        Qt.MouseButton.NoButton,
        Qt.KeyboardModifier.NoModifier,
    )
    window.dropEvent(event)
    assert window.modes.currentWidget() is window.replay_page
    assert window.replay_page.wait_loaded()
    assert window.replay_page.session.path == tape
    window.replay_page.close_tape()
