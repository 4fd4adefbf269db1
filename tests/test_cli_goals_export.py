"""The goals and export commands as a user runs them: output, exit codes, clear errors.

Sources: Python's json module parses --json output; numpy.load and xml.etree read what the
export wrote; exit codes follow the convention in arena_studio/cli.py (0 ok, 1 problems,
2 unreadable / bad arguments), which is common practice for command-line tools, no source.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from arena_studio.cli import main
from tests.conftest import SCENES

GREENHOUSE = SCENES / "greenhouse.scene.json"


def _doc(**changes: object) -> dict:
    doc = json.loads(GREENHOUSE.read_text(encoding="utf-8"))
    doc.update(changes)
    return doc


def _write(tmp_path: Path, doc: dict, name: str = "s.scene.json") -> str:
    path = tmp_path / name
    path.write_text(json.dumps(doc), encoding="utf-8")
    return str(path)


def test_goals_table_and_json(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["goals", str(GREENHOUSE)]) == 0
    out = capsys.readouterr().out
    assert "valve-west+sensor-north" in out and "cooperative" in out and "21 goals" in out
    assert main(["goals", str(GREENHOUSE), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)  # json module parses it
    goals = doc["goals"]
    assert len(goals) == 6 + 15  # C(6,1) + C(6,2), math.comb
    for key in ("vector", "targets", "kind", "feasible", "par_time", "assignment", "reason"):
        assert key in goals[0]
    assert goals[0]["targets"] == ["valve-west"] and goals[0]["kind"] == "individual"
    assert all(g["feasible"] and g["par_time"] > 0 for g in goals)


@pytest.mark.parametrize(
    ("changes", "needle"),
    [
        # zero-one goal vector
        (
            {"goals": {"rule": "all_at_once", "families": [1], "vectors": [[0, 0, 0, 0, 0, 0]]}},
            "no 1s",
        ),
        # goal longer than the landmark list
        (
            {"goals": {"rule": "all_at_once", "families": [1], "vectors": [[1, 0, 0, 0, 0, 0, 1]]}},
            "has 7 entries but the scene has 6 landmarks",
        ),
        # k larger than the landmark count
        ({"goals": {"rule": "all_at_once", "families": [7]}}, "k=7"),
        # no agents
        ({"agents": []}, "no agents"),
    ],
)
def test_goals_bad_input_exit_1(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], changes: dict, needle: str
) -> None:
    path = _write(tmp_path, _doc(**changes))
    assert main(["goals", path]) == 1
    captured = capsys.readouterr()
    assert needle in captured.out
    assert "Traceback" not in captured.out + captured.err


def test_goals_unreachable_landmark_exit_1(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    doc = _doc()
    # a free-standing landmark in the middle of the south bench (2..13 x 2.2..3.0)
    doc["landmarks"].append(
        {
            "id": "in-bench",
            "label": "In bench",
            "position": [7, 2.6],
            "reach_radius": 0.2,
            "mount": "free",
        }
    )
    assert main(["goals", _write(tmp_path, doc), "--json"]) == 1
    goals = json.loads(capsys.readouterr().out)["goals"]
    bad = [g for g in goals if "in-bench" in g["targets"]]
    assert bad and all(not g["feasible"] and "'in-bench'" in g["reason"] for g in bad)


def test_goals_unreadable_exit_2(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["goals", str(tmp_path / "missing.scene.json")]) == 2
    assert "no such file" in capsys.readouterr().err
    broken = tmp_path / "broken.scene.json"
    broken.write_text("{not json", encoding="utf-8")
    assert main(["goals", str(broken)]) == 2
    err = capsys.readouterr().err
    assert "line 1" in err and err.count("\n") == 1


def test_export_each_format(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    for fmt, name in (
        ("json", "g.scene.json"),
        ("msgpack", "g.scene.msgpack"),
        ("npz", "g.npz"),
        ("wkt", "g.wkt"),
        ("svg", "g.svg"),
        ("grid", "g-map"),
    ):
        assert main(["export", str(GREENHOUSE), "--format", fmt, "-o", str(tmp_path / name)]) == 0
        assert "wrote" in capsys.readouterr().out
    with np.load(tmp_path / "g.npz") as data:  # numpy reads it back
        assert data["goal_matrix"].shape == (21, 6)
    assert (tmp_path / "g-map.npy").exists() and (tmp_path / "g-map.png").exists()
    assert json.loads((tmp_path / "g-map.json").read_text())["resolution"] == 0.05


def test_export_bad_arguments_exit_2(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    base = ["export", str(GREENHOUSE), "-o", str(tmp_path / "x")]
    assert main([*base, "--format", "grid", "--resolution", "0"]) == 2
    assert "resolution" in capsys.readouterr().err
    assert main([*base, "--format", "dxf"]) == 2  # argparse refuses the choice
    capsys.readouterr()
    out = tmp_path / "no" / "x.svg"
    assert main(["export", str(GREENHOUSE), "--format", "svg", "-o", str(out)]) == 2
    assert "no such folder" in capsys.readouterr().err


def test_no_traceback_in_a_real_process(tmp_path: Path) -> None:
    path = _write(tmp_path, _doc(agents=[]))
    proc = subprocess.run(
        [sys.executable, "-m", "arena_studio", "goals", path],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert proc.returncode == 1 and "Traceback" not in proc.stderr
    assert "no agents" in proc.stdout
