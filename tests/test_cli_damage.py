"""`stats`, `render` and `--screenshot` on a tape with one damaged episode among sound ones.

The reference for what is damaged and where is the tape reader (``Tape.check_episode``);
for the sound episodes, ``core.metrics.episode_metrics`` on the reader's episodes. CSV is
parsed with the standard library's csv module (RFC 4180 rows).
"""

from __future__ import annotations

import csv
import io
import json
import math
import os
import subprocess
import sys
from pathlib import Path

import pytest

from arena_studio.cli import main
from arena_studio.core.analysis.metrics import episode_metrics
from arena_studio.core.tape import open_tape

from .core.tape_helpers import box_scene, replace_marked_value, write_tape_with_marked_episode

REPO = Path(__file__).resolve().parent.parent


@pytest.fixture(params=["nan", "checksum"])
def damaged_tape(request, tmp_path: Path) -> Path:
    path = tmp_path / f"{request.param}.tape"
    write_tape_with_marked_episode(path, box_scene(), episodes=5, marked=2)
    if request.param == "nan":
        replace_marked_value(path, math.nan)
    else:
        replace_marked_value(path, 3.0, fix_crc=False)
    return path


def test_stats_reports_the_damaged_episode_and_exits_0(damaged_tape: Path, capsys) -> None:
    tape = open_tape(damaged_tape)
    damage = tape.check_episode(2)
    assert damage is not None
    assert main(["stats", str(damaged_tape), "--json", "--quiet"]) == 0
    captured = capsys.readouterr()
    doc = json.loads(captured.out)
    err = captured.err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("arena-studio: warning:")
    assert damage.text() in err[0] and "1 damaged episode(s)" in err[0]
    assert doc["summary"]["damaged"] == 1 and doc["summary"]["episodes"] == 4
    assert doc["summary"]["damaged_episodes"] == [damage.to_dict()]
    rows = doc["episodes"]
    assert [r["index"] for r in rows] == [0, 1, 2, 3, 4]
    assert rows[2]["damage"] == damage.text() and rows[2]["success"] is None
    for i in (0, 1, 3, 4):
        ref = episode_metrics(tape.scene, tape.episode(i))
        assert rows[i]["damage"] is None and rows[i]["diagnosis"] == ref.diagnosis
    assert main(["stats", str(damaged_tape), "--strict", "--quiet"]) == 1
    capsys.readouterr()
    assert main(["stats", str(damaged_tape), "--csv", "--quiet"]) == 0
    table = list(csv.DictReader(io.StringIO(capsys.readouterr().out)))
    assert [r["damage"] for r in table] == ["", "", damage.text(), "", ""]


def test_render_of_a_damaged_episode_says_which_and_why(damaged_tape: Path, capsys) -> None:
    out = damaged_tape.with_suffix(".png")
    assert main(["render", str(damaged_tape), "--episode", "2", "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    reason = open_tape(damaged_tape).check_episode(2).reason  # type: ignore[union-attr]
    assert len(err) == 1 and "episode 2 is damaged" in err[0] and reason in err[0]
    assert not out.exists()


def test_screenshot_of_a_damaged_episode_says_which_and_why(tmp_path: Path) -> None:
    path = tmp_path / "first.tape"
    write_tape_with_marked_episode(path, box_scene(), episodes=3, marked=0)
    replace_marked_value(path, math.inf)
    env = {**os.environ, "QT_QPA_PLATFORM": "offscreen", "PYTHONPATH": str(REPO)}
    shot = tmp_path / "shot.png"
    done = subprocess.run(
        [sys.executable, "-m", "arena_studio.cli", str(path), "--screenshot", str(shot)],
        capture_output=True,
        text=True,
        env=env,
        timeout=120,
    )
    assert done.returncode == 2 and not shot.exists()
    lines = [ln for ln in done.stderr.splitlines() if ln.startswith("arena-studio")]
    assert len(lines) == 1 and "episode 0 is damaged" in lines[0]
    assert "not a finite number" in lines[0]
