"""Settings never bring back a window without its tool bars or panels; View > Reset Layout
shows them all; ``--screenshot`` leaves the user's settings file byte for byte as it was.

The settings file is compared as bytes (a plain file comparison) and read with Qt's own
QSettings INI reader.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from PySide6.QtCore import QSettings


def _all_shown(win) -> bool:
    return all(bar.isVisible() for bar in win.toolbars.values()) and all(
        dock.isVisible() for dock in win.docks.values()
    )


def test_hidden_panels_of_an_earlier_run_come_back_shown(make_window, qtbot):
    first = make_window()
    assert _all_shown(first)
    first.toolbars["file"].hide()
    first.toolbars["tools"].hide()
    for dock in first.docks.values():
        dock.hide()
    first.save_settings()
    first.close()
    second = make_window()
    qtbot.waitUntil(lambda: _all_shown(second), timeout=2000)


def test_reset_layout_shows_every_bar_and_panel(main_window, qtbot):
    win = main_window
    win.toolbars["file"].hide()
    win.docks["goals"].hide()
    win.docks["findings"].setFloating(True)
    win.docks["properties"].close()
    assert not _all_shown(win)
    win.actions_by_id["view.reset_layout"].trigger()
    assert _all_shown(win)
    assert not win.docks["findings"].isFloating()
    assert win.dockWidgetArea(win.docks["findings"]).name == "BottomDockWidgetArea"
    assert win.dockWidgetArea(win.docks["goals"]).name == "RightDockWidgetArea"
    assert "Layout reset" in win.message_label.text()


def test_screenshot_leaves_the_settings_file_untouched(tmp_path):
    config = tmp_path / "cfg"
    folder = config / "arena_studio"
    folder.mkdir(parents=True)
    ini = folder / "arena-studio.conf"
    seeded = QSettings(str(ini), QSettings.Format.IniFormat)
    seeded.setValue("prefs/theme", "light")
    seeded.setValue("recent/files", ["/nowhere/a.scene.json"])
    seeded.sync()
    before = ini.read_bytes()
    env = dict(
        os.environ,
        QT_QPA_PLATFORM="offscreen",
        XDG_CONFIG_HOME=str(config),
        XDG_DATA_HOME=str(tmp_path / "data"),
        HOME=str(tmp_path),
        PYTHONPATH=str(Path(__file__).resolve().parents[2]),
    )
    shot = tmp_path / "shot.png"
    done = subprocess.run(
        [sys.executable, "-m", "arena_studio", "--screenshot", str(shot), "--theme", "dark"],
        capture_output=True,
        text=True,
        env=env,
        timeout=120,
        cwd=tmp_path,
    )
    assert done.returncode == 0, done.stderr
    assert shot.is_file()
    assert ini.read_bytes() == before
    assert sorted(p.name for p in folder.iterdir()) == ["arena-studio.conf"]
