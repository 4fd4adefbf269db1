"""Bad rows and episodes in imports: named by line and column (CSV) or episode, step and
agent (NPZ); ``--skip-bad`` imports the rest.

Files are written with the standard library's csv module (RFC 4180) and numpy.savez; the
expected tape is computed here from the good rows, and read back with the tape reader.
IEEE 754: NaN and infinity are not coordinates; 1e308 is finite but outside the documented
±1e6 m.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np
import pytest

from arena_studio.cli import main
from arena_studio.core.import_rows import (
    ImportFormatError,
    RowLayout,
    parse_row,
    pose_array_problem,
)
from arena_studio.core.scene.model import save_scene
from arena_studio.core.tape import open_tape
from arena_studio.core.tape.importers import import_csv, import_npz
from tests.core.tape_helpers import box_scene

SCENE = box_scene()
HEADER = ["episode", "step", "agent", "x", "y", "heading"]
LAYOUT = RowLayout(
    "f.csv", {n: i for i, n in enumerate(HEADER)}, {n: n for n in HEADER}, ("r0", "r1")
)


@pytest.mark.parametrize(
    ("row", "problem"),
    [
        (["e", "0", "r0", "1", "1", "nan"], "column 'heading': expected a finite number"),
        (["e", "0", "r0", "1e308", "1", "0"], "column 'x': expected a value within ±1e+06 m"),
        (["e", "0", "r0", "1", "-inf", "0"], "column 'y': expected a finite number"),
        (["e", "0", "r0", "1", "1", "2e6"], "column 'heading': expected a value within ±1e+06"),
        (["e", "-1", "r0", "1", "1", "0"], "column 'step': expected a step number >= 0"),
        (["e", "0", "r9", "1", "1", "0"], "column 'agent': unknown agent 'r9'"),
        (["e", "0", "r0", "1"], "column 'y': missing value"),
    ],
)
def test_parse_row_names_line_and_column(row: list[str], problem: str) -> None:
    with pytest.raises(ImportFormatError) as info:
        parse_row(LAYOUT, 7, row)
    assert str(info.value).startswith("f.csv: line 7, ") and problem in str(info.value)


def test_parse_row_reads_a_good_row() -> None:
    r = parse_row(LAYOUT, 3, [" e1 ", "4", "1", "1e6", "-2.5", "0.25"])
    assert (r.line, r.episode, r.step, r.agent, r.pose) == (3, "e1", 4, 1, (1e6, -2.5, 0.25))


def test_pose_array_problem_names_step_agent_and_field() -> None:
    poses = np.zeros((4, 2, 3))
    assert pose_array_problem(poses) is None
    poses[2, 1, 2] = math.inf
    assert pose_array_problem(poses) == "step 2 agent 1: pose is not a finite number"
    poses[2, 1, 2] = 0.0
    poses[3, 0, 1] = -1e308
    assert pose_array_problem(poses) == "step 3 agent 0: pose y = -1e+308 is outside ±1e+06 m"


def _csv(path: Path, bad_line: list[str] | None) -> None:
    with open(path, "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(HEADER)
        for e in range(3):
            for step in range(3):
                for agent in ("r0", "r1"):
                    w.writerow([f"e{e}", step, agent, 1 + step, 1 + e, 0])
                    if bad_line is not None and (e, step, agent) == (1, 1, "r1"):
                        w.writerow(bad_line)  # a bad row (line 12) after episode e1's good rows


def test_csv_bad_row_refused_or_skipped(tmp_path: Path) -> None:
    src, out = tmp_path / "in.csv", tmp_path / "out.tape"
    _csv(src, ["e1", "2", "r0", "nan", "1", "0"])  # a repeat of e1 step 2 r0, with x NaN
    with pytest.raises(ImportFormatError, match=r"line 12, column 'x': expected a finite"):
        import_csv(src, SCENE, out)
    skipped: list[str] = []
    assert import_csv(src, SCENE, out, skipped=skipped) == 3
    assert skipped == ["line 12, column 'x': expected a finite number"]
    tape = open_tape(out)
    for e in range(3):  # every episode holds the good rows: x = 1 + step, y = 1 + episode
        poses = tape.episode(e).poses
        assert np.array_equal(poses[:, 0, 0], [1, 2, 3]) and np.all(poses[:, :, 1] == 1 + e)


def test_csv_episode_with_missing_steps_is_left_out(tmp_path: Path) -> None:
    src, out = tmp_path / "in.csv", tmp_path / "out.tape"
    _csv(src, None)
    lines = src.read_text().splitlines()
    del lines[1 + 6 + 3]  # e1 step 1 r1: episode e1 misses a row
    src.write_text("\n".join(lines) + "\n")
    with pytest.raises(ImportFormatError, match="episode 'e1': no row for step 1"):
        import_csv(src, SCENE, out)
    skipped: list[str] = []
    assert import_csv(src, SCENE, out, skipped=skipped) == 2
    assert len(skipped) == 1 and skipped[0].startswith("episode 'e1': no row for step 1")
    assert [m["episode"] for i in range(2) for m in open_tape(out).episode(i).messages] == [
        "e0",
        "e2",
    ]


def test_npz_bad_episode_refused_or_skipped(tmp_path: Path) -> None:
    src, out = tmp_path / "in.npz", tmp_path / "out.tape"
    poses = np.zeros((3, 4, 2, 3))
    poses[:, :, :, 0] = np.arange(3)[:, None, None]
    poses[1, 2, 0, 1] = np.nan
    np.savez(src, poses=poses)
    with pytest.raises(ImportFormatError, match=r"episode 1 \(array poses\): step 2 agent 0"):
        import_npz(src, SCENE, out)
    skipped: list[str] = []
    assert import_npz(src, SCENE, out, skipped=skipped) == 2
    assert skipped == [
        "episode 1 (array poses): step 2 agent 0: pose is not a finite number; episode left out"
    ]
    tape = open_tape(out)
    assert [float(tape.episode(i).poses[0, 0, 0]) for i in range(len(tape))] == [0.0, 2.0]


def test_cli_skip_bad(tmp_path: Path, capsys) -> None:
    src, out, scene = tmp_path / "in.csv", tmp_path / "out.tape", tmp_path / "box.scene.json"
    save_scene(SCENE, scene)
    _csv(src, ["e1", "2", "r0", "1", "1", "inf"])
    args = ["import", "csv", str(src), "--scene", str(scene), "-o", str(out), "--quiet"]
    assert main(args) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "line 12, column 'heading'" in err[0] and "--skip-bad" in err[0]
    assert not out.exists()
    assert main([*args, "--skip-bad"]) == 0
    captured = capsys.readouterr()
    err = captured.err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("arena-studio: warning:")
    assert "left out 1 bad row(s)" in err[0] and "line 12" in err[0]
    assert "3 episode(s) imported" in captured.out and len(open_tape(out)) == 3


def test_time_step_outside_the_range_is_refused(tmp_path: Path) -> None:
    src = tmp_path / "in.csv"
    _csv(src, None)
    for dt in (1e-300, 5e-324, 1e9):
        with pytest.raises(ImportFormatError, match="dt: expected a time step from 1e-06 s"):
            import_csv(src, SCENE, tmp_path / "o.tape", dt=dt)
