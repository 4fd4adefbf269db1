"""CSV and NPZ importers: round trip through a tape, errors that name line and column."""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest

from arena_studio.core.importers import ImportFormatError, import_csv, import_npz, parse_columns
from arena_studio.core.tape import open_tape

from .tape_helpers import box_scene

SCENE = box_scene()


def _write_csv(path: Path, rows: list[list[object]], header: list[str]) -> None:
    with open(path, "w", newline="") as f:
        w = csv.writer(f)  # Python's csv module as the reference writer of RFC 4180 tables
        w.writerow(header)
        w.writerows(rows)


def test_csv_round_trip_with_goals_roles_and_mapping(tmp_path: Path) -> None:
    rows = []
    for ep in ("run-a", "run-b"):
        for step in range(3):
            for agent in ("r0", "r1"):
                role = "lead" if step < 2 or agent == "r1" else "follow"
                rows.append([ep, step, agent, step * 0.5, 1.0, 0.25, 1.0, "A+B", role])
    src = tmp_path / "in.csv"
    _write_csv(
        src, rows, ["episode", "step", "agent", "pos_x", "y", "heading", "reward", "goal", "role"]
    )
    out = tmp_path / "out.tape"
    count = import_csv(src, SCENE, out, dt=0.2, columns=parse_columns("x=pos_x"))
    assert count == 2
    tape = open_tape(out)
    ep = tape.episode(1)
    assert tape.dt == 0.2 and ep.poses.shape == (3, 2, 3)
    assert ep.poses[2, 1].tolist() == [1.0, 1.0, 0.25]
    assert ep.pursued_goals[0].tolist() == [1, 1, 0] and ep.rewards.sum() == 6.0
    assert ep.roles[0] == ((0, "lead"), (2, "follow")) and ep.messages == ({"episode": "run-b"},)


@pytest.mark.parametrize(
    "row, match",
    [
        (["e", 0, "r0", "abc", 1, 0], r"line 3, column 'x': expected a number"),
        (["e", 0, "robot-9", 1, 1, 0], r"line 3, column 'agent': unknown agent"),
        (["e", -1, "r0", 1, 1, 0], r"line 3, column 'step'"),
        (["e", 0, "r0", 1, 1, "nan"], r"line 3, column 'heading': expected a finite"),
    ],
)
def test_csv_errors_name_line_and_column(tmp_path: Path, row: list, match: str) -> None:
    src = tmp_path / "bad.csv"
    _write_csv(
        src, [["e", 0, "r1", 0, 0, 0], row], ["episode", "step", "agent", "x", "y", "heading"]
    )
    with pytest.raises(ImportFormatError, match=match):
        import_csv(src, SCENE, tmp_path / "o.tape")
    assert not (tmp_path / "o.tape").exists()


def test_csv_missing_rows_and_columns(tmp_path: Path) -> None:
    src = tmp_path / "gap.csv"
    _write_csv(
        src,
        [["e", 0, "r0", 0, 0, 0], ["e", 0, "r1", 0, 0, 0], ["e", 2, "r0", 0, 0, 0]],
        ["episode", "step", "agent", "x", "y", "heading"],
    )
    with pytest.raises(ImportFormatError, match="no row for step 1"):
        import_csv(src, SCENE, tmp_path / "o.tape")
    _write_csv(src, [["e", 0]], ["episode", "step"])
    with pytest.raises(ImportFormatError, match="line 1: missing column"):
        import_csv(src, SCENE, tmp_path / "o.tape")
    with pytest.raises(ImportFormatError, match="unknown name"):
        parse_columns("speed=v")


def test_npz_stacked_and_ragged(tmp_path: Path) -> None:
    poses = np.random.default_rng(0).normal(size=(2, 4, 2, 3))
    stacked = tmp_path / "s.npz"
    np.savez(stacked, poses=poses, team_goal=np.array([[1, 0, 0], [0, 1, 1]]), dt=0.25)
    assert import_npz(stacked, SCENE, tmp_path / "s.tape") == 2
    tape = open_tape(tmp_path / "s.tape")
    assert tape.dt == 0.25 and np.array_equal(tape.episode(1).poses, poses[1])
    assert tape.episode(1).team_goal.tolist() == [0, 1, 1]
    ragged = tmp_path / "r.npz"
    np.savez(ragged, poses_0=poses[0, :2], poses_1=poses[1])
    assert import_npz(ragged, SCENE, tmp_path / "r.tape") == 2
    assert open_tape(tmp_path / "r.tape").episode(0).steps == 2
    bad = tmp_path / "b.npz"
    np.savez(bad, poses=np.zeros((1, 3, 5, 3)))
    with pytest.raises(ImportFormatError, match=r"array poses: expected \(E, T, 2, 3\)"):
        import_npz(bad, SCENE, tmp_path / "b.tape")
    obj = tmp_path / "o.npz"
    np.savez(obj, poses=np.array([None, 1], dtype=object))
    with pytest.raises(ImportFormatError):  # object arrays need pickle, which numpy refuses
        import_npz(obj, SCENE, tmp_path / "o.tape")
    text = tmp_path / "t.npz"
    text.write_text("not a zip")
    with pytest.raises(ImportFormatError, match="not a readable"):
        import_npz(text, SCENE, tmp_path / "t.tape")
