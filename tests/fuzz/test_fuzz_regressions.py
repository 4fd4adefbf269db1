"""Every hostile case found by hand, kept as a regression example.

Each case must give one clear line and exit 2, or work (exit 0/1) where it is within the
documented limits (README "Limits"). Special files and large scenes run in a subprocess under
memory and CPU limits (``harness.run_subprocess``); a FIFO must not block (POSIX open(2):
opening a FIFO for reading waits for a writer, from memory). Cases about numbers inside
valid files (extreme dt, poses, radii) are range checks at read time that land with the
damaged-episode work; they are strict expected failures here, so they fail loudly (XPASS)
once that work is merged and the mark must go.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape import TapeWriter
from tests.fuzz import big_scenes as big
from tests.fuzz.harness import assert_clean, run_in_process, run_subprocess
from tests.fuzz.strategies import SCENE, TAPE


def _scene_doc() -> dict:
    return json.loads(Path(SCENE).read_text())


def _write(tmp: Path, doc: dict, name: str = "s.scene.json") -> Path:
    path = tmp / name
    path.write_text(json.dumps(doc))
    return path


# -- special files -------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("name", "argv"),
    [
        ("fifo.scene.json", ["check", "{p}"]),
        ("fifo.scene.json", ["goals", "{p}"]),
        ("fifo.tape", ["stats", "{p}"]),
        ("fifo.tape", ["--screenshot", "{out}", "{p}"]),
        ("fifo.csv", ["import", "csv", "{p}", "--scene", SCENE, "-o", "{o}.tape"]),
    ],
)
def test_a_fifo_is_refused_without_hanging(tmp_path, name, argv):
    fifo = tmp_path / name
    os.mkfifo(fifo)
    real = [a.format(p=fifo, out=tmp_path / "x.png", o=tmp_path / "o") for a in argv]
    result = run_subprocess(real, tmp_path)
    assert_clean(result, str(fifo))
    assert result.code == 2 and "pipe" in result.lines()[0]


@pytest.mark.parametrize("device", ["/dev/zero", "/dev/urandom"])
@pytest.mark.parametrize(
    ("name", "argv"),
    [
        ("d.scene.json", ["check", "{p}"]),
        ("d.tape", ["stats", "{p}"]),
        ("d.scene.json", ["--screenshot", "{out}", "{p}"]),
    ],
)
def test_a_symlink_to_an_endless_device_is_refused(tmp_path, device, name, argv):
    link = tmp_path / name
    link.symlink_to(device)
    real = [a.format(p=link, out=tmp_path / "x.png") for a in argv]
    result = run_subprocess(real, tmp_path)
    assert_clean(result, str(link))
    assert result.code == 2 and "device" in result.lines()[0]


def test_a_folder_named_like_a_scene_is_refused(tmp_path):
    folder = tmp_path / "d.scene.json"
    folder.mkdir()
    result = run_in_process(["check", str(folder)])
    assert_clean(result, str(folder))
    assert result.code == 2 and "folder" in result.lines()[0]


# -- option values -------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("option", "value"),
    [
        ("--time", "nan"),
        ("--time", "inf"),
        ("--end", "nan"),
        ("--speed", "inf"),
        ("--title-seconds", "inf"),
        ("--title-seconds", "1e9"),
        ("--dpi", "inf"),
        ("--dpi", "nan"),
        ("--dpi", "1e300"),
        ("--speed", "1e-9"),
    ],
)
def test_hostile_render_options_are_one_line(tmp_path, option, value):
    result = run_in_process(["render", TAPE, "-o", str(tmp_path / "x.png"), option, value])
    assert_clean(result, option)
    assert result.code == 2 and not list(tmp_path.iterdir())


# -- numbers inside valid files ------------------------------------------------------------
def _tape(tmp: Path, dt: float = 0.1, value: float = 2.0, dtype: str = "<f8") -> Path:
    scene = Scene.from_dict(_scene_doc())
    path = tmp / "t.tape"
    with TapeWriter(path, scene, dt=dt) as w:
        w.begin_episode()
        poses = np.ones((5, len(scene.agents), 3), dtype=dtype)
        poses[2, 0, :2] = value
        w.steps(poses)
        w.end_episode()
    return path


@pytest.mark.parametrize("dt", [1e-300, 5e-324])
def test_a_tape_with_a_vanishing_dt_is_one_line(tmp_path, dt):
    tape = _tape(tmp_path, dt=dt)
    for argv in (["stats", str(tape)], ["render", str(tape), "-o", str(tmp_path / "x.png")]):
        result = run_in_process(argv)
        assert_clean(result, str(tape))


@pytest.mark.parametrize(("value", "dtype"), [(1e308, "<f8"), (3.4028234663852886e38, "<f4")])
def test_a_tape_with_huge_poses_is_one_line(tmp_path, value, dtype):
    tape = _tape(tmp_path, value=value, dtype=dtype)
    result = run_in_process(["render", str(tape), "-o", str(tmp_path / "x.png"), "--time", "0.2"])
    assert_clean(result, str(tape))


def test_an_obstacle_of_radius_1e154_is_one_line(tmp_path):
    doc = _scene_doc()
    doc["obstacles"].append({"id": "huge", "circle": {"center": [5, 5], "radius": 1e154}})
    path = _write(tmp_path, doc)
    assert_clean(run_in_process(["check", str(path)]), str(path))
    assert_clean(
        run_subprocess(["--screenshot", str(tmp_path / "x.png"), str(path)], tmp_path), str(path)
    )


def test_a_bowtie_start_region_is_a_finding_not_a_crash(tmp_path):
    doc = _scene_doc()
    doc["agents"][2]["start"] = {"region": [[0.5, 8.2], [2, 9.5], [2, 8.2], [0.5, 9.5]]}
    path = _write(tmp_path, doc)
    result = run_in_process(["check", str(path)])
    assert_clean(result, str(path))
    assert result.code == 1 and "start-region-invalid" in result.out
    shot = run_subprocess(["--screenshot", str(tmp_path / "x.png"), str(path)], tmp_path)
    assert_clean(shot, str(path))
    assert shot.code == 0 and (tmp_path / "x.png").stat().st_size > 0


# -- scale ---------------------------------------------------------------------------------
SCALE = {
    "room of 10,000 vertices": (
        lambda: big.zigzag_room(10_000),
        ["check", "goals", "export", "screenshot"],
    ),
    "2,000 small obstacles": (lambda: big.many_obstacles(2_000), ["goals", "export"]),
    "8,000 small obstacles": (lambda: big.many_obstacles(8_000), ["check"]),
    "100,000 landmarks": (lambda: big.many_landmarks(100_000), ["check"]),
    "1,000 agents": (lambda: big.many_agents(1_000), ["screenshot"]),
    "30 landmarks, families 1..30": (lambda: big.many_goals(30, list(range(1, 31))), ["goals"]),
}
ARGV = {
    "check": ["check", "{p}"],
    "goals": ["goals", "{p}", "--quiet"],
    "export": ["export", "{p}", "-f", "npz", "-o", "{o}.npz"],
    "screenshot": ["--screenshot", "{o}.png", "{p}"],
}


@pytest.mark.parametrize("case", list(SCALE))
def test_large_scenes_work_or_are_refused_with_an_estimate(tmp_path, case):
    build, commands = SCALE[case]
    path = _write(tmp_path, build())
    for command in commands:
        argv = [a.format(p=path, o=tmp_path / "out") for a in ARGV[command]]
        result = run_subprocess(argv, tmp_path)
        assert_clean(result, str(path))
        if result.code == 2:  # refused: the reason says which limit
            assert any(w in result.lines()[0] for w in ("too many", "corner pairs")), result.err


# -- found by the fuzz suite ---------------------------------------------------------------
def test_rendering_a_cut_tape_without_episodes_is_one_line(tmp_path):
    whole = _tape(tmp_path).read_bytes()
    cut = tmp_path / "cut.tape"
    # DEVELOPERS.md "Tape format": magic (8), u32 length, kind, payload, u32 crc; cut 10
    # bytes after that header record, inside the first episode: no episode is complete
    header_end = 8 + 4 + 1 + int.from_bytes(whole[8:12], "little") + 4
    cut.write_bytes(whole[: header_end + 10])
    result = run_in_process(["render", str(cut), "-o", str(tmp_path / "x.png")])
    assert_clean(result, str(cut))
    assert result.code == 2 and "cut short" in result.lines()[0]


def test_an_npz_array_without_an_episode_axis_is_one_line(tmp_path):
    src = tmp_path / "in.npz"
    np.savez(src, poses=np.zeros((1, 2, 3, 3)), rewards=np.array(0.0))
    result = run_in_process(
        ["import", "npz", str(src), "--scene", SCENE, "-o", str(tmp_path / "o.tape")]
    )
    assert_clean(result, str(src))
    assert result.code == 2 and "array rewards" in result.lines()[0]
