"""`arena-studio runs` as a user runs it: table, JSON, CSV, figure, exit codes."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path
from xml.etree import ElementTree

import jsonschema
import pytest
from PIL import Image

from arena_studio.cli import main
from tests.core.runs.sweep_helpers import write_scored_tape, write_sweep

RUNS_SCHEMA = {
    "type": "object",
    "required": ["sweep", "by", "metrics", "problems"],
    "properties": {
        "metrics": {
            "type": "object",
            "additionalProperties": {
                "type": "object",
                "required": ["curve", "final"],
                "properties": {
                    "curve": {
                        "type": "array",
                        "items": {
                            "type": "object",
                            "required": ["group", "step", "runs", "iqm", "ci_low", "ci_high"],
                        },
                    },
                },
            },
        }
    },
}


@pytest.fixture(autouse=True)
def _cache(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("ARENA_STUDIO_CACHE_DIR", str(tmp_path / "cache"))


@pytest.fixture
def sweep(tmp_path: Path) -> Path:
    root = tmp_path / "sweep"
    scores = {}
    for seed in range(4):
        for step in (100, 200):
            scores[("good", seed, step)] = 4 if step == 200 else 2
            scores[("poor", seed, step)] = 0
    write_sweep(root, scores)
    return root


def test_table_json_csv(sweep: Path, capsys: pytest.CaptureFixture[str]) -> None:
    args = ["runs", str(sweep), "--reps", "300", "--processes", "1", "--quiet"]
    assert main(args) == 0
    text = capsys.readouterr().out
    assert "P(good > poor) = 1.000" in text and "good" in text and "poor" in text
    assert main([*args, "--json", "--metric", "success", "--metric", "alignment"]) == 0
    doc = json.loads(capsys.readouterr().out)
    # the documented shape (jsonschema, draft 2020-12)
    jsonschema.Draft202012Validator(RUNS_SCHEMA).validate(doc)
    final = doc["metrics"]["success"]["final"]
    assert {(p["x"], p["y"]): p["probability"] for p in final["improvement"]} == {
        ("good", "poor"): 1.0,
        ("poor", "good"): 0.0,
    }
    assert main([*args, "--csv", "--at-step", "100"]) == 0
    rows = list(csv.DictReader(io.StringIO(capsys.readouterr().out)))
    assert [(r["group"], r["step"], r["runs"]) for r in rows] == [
        ("good", "100", "4"),
        ("good", "200", "4"),
        ("poor", "100", "4"),
        ("poor", "200", "4"),
    ]
    assert float(rows[0]["mean"]) == 0.5


def test_metric_list_and_unknown_metric(sweep: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["runs", str(sweep), "--metric", "list", "--quiet"]) == 0
    names = capsys.readouterr().out.split()
    assert "success" in names and "goal:A" in names
    assert main(["runs", str(sweep), "--metric", "speed", "--quiet"]) == 2
    assert "--metric speed: not a figure" in capsys.readouterr().err


def test_figures_svg_and_png(sweep: Path, tmp_path: Path) -> None:
    svg, png = tmp_path / "f.svg", tmp_path / "f.png"
    base = ["runs", str(sweep), "--reps", "200", "--quiet", "--processes", "1"]
    assert main([*base, "--figure", str(svg)]) == 0
    assert main([*base, "--figure", str(png)]) == 0
    # reference: the SVG parses as XML with the SVG namespace; the PNG opens with Pillow
    root = ElementTree.parse(svg).getroot()
    assert root.tag == "{http://www.w3.org/2000/svg}svg"
    assert "good" in svg.read_text() and "poor" in svg.read_text()  # labels kept as text
    with Image.open(png) as im:
        assert im.format == "PNG" and im.width > 800


def test_exit_codes_and_one_line_errors(
    sweep: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    assert main(["runs", str(tmp_path / "none"), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "no such folder" in err
    assert main(["runs", str(sweep), "--at-step", "soon"]) == 2
    assert main(["runs", str(sweep), "--at-step", "7", "--quiet"]) == 2
    assert "no tape has that step" in capsys.readouterr().err
    assert main(["runs", str(sweep), "--figure", "x.gif"]) == 2
    empty = tmp_path / "empty"
    write_scored_tape(empty / "a.tape", 1)
    assert main(["runs", str(empty), "--quiet"]) == 2
    assert "give --layout" in capsys.readouterr().err
    # a damaged or unreadable tape beside good ones: analysed without it, exit 1
    (sweep / "junk.tape").write_bytes(b"not a tape at all")
    (sweep / "good" / "seed9").mkdir()
    (sweep / "good" / "seed9" / "step5.tape.partial").write_bytes(b"")
    assert main(["runs", str(sweep), "--quiet", "--reps", "100", "--processes", "1"]) == 1
    err = capsys.readouterr().err
    assert "junk.tape: not an arena-studio tape" in err and "still recording" in err


def test_interrupt_is_clean(
    sweep: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    import arena_studio.core.runs as runs_pkg

    def stop(*_a, **_k):
        raise KeyboardInterrupt

    monkeypatch.setattr(runs_pkg, "load_runs", stop)
    assert main(["runs", str(sweep), "--quiet"]) == 130
    assert (
        capsys.readouterr().err.strip()
        == "arena-studio: error: interrupted (finished tapes are cached)"
    )


def test_unreachable_scheduler_is_one_line(sweep: Path, capsys: pytest.CaptureFixture[str]) -> None:
    pytest.importorskip("distributed")
    assert main(["runs", str(sweep), "--quiet", "--scheduler", "tcp://127.0.0.1:9"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "tcp://127.0.0.1:9: cannot start or reach" in err
