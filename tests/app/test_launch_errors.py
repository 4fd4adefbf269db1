"""Bad input on the command line never waits on a dialog: one line on stderr, exit 2.

Exit 2 for unreadable input or bad arguments, one line on stderr, is the project's CLI rule
(README "Commands"; the convention is common practice, no source). The subprocess runs have a
timeout, so a modal box waiting for a click fails the test instead of hanging the suite.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
from pathlib import Path

import pytest

from arena_studio.app.dialogs import QuietDialogs, one_line
from arena_studio.app.launch import argument_problem, is_interactive
from arena_studio.core.resources import DEFAULT_DEMO_SCENE, demo_path

DEMO_TAPE = demo_path("greenhouse-shared.tape")


def _args(path: str | None, **kw: object) -> argparse.Namespace:
    base = {"path": path, "screenshot": None, "episode": None, "time": None, "theme": None}
    base.update(kw)
    return argparse.Namespace(**base)


def _run(tmp_path: Path, *args: str, platform: str = "offscreen") -> subprocess.CompletedProcess:
    env = dict(
        os.environ,
        QT_QPA_PLATFORM=platform,
        HOME=str(tmp_path),
        XDG_CONFIG_HOME=str(tmp_path / "cfg"),
        XDG_DATA_HOME=str(tmp_path / "data"),
    )
    return subprocess.run(
        [sys.executable, "-m", "arena_studio", *args],
        env=env,
        capture_output=True,
        text=True,
        timeout=60,
        cwd=tmp_path,
    )


def _one_clear_line(proc: subprocess.CompletedProcess, *names: str) -> str:
    assert proc.returncode == 2, proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1, proc.stderr
    assert lines[0].startswith("arena-studio: ") and "Traceback" not in proc.stderr
    for name in names:
        assert name in lines[0]
    return lines[0]


def test_argument_problems_name_the_path_or_option(tmp_path):
    folder = tmp_path / "runs.tape"
    folder.mkdir()
    notes = tmp_path / "notes.txt"
    notes.write_text("x")
    scene = str(demo_path(DEFAULT_DEMO_SCENE))
    assert "no such file" in (argument_problem(_args(str(tmp_path / "gone.json"))) or "")
    assert "is a folder" in (argument_problem(_args(str(folder))) or "")
    assert "not a scene or tape" in (argument_problem(_args(str(notes))) or "")
    assert "--episode needs a tape" in (argument_problem(_args(scene, episode=1)) or "")
    assert "--time needs a tape" in (argument_problem(_args(scene, time=2.0)) or "")
    tape = str(DEMO_TAPE)
    assert "numbered from 0" in (argument_problem(_args(tape, episode=-1)) or "")
    assert "seconds >= 0" in (argument_problem(_args(tape, time=float("nan"))) or "")
    assert "seconds >= 0" in (argument_problem(_args(tape, time=-1.0)) or "")
    out = str(tmp_path / "no" / "shot.png")
    assert "folder does not exist" in (argument_problem(_args(scene, screenshot=out)) or "")
    bad_ext = str(tmp_path / "shot.txt")
    assert ".png" in (argument_problem(_args(scene, screenshot=bad_ext)) or "")
    assert argument_problem(_args(tape, episode=0, time=1.0)) is None
    assert argument_problem(_args(scene, screenshot=str(tmp_path / "a.png"))) is None


def test_headless_platforms_are_not_interactive(monkeypatch):
    monkeypatch.setenv("QT_QPA_PLATFORM", "offscreen")
    assert not is_interactive(False)
    monkeypatch.setenv("QT_QPA_PLATFORM", "xcb")
    assert is_interactive(False)
    assert not is_interactive(True)


def test_quiet_dialogs_write_the_first_paragraph_on_one_line(capsys):
    quiet = QuietDialogs()
    quiet.error("Cannot open", "a.scene.json: bad\n  value\n\nThe current scene was left.")
    assert capsys.readouterr().err == "arena-studio: a.scene.json: bad value\n"
    assert quiet.ask_unsaved("x") == "cancel"  # never drops work on its own
    assert one_line("  one\n\ntwo") == "one"


def test_damaged_scene_in_the_window_is_told_without_a_box(qtbot, tmp_path, capsys):
    from PySide6.QtCore import QSettings

    from arena_studio.app.main_window import MainWindow

    bad = tmp_path / "broken.scene.json"
    bad.write_text("{ not json")
    win = MainWindow(
        settings=QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat),
        recovery_dir=tmp_path / "rec",
        dialogs=QuietDialogs(),  # type: ignore[arg-type]
    )
    qtbot.addWidget(win)
    before = win.document.scene
    assert win.open_path(bad) is False
    assert win.document.scene == before  # the current document is untouched
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "broken.scene.json" in err[0] and "JSON" in err[0]
    win.close()
    win.checks.shutdown()


def test_screenshot_of_damaged_and_newer_files_exits_2(tmp_path):
    # A real demo tape cut after 300 bytes: the reader's own "header" error must come through.
    cut = tmp_path / "cut.tape"
    cut.write_bytes(DEMO_TAPE.read_bytes()[:300])
    _one_clear_line(_run(tmp_path, "--screenshot", "a.png", str(cut)), "cut.tape", "header")
    newer = tmp_path / "future.scene.json"
    newer.write_text('{"format": "arena-studio.scene", "version": 99}')
    line = _one_clear_line(_run(tmp_path, "--screenshot", "b.png", str(newer)), "future")
    assert "newer" in line
    assert not (tmp_path / "a.png").exists() and not (tmp_path / "b.png").exists()


@pytest.mark.parametrize("kind", ["folder", "junk_tape"])
def test_offscreen_run_without_screenshot_exits_instead_of_waiting(tmp_path, kind):
    if kind == "folder":
        target = tmp_path / "runs"
        target.mkdir()
    else:
        target = tmp_path / "junk.tape"
        target.write_text("hello")
    _one_clear_line(_run(tmp_path, str(target)), target.name)
