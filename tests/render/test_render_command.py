"""``arena-studio render``: exit codes and messages as a user sees them.

Exit codes follow the project's CLI rule (0 fine, 2 unreadable input or bad arguments); the
outputs are read back with Pillow / xml.etree (independent decoders).
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

import pytest
from PIL import Image

from arena_studio.cli import main

from .demo_episode import write_demo_tape


@pytest.fixture(scope="module")
def tape_path(tmp_path_factory):
    return write_demo_tape(tmp_path_factory.mktemp("tapes") / "demo.tape")


def test_gif_clip_and_quiet_output(qapp, tape_path, tmp_path, capsys):
    out = tmp_path / "clip.gif"
    code = main(
        [
            "render",
            str(tape_path),
            "-o",
            str(out),
            "--size",
            "320x180",
            "--fps",
            "10",
            "--end",
            "1",
            "--quiet",
        ]
    )
    assert code == 0
    assert capsys.readouterr().err == ""  # quiet: nothing on stderr
    with Image.open(out) as im:
        assert im.size == (320, 180) and im.n_frames == 10


def test_stills_png_and_svg(qapp, tape_path, tmp_path):
    png, svg = tmp_path / "s.png", tmp_path / "s.svg"
    assert (
        main(
            [
                "render",
                str(tape_path),
                "-o",
                str(png),
                "--size",
                "640x360",
                "--time",
                "1",
                "--scale",
                "1.5",
                "--theme",
                "dark",
            ]
        )
        == 0
    )
    with Image.open(png) as im:
        assert im.size == (960, 540)
    assert main(["render", str(tape_path), "-o", str(svg), "--episode", "1"]) == 0
    assert ET.parse(svg).getroot().tag == "{http://www.w3.org/2000/svg}svg"


@pytest.mark.parametrize(
    "args, needle",
    [
        (["-o", "/proc/clip.mp4"], "cannot write here"),  # a folder nobody may write
        (["-o", "{tmp}/none/clip.mp4"], "does not exist"),
        (["-o", "{tmp}/clip.webm"], "unknown clip type"),
        (["-o", "{tmp}/clip.mp4", "--episode", "7"], "no episode 7"),
        (["-o", "{tmp}/clip.mp4", "--size", "big"], "--size"),
        (["-o", "{tmp}/clip.mp4", "--fps", "0"], "--fps"),
        (["-o", "{tmp}/clip.mp4", "--episode", "1", "--compare", "0", "1"], "not both"),
    ],
)
def test_bad_requests_exit_2_with_one_line(qapp, tape_path, tmp_path, capsys, args, needle):
    args = [a.replace("{tmp}", str(tmp_path)) for a in args]
    code = main(["render", str(tape_path), *args])
    err = capsys.readouterr().err.strip()
    assert code == 2
    assert needle in err and len(err.splitlines()) == 1, err
    assert list(tmp_path.iterdir()) == []


def test_missing_tape(qapp, tmp_path, capsys):
    assert main(["render", str(tmp_path / "nope.tape"), "-o", str(tmp_path / "a.mp4")]) == 2
    assert "no such file" in capsys.readouterr().err


def test_two_processes_write_byte_identical_stills(tape_path, tmp_path):
    # Determinism across runs (issue 7): same tape, options and version -> same PNG bytes.
    import os
    import subprocess
    import sys

    env = dict(os.environ, QT_QPA_PLATFORM="offscreen")
    outs = []
    for name in ("a.png", "b.png"):
        out = tmp_path / name
        cmd = [
            sys.executable,
            "-m",
            "arena_studio",
            "render",
            str(tape_path),
            "-o",
            str(out),
            "--time",
            "1.2",
            "--size",
            "480x270",
            "--title",
            "same",
        ]
        subprocess.run(cmd, check=True, env=env, capture_output=True)
        outs.append(out.read_bytes())
    assert outs[0] == outs[1]
