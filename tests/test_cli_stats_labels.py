"""`arena-studio stats` names landmarks by label where a person reads it and keeps ids in
what programs read (JSON, CSV, Parquet): ids are the keys tables are joined on.

Expected words are read off scenes/greenhouse.scene.json by hand (valve-west is labelled
"West valve", potting-bench "Potting bench"); the Parquet file is read back with pyarrow
(the reference reader).
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pyarrow.parquet as pq

from arena_studio.cli import main

TAPE = str(Path(__file__).resolve().parent.parent / "scenes" / "greenhouse-greedy.tape")


def _run(capsys, *args: str) -> str:
    capsys.readouterr()
    assert main(["stats", TAPE, *args]) == 0
    return capsys.readouterr().out


def test_text_output_names_landmarks_by_label(capsys):
    out = _run(capsys, "--episode", "0")
    assert "West valve + Potting bench" in out
    assert "targets left empty at the end: West valve + Potting bench" in out
    assert "rover-2 reached West valve" in out and "now heads to Potting bench" in out
    assert "valve-west" not in out and "potting-bench" not in out


def test_json_csv_and_parquet_keep_ids(capsys, tmp_path):
    doc = json.loads(_run(capsys, "--json", "--episode", "0"))
    row = doc["episodes"][0]
    assert row["goal_key"] == "valve-west+potting-bench"
    assert row["diagnosis"] == "targets left empty at the end: valve-west+potting-bench"
    texts = [e["text"] for e in row["events"]]
    assert "rover-2 reached valve-west" in texts
    assert {e["landmark"] for e in row["events"] if e["landmark"]} >= {"valve-west"}
    assert "valve-west+potting-bench" in doc["summary"]["by_goal"]
    assert "West valve" not in json.dumps(doc)

    rows = list(csv.DictReader(io.StringIO(_run(capsys, "--csv"))))
    assert rows[0]["goal_key"] == "valve-west+potting-bench"
    assert "West valve" not in rows[0]["diagnosis"]

    out = tmp_path / "stats.parquet"
    _run(capsys, "--parquet", str(out))
    table = pq.read_table(out).to_pydict()
    assert table["goal_key"][0] == "valve-west+potting-bench"
    assert table["diagnosis"][0] == "targets left empty at the end: valve-west+potting-bench"


def test_follow_lines_name_landmarks_by_label_and_its_json_keeps_ids(capsys):
    out = _run(capsys, "--follow")
    assert "episode    0: failed" in out
    assert "targets left empty at the end: West valve + Potting bench" in out
    assert "valve-west" not in out and "potting-bench" not in out
    first = json.loads(_run(capsys, "--follow", "--json").splitlines()[0])
    assert first["diagnosis"] == "targets left empty at the end: valve-west+potting-bench"
