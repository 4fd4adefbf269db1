"""Ids cannot forge lines: refused at parse time, escaped in every text export, and CSV
cells neutralised against formula injection.

Sources: the OWASP "CSV Injection" guidance (cells starting with =, +, -, @, TAB or CR are
read as formulas by spreadsheet programs; prefix such cells with a single quote); Python's
csv module reads the CSV back; shapely.from_wkt (GEOS, OGC Simple Features) reads WKT.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import json

import pytest
import shapely

from arena_studio.cli import main
from arena_studio.core.errors import SceneFormatError
from arena_studio.core.export.text_safety import csv_cell, escape_line, unescape_line
from arena_studio.core.export.wkt import labelled_geometries, read_wkt_lines, wkt_text
from arena_studio.core.scene.model import Scene, load_scene
from tests.conftest import SCENES

GREENHOUSE = SCENES / "greenhouse.scene.json"
FORGED = "hall\tPOINT (0 0)\nroom:fake"


def _doc() -> dict:
    return json.loads(GREENHOUSE.read_text(encoding="utf-8"))


@pytest.mark.parametrize(
    ("where", "edit"),
    [
        ("rooms[0].id", lambda d: d["rooms"][0].update(id="hall\tPOINT (0 0)")),
        ("landmarks[0].label", lambda d: d["landmarks"][0].update(label="a\nb")),
        ("agents[1].id", lambda d: d["agents"][1].update(id="rover\r")),
        ("name", lambda d: d.update(name="x\u2028y")),
    ],
)
def test_forged_ids_are_refused_at_parse_time(where: str, edit) -> None:
    doc = _doc()
    edit(doc)
    with pytest.raises(SceneFormatError, match="control character") as info:
        Scene.from_dict(doc)
    assert info.value.where == where  # the message names the field


def test_wkt_of_a_python_built_scene_cannot_be_forged() -> None:
    # a Scene made in Python skips the parser: the export itself must escape
    scene = load_scene(GREENHOUSE)
    rooms = (dataclasses.replace(scene.rooms[0], id=FORGED), *scene.rooms[1:])
    scene = dataclasses.replace(scene, rooms=rooms, name="demo\n# forged comment")
    text = wkt_text(scene)
    lines = [ln for ln in text.splitlines() if ln and not ln.startswith("#")]
    assert len(lines) == len(labelled_geometries(scene))  # no extra line was made
    assert all(ln.count("\t") == 1 for ln in lines)
    assert "# forged comment" not in text.splitlines()
    pairs = read_wkt_lines(text)
    assert pairs[0][0] == f"room:{FORGED}"  # reads back to the id as it was
    assert all(shapely.from_wkt(ln.split("\t")[1]) is not None for ln in lines)


@pytest.mark.parametrize("text", ["plain", "a\\b", "tab\there", "\x00\x1f\x7f\x85\u2028", "é ü"])
def test_escape_round_trip(text: str) -> None:
    escaped = escape_line(text)
    assert "\n" not in escaped and "\t" not in escaped and "\r" not in escaped
    assert unescape_line(escaped) == text


@pytest.mark.parametrize(
    ("cell", "expected"),
    [
        ('=HYPERLINK("http://x")', '\'=HYPERLINK("http://x")'),  # OWASP example kind
        ("+1+cmd", "'+1+cmd"),
        ("-2+3", "'-2+3"),
        ("@SUM(A1)", "'@SUM(A1)"),
        ("\tx", "'\tx"),
        ("\rx", "'\rx"),
        ("valve-west", "valve-west"),
        (-0.5, -0.5),  # numbers stay numbers
    ],
)
def test_csv_cells_neutralised_per_owasp(cell: object, expected: object) -> None:
    assert csv_cell(cell) == expected


def test_stats_csv_neutralises_formula_ids(tmp_path, capsys) -> None:
    doc = _doc()
    for lm in doc["landmarks"]:
        lm["id"] = "=cmd|' /C calc'!A0" if lm["id"] == "valve-west" else lm["id"]
    doc["goals"] = {"rule": "all_at_once", "families": [], "vectors": [[1, 0, 0, 0, 0, 0]]}
    scene = tmp_path / "f.scene.json"
    scene.write_text(json.dumps(doc), encoding="utf-8")
    tape = tmp_path / "f.tape"
    assert main(["rollout", str(scene), "-o", str(tape), "--episodes", "1", "--quiet"]) == 0
    capsys.readouterr()
    assert main(["stats", str(tape), "--csv"]) == 0
    rows = list(csv.DictReader(io.StringIO(capsys.readouterr().out)))  # csv module reads it
    assert rows[0]["goal_key"] == "'=cmd|' /C calc'!A0"
    for row in rows:
        for value in row.values():
            assert not value.startswith(("=", "+", "@", "\t", "\r"))
