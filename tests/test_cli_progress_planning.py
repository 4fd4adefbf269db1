"""`goals` and `export --format npz` plan every goal, `export --format grid` tests every cell:
on a terminal they show the progress bar (commands/progress.py), counting goals or percent of
the cells; off a terminal or with --quiet nothing."""

from __future__ import annotations

import io
import sys
from pathlib import Path

import pytest

from arena_studio.cli import main

SCENE = str(Path(__file__).resolve().parent.parent / "scenes" / "greenhouse.scene.json")


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


@pytest.mark.parametrize("quiet", [False, True])
def test_goals_and_npz_export_show_progress_on_a_terminal(
    tmp_path: Path, monkeypatch, capsys, quiet: bool
) -> None:
    for args, label, count in (
        (["goals", SCENE], "goals", "21/21"),
        (["export", SCENE, "--format", "npz", "-o", str(tmp_path / "s.npz")], "export", "21/21"),
        (["export", SCENE, "--format", "grid", "-o", str(tmp_path / "g")], "export", "100/100"),
    ):
        err = _Terminal()
        monkeypatch.setattr(sys, "stderr", err)
        assert main([*args, *(["--quiet"] if quiet else [])]) == 0
        capsys.readouterr()
        shown = err.getvalue()
        if quiet:
            assert shown == ""
        else:
            # the greenhouse demo has 6 landmarks, families 1 and 2: 6 + 15 = 21 goals
            # (binomial coefficients, common practice); a grid counts percent of its cells
            assert f"{label} [" in shown and count in shown and shown.endswith("\r\033[K")
