"""``--screenshot OUT`` never replaces a file that is not an earlier screenshot of ours (nor
the file being opened) without ``--force``; an earlier screenshot is replaced quietly."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from PIL import Image

from arena_studio.core.outputs import SCREENSHOT_MARK
from arena_studio.core.resources import DEFAULT_DEMO_SCENE, demo_path


def _shoot(tmp_path: Path, out: Path, *extra: str, path: str | None = None):
    env = {
        **os.environ,
        "QT_QPA_PLATFORM": "offscreen",
        "HOME": str(tmp_path),
        "XDG_CONFIG_HOME": str(tmp_path / "cfg"),
        "XDG_DATA_HOME": str(tmp_path / "data"),
    }
    target = path or str(demo_path(DEFAULT_DEMO_SCENE))
    cmd = [sys.executable, "-m", "arena_studio", "--screenshot", str(out), target, *extra]
    return subprocess.run(cmd, env=env, capture_output=True, text=True, timeout=120)


def test_screenshot_refuses_a_stranger_file_and_replaces_its_own(tmp_path: Path) -> None:
    photo = tmp_path / "holiday.png"
    Image.new("RGB", (8, 8), (200, 40, 40)).save(photo)  # Pillow writes someone else's PNG
    before = photo.read_bytes()
    proc = _shoot(tmp_path, photo)
    assert proc.returncode == 2
    err = proc.stderr.strip().splitlines()
    assert len(err) == 1 and "holiday.png: exists and is not an earlier" in err[0]
    assert "--force" in err[0] and photo.read_bytes() == before  # untouched
    assert _shoot(tmp_path, photo, "--force").returncode == 0
    with Image.open(photo) as img:  # Pillow reads the PNG text chunk back
        assert img.size == (1600, 1000)
        assert img.info.get("Software") == SCREENSHOT_MARK.decode()
    again = _shoot(tmp_path, photo)  # an earlier screenshot of ours: no --force needed
    assert again.returncode == 0, again.stderr


@pytest.mark.skipif(not hasattr(os, "symlink"), reason="needs symbolic links")
def test_screenshot_never_replaces_the_file_it_opens(tmp_path: Path) -> None:
    scene = tmp_path / "mine.scene.json"
    scene.write_bytes(demo_path(DEFAULT_DEMO_SCENE).read_bytes())
    link = tmp_path / "mine.png"
    os.symlink(scene, link)  # the picture name leads to the scene itself
    proc = _shoot(tmp_path, link, "--force", path=str(scene))
    assert proc.returncode == 2 and "is an input of this command" in proc.stderr
    assert scene.read_bytes() == demo_path(DEFAULT_DEMO_SCENE).read_bytes()
