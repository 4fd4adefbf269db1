"""`arena-studio stats --follow` and `stats --parquet` as a user runs them."""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd

from arena_studio.cli import main
from arena_studio.commands import stats_follow
from arena_studio.core.tape import open_tape, partial_path

DEMO = Path(__file__).resolve().parent.parent / "scenes" / "greenhouse-greedy.tape"


def test_follow_a_finished_tape_prints_every_episode(capsys) -> None:
    n = len(open_tape(DEMO))
    assert main(["stats", str(DEMO), "--follow"]) == 0
    out = capsys.readouterr().out.splitlines()
    assert sum(line.startswith("episode") for line in out) == n
    assert f"{n} episode(s), success " in out[-1]
    assert "had not finished" not in out[-1]


def test_follow_a_growing_tape(tmp_path: Path, monkeypatch, capsys) -> None:
    data = DEMO.read_bytes()
    ref = open_tape(DEMO)
    final = tmp_path / "live.tape"
    part = partial_path(final)
    cuts = [ref._entries[2].end + 5, ref._entries[5].end - 3]  # mid-record cuts on purpose
    part.write_bytes(data[: cuts[0]])
    waits: list[float] = []

    def fake_wait(seconds: float) -> None:  # the "writer" adds bytes while we wait
        waits.append(seconds)
        if len(waits) < len(cuts):
            part.write_bytes(data[: cuts[len(waits)]])
        else:  # the writer finishes: index, trailer, rename
            final.write_bytes(data)
            part.unlink()

    monkeypatch.setattr(stats_follow, "wait", fake_wait)
    assert main(["stats", str(final), "--follow", "--csv", "--interval", "0.5"]) == 0
    rows = capsys.readouterr().out.splitlines()
    assert rows[0].startswith("index,") and len(rows) == 1 + len(ref)
    assert [int(r.split(",")[0]) for r in rows[1:]] == list(range(len(ref)))
    assert waits == [0.5, 0.5]


def test_stats_parquet_matches_json(tmp_path: Path, capsys) -> None:
    out = tmp_path / "m.parquet"
    assert main(["stats", str(DEMO), "--json", "--quiet", "--parquet", str(out)]) == 0
    doc = json.loads(capsys.readouterr().out)
    frame = pd.read_parquet(out)  # reference reader: pandas
    assert len(frame) == len(doc["episodes"])
    assert frame["success"].tolist() == [e["success"] for e in doc["episodes"]]
    assert frame["index"].tolist() == [e["index"] for e in doc["episodes"]]


def test_follow_refuses_options_it_cannot_honour(tmp_path: Path, capsys) -> None:
    assert main(["stats", str(DEMO), "--follow", "--parquet", str(tmp_path / "x.parquet")]) == 2
    assert "--parquet cannot be used with --follow" in capsys.readouterr().err
    assert main(["stats", str(DEMO), "--follow", "--interval", "0"]) == 2
    assert main(["stats", str(tmp_path / "none.tape"), "--follow"]) == 2
    assert capsys.readouterr().err.count("\n") == 2
