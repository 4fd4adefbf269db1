"""Bounds before work: hostile numbers inside files are refused at read time with one line
naming the field, and nothing a library prints (numpy or shapely RuntimeWarnings) reaches
the terminal. Commands run in a subprocess, as a user runs them, so that every warning
Python would print is seen on stderr.

The range is the documented one (README, "Limits"): |x|, |y| <= 1e6 m, radii <= 1e6 m,
tape time steps from 1e-6 s to 3600 s. 1e308 and 5e-324 are the edges of IEEE 754 binary64
(largest normal magnitude and smallest subnormal, numpy.finfo).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from arena_studio.core.tape.format import MAGIC, frame, pack

from .core.tape_helpers import box_scene, header_record

REPO = Path(__file__).resolve().parent.parent
B = 1e6  # the documented coordinate bound


def _scene(room, landmarks, agents, obstacles=()) -> dict:
    return {
        "format": "arena-studio.scene",
        "version": 1,
        "name": "hostile",
        "units": "m",
        "rooms": [{"id": "r", "outline": room}],
        "obstacles": list(obstacles),
        "landmarks": [
            {"id": f"l{i}", "label": f"L{i}", "position": p, "reach_radius": rr, "mount": "free"}
            for i, (p, rr) in enumerate(landmarks)
        ],
        "agents": [
            {
                "id": f"a{i}",
                "radius": r,
                "max_speed": 1.0,
                "max_turn_rate": 1.0,
                "start": {"pose": p},
            }
            for i, (p, r) in enumerate(agents)
        ],
        "goals": {"rule": "all_at_once", "families": [1]},
    }


ROOM = [[0, 0], [10, 0], [10, 10], [0, 10]]
REFUSED = {
    "landmarks[0].position[0]": _scene(ROOM, [([1e308, 5], 0.5)], [([1, 1, 0], 0.25)]),
    "agents[0].radius": _scene(ROOM, [([5, 5], 0.5)], [([1, 1, 0], 1e154)]),
    "obstacles[0].circle.radius": _scene(
        ROOM,
        [([5, 5], 0.5)],
        [([1, 1, 0], 0.25)],
        [{"id": "c", "circle": {"center": [5, 5], "radius": 1e154}}],
    ),
    "agents[0].start.pose[2]": _scene(ROOM, [([5, 5], 0.5)], [([1, 1, 1e300], 0.25)]),
}
#: scenes at the edges of the range: every command must work without a library warning
AT_THE_BOUNDS = {
    "giant": _scene(
        [[-B, -B], [B, -B], [B, B], [-B, B]],
        [([B * 0.999, B * 0.999], 0.5), ([-B * 0.999, 0], B)],
        [([0, 0, 0], 0.25), ([-B * 0.99, -B * 0.99, B], 1e-9)],
    ),
    "tiny": _scene(
        [[0, 0], [1e-6, 0], [1e-6, 1e-6], [0, 1e-6]],
        [([5e-7, 5e-7], 1e-9)],
        [([2e-7, 2e-7, 0], 1e-9)],
    ),
}


def _run(*args: str) -> subprocess.CompletedProcess[str]:
    env = {**os.environ, "PYTHONPATH": str(REPO), "QT_QPA_PLATFORM": "offscreen"}
    env.pop("PYTHONWARNINGS", None)  # Python's default: each RuntimeWarning printed once
    return subprocess.run(
        [sys.executable, "-m", "arena_studio.cli", *args],
        capture_output=True,
        text=True,
        env=env,
        timeout=300,
        cwd=REPO,
    )


def _one_line(done: subprocess.CompletedProcess[str]) -> str:
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1, done.stderr
    assert "Warning" not in done.stderr and "Traceback" not in done.stderr
    return lines[0]


@pytest.mark.parametrize("field", sorted(REFUSED))
@pytest.mark.parametrize("command", ["check", "goals", "export"])
def test_out_of_range_numbers_are_refused_naming_the_field(
    tmp_path: Path, field: str, command: str
) -> None:
    path = tmp_path / "bad.scene.json"
    path.write_text(json.dumps(REFUSED[field]))
    extra = ["--format", "svg", "-o", str(tmp_path / "o.svg")] if command == "export" else []
    done = _run(command, str(path), *extra)
    assert done.returncode == 2
    line = _one_line(done)
    assert line.startswith("arena-studio: error:") and f"{field}:" in line and "1e+" in line


@pytest.mark.parametrize("name", sorted(AT_THE_BOUNDS))
def test_scenes_at_the_bounds_run_without_library_warnings(tmp_path: Path, name: str) -> None:
    path = tmp_path / f"{name}.scene.json"
    path.write_text(json.dumps(AT_THE_BOUNDS[name]))
    runs = [
        ("check", str(path)),
        ("goals", str(path)),
        *(
            ("export", str(path), "--format", fmt, "-o", str(tmp_path / f"o.{fmt}"))
            for fmt in ("svg", "wkt", "npz")
        ),
    ]
    for args in runs:
        done = _run(*args)
        assert done.returncode in (0, 1), (args, done.stderr)
        assert done.stderr == "", (args, done.stderr)


def test_grid_sizes_are_refused_with_the_cell_count_in_words(tmp_path: Path) -> None:
    # 600 m x 2,000 m at 5 cm: 12,000 rows x 40,000 columns (ceil of 600 / 0.05 and 2000 / 0.05)
    path = tmp_path / "hall.scene.json"
    path.write_text(
        json.dumps(
            _scene([[0, 0], [2000, 0], [2000, 600], [0, 600]], [([5, 5], 0.5)], [([1, 1, 0], 0.25)])
        )
    )
    done = _run("export", str(path), "--format", "grid", "-o", str(tmp_path / "g"))
    assert done.returncode == 2
    assert "12,000 x 40,000 cells" in _one_line(done)
    giant = tmp_path / "giant.scene.json"
    giant.write_text(json.dumps(AT_THE_BOUNDS["giant"]))
    # the finest resolution the option allows over the largest scene allowed
    done = _run(
        "export", str(giant), "--format", "grid", "-o", str(tmp_path / "g"), "--resolution", "0.001"
    )
    assert done.returncode == 2 and " cells" in _one_line(done) and " x " in _one_line(done)
    # a cell size below the option's range is refused before any work, naming the option
    out = str(tmp_path / "g")
    done = _run("export", str(giant), "--format", "grid", "-o", out, "--resolution", "1e-300")
    assert done.returncode == 2 and "--resolution" in _one_line(done)
    assert not list(tmp_path.glob("g.*"))


@pytest.mark.parametrize("dt", [1e-300, 5e-324, 1e9])
def test_tape_time_step_out_of_range_is_refused_naming_the_field(tmp_path: Path, dt: float) -> None:
    path = tmp_path / "dt.tape"
    path.write_bytes(MAGIC + frame(ord("H"), pack({**header_record(box_scene()), "dt": dt})))
    done = _run("stats", str(path))
    assert done.returncode == 2
    line = _one_line(done)
    assert "header.dt" in line and "time step from 1e-06 s to 3600 s" in line


def test_self_crossing_start_region_gives_no_traceback(tmp_path: Path) -> None:
    # OGC Simple Features: a ring that crosses itself (a bowtie) is not a valid polygon; the
    # checker reports it, and the other commands work on its valid parts (GEOS make_valid)
    doc = json.loads((REPO / "scenes" / "greenhouse.scene.json").read_text())
    regions = [a for a in doc["agents"] if "region" in a["start"]]
    assert regions
    regions[0]["start"]["region"] = [[0.5, 8.4], [2.0, 9.5], [2.0, 8.4], [0.5, 9.5]]
    path = tmp_path / "bowtie.scene.json"
    path.write_text(json.dumps(doc))
    done = _run("check", str(path))
    assert done.returncode == 1 and "start-region-invalid" in done.stdout
    tape = tmp_path / "b.tape"
    for args in (
        ("export", str(path), "--format", "svg", "-o", str(tmp_path / "b.svg")),
        ("rollout", str(path), "-o", str(tape), "--episodes", "2", "--quiet"),
        (str(path), "--screenshot", str(tmp_path / "b.png")),
    ):
        done = _run(*args)
        ours = [ln for ln in done.stderr.splitlines() if not ln.startswith("This plugin")]
        assert done.returncode == 0 and ours == [], (args, done.stderr)
    assert tape.exists() and (tmp_path / "b.png").exists()
