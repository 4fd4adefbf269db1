"""The window as a user sees it: --screenshot from the command line, and both themes at two
common screen sizes (grabbed to PNG; pixel spread checked with Pillow)."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from PIL import Image, ImageStat

from arena_studio.core.resources import DEFAULT_DEMO_SCENE, demo_path

SHOTS = os.environ.get("ARENA_SHOTS_DIR")  # set to keep the PNGs for a look


def _varied(path: Path) -> None:
    with Image.open(path) as img:
        rgb = img.convert("RGB")
        # Pillow's ImageStat: a blank image has zero spread in every band.
        assert max(ImageStat.Stat(rgb).stddev) > 10
        assert len(rgb.getcolors(maxcolors=1 << 20) or []) > 50


def test_screenshot_option_writes_a_non_blank_png(tmp_path):
    out = tmp_path / "window.png"
    env = {
        **os.environ,
        "QT_QPA_PLATFORM": "offscreen",
        "HOME": str(tmp_path),
        "XDG_CONFIG_HOME": str(tmp_path / "cfg"),
        "XDG_DATA_HOME": str(tmp_path / "data"),
    }
    proc = subprocess.run(
        [
            sys.executable,
            "-m",
            "arena_studio",
            "--screenshot",
            str(out),
            str(demo_path(DEFAULT_DEMO_SCENE)),
        ],
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert proc.returncode == 0, proc.stderr
    with Image.open(out) as img:
        assert img.size == (1600, 1000)
    _varied(out)


def test_screenshot_of_missing_file_is_one_clear_line(tmp_path):
    env = {**os.environ, "QT_QPA_PLATFORM": "offscreen", "HOME": str(tmp_path)}
    proc = subprocess.run(
        [
            sys.executable,
            "-m",
            "arena_studio",
            "--screenshot",
            str(tmp_path / "x.png"),
            str(tmp_path / "missing.scene.json"),
        ],
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert proc.returncode == 2
    assert "missing.scene.json" in proc.stderr and "Traceback" not in proc.stderr


@pytest.mark.parametrize("theme", ["light", "dark"])
@pytest.mark.parametrize("size", [(1280, 800), (1920, 1080)])
def test_window_grab_in_both_themes(qtbot, make_window, tmp_path, theme, size):
    win = make_window(theme=theme)
    win.open_path(demo_path(DEFAULT_DEMO_SCENE))
    win.editor.set_selection([("landmarks", win.document.scene.landmarks[0].id)])
    win.resize(*size)
    qtbot.wait(20)
    win.canvas.fit_scene()
    win.run_checks_now()
    folder = Path(SHOTS) if SHOTS else tmp_path
    out = folder / f"editor-{theme}-{size[0]}x{size[1]}.png"
    assert win.grab().save(str(out))
    _varied(out)
