"""Heavy modules stay out of the start-up path: the app started as ``arena-studio`` (demo
scene) and ``arena-studio TAPE`` reports, at its main window's first paint, which modules
were imported by then (``ARENA_STUDIO_REPORT_SHOWN``); none of the deferred ones may be.

Why these (measured on our machines, see docs/performance.md): scipy.optimize ~0.3 s and
scipy.sparse.csgraph ~0.17 s to import, pyqtgraph ~0.18 s, against a start-up target of
0.6 s. No time is measured here: only which modules are loaded.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from arena_studio.core.resources import demo_path

ROOT = Path(__file__).resolve().parents[2]
#: not needed for the first picture of either start
DEFERRED = (
    "scipy",
    "pyqtgraph",
    "arena_studio.app.clip_dialog",
    "arena_studio.app.runs",
    "arena_studio.core.checks.checker",
    "arena_studio.core.geometry.paths",
    "arena_studio.commands.check",  # the app command builds only its own parser
    "arena_studio.commands.stats",
    "arena_studio.core.planning.partime",
    "arena_studio.core.analysis.diagnosis",
)
#: with no argument the replay page (and the demo tape) come after the paint as well
DEFERRED_WITHOUT_TAPE = (
    "arena_studio.app.replay.replay_window",
    "arena_studio.app.replay.session",
    "arena_studio.render.episode_painter",
    "arena_studio.core.tape",
)


def _first_paint_modules(tmp_path: Path, *args: str) -> list[str]:
    report = tmp_path / "shown.json"
    env = dict(
        os.environ,
        QT_QPA_PLATFORM="offscreen",
        PYTHONPATH=str(ROOT),
        HOME=str(tmp_path),
        XDG_CONFIG_HOME=str(tmp_path / "cfg"),
        XDG_DATA_HOME=str(tmp_path / "data"),
        ARENA_STUDIO_REPORT_SHOWN=str(report),
        ARENA_STUDIO_QUIT_AFTER_SHOWN="1",
    )
    proc = subprocess.run(
        [sys.executable, "-m", "arena_studio.cli", "app", *args],
        env=env,
        cwd=tmp_path,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert proc.returncode == 0, proc.stderr
    return list(json.loads(report.read_text())["modules"])


def _loaded(modules: list[str], names: tuple[str, ...]) -> list[str]:
    return [m for m in modules if any(m == n or m.startswith(n + ".") for n in names)]


@pytest.mark.parametrize(
    ("args", "deferred"),
    [
        ((), DEFERRED + DEFERRED_WITHOUT_TAPE),
        ((str(demo_path("greenhouse-greedy.tape")),), DEFERRED),
    ],
    ids=["demo-scene", "tape"],
)
def test_heavy_modules_load_after_the_first_paint(tmp_path, args, deferred) -> None:
    modules = _first_paint_modules(tmp_path, *args)
    # the report is real: the window and the page it shows were built by then
    assert "arena_studio.app.main_window" in modules and "PySide6.QtWidgets" in modules
    if args:
        assert "arena_studio.app.replay.replay_window" in modules
    assert _loaded(modules, deferred) == []
