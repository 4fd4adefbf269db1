"""`arena-studio export-tape` as a user runs it: files, exit codes, one-line errors."""

from __future__ import annotations

from pathlib import Path

import pyarrow.parquet as pq

from arena_studio.cli import main
from arena_studio.core.tape import open_tape

DEMO = Path(__file__).resolve().parent.parent / "scenes" / "greenhouse-shared.tape"


def test_parquet_of_a_demo_tape(tmp_path: Path, capsys) -> None:
    out = tmp_path / "g.parquet"
    assert main(["export-tape", str(DEMO), "-o", str(out), "--quiet"]) == 0
    tape = open_tape(DEMO)
    expected = sum(tape.episode_steps(i) * len(tape.agent_ids) for i in range(len(tape)))
    assert pq.read_metadata(out).num_rows == expected  # reference reader: pyarrow
    assert f"{expected} rows" in capsys.readouterr().out
    assert [p.name for p in tmp_path.iterdir()] == ["g.parquet"]  # no temp file left


def test_csv_of_chosen_episodes(tmp_path: Path) -> None:
    out = tmp_path / "two.csv"
    assert (
        main(
            [
                "export-tape",
                str(DEMO),
                "-f",
                "csv",
                "-o",
                str(out),
                "--episode",
                "1",
                "--episode",
                "3",
            ]
        )
        == 0
    )
    lines = out.read_text().splitlines()
    assert lines[0].startswith("episode,step,time,agent,x,y,heading,reward,done")
    assert {line.split(",")[0] for line in lines[1:]} == {"1", "3"}


def test_errors_are_one_line(tmp_path: Path, capsys) -> None:
    assert main(["export-tape", str(tmp_path / "none.tape"), "-o", str(tmp_path / "x.csv")]) == 2
    assert capsys.readouterr().err.count("\n") == 1
    assert main(["export-tape", str(DEMO), "-o", str(tmp_path / "x.txt")]) == 2
    assert "--format" in capsys.readouterr().err
    assert main(["export-tape", str(DEMO), "-o", str(tmp_path / "x.npz"), "--episode", "999"]) == 2
    assert "--episode 999" in capsys.readouterr().err
    assert main(["export-tape", str(DEMO), "-o", str(tmp_path / "no" / "x.npz")]) == 2
    assert not (tmp_path / "x.npz").exists()
