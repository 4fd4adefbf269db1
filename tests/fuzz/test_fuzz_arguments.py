"""Argument vectors of every command: hostile option values never reach computation.

Each vector runs in-process (the commands' own code path); the rule checked is the project's
CLI rule (README "Commands"): exit 0, 1 or 2, no traceback, a refusal is one line naming the
option or file. Values are IEEE 754 specials and extremes (IEEE 754-2008, from memory) and
junk text.
"""

from __future__ import annotations

import csv
import tempfile
from pathlib import Path

import pytest
from hypothesis import assume, given

from tests.fuzz.harness import assert_clean, run_in_process, run_subprocess
from tests.fuzz.strategies import COMMANDS, argument_vectors, fuzz_settings

IN_PROCESS = [c for c in COMMANDS if c != "app"]


def _materialise(argv: list[str], folder: Path) -> list[str]:
    out = []
    for a in argv:
        if a.startswith("OUT"):
            a = str(folder / a)
        elif a == "IN.csv":
            a = str(folder / a)
            with open(a, "w", newline="") as f:
                w = csv.writer(f)  # Python's csv module writes RFC 4180 rows
                w.writerow(["episode", "step", "agent", "x", "y", "heading"])
                for step in range(3):
                    for agent in ("rover-1", "rover-2", "rover-3"):
                        w.writerow([0, step, agent, 1.0 + step, 1.0, 0.0])
        out.append(a)
    return out


def _places(argv: list[str]) -> list[str]:
    """Words a refusal may name: options, files and the usage prefix of argparse."""
    return (
        [a.split("=")[0] for a in argv if a.startswith("-")]
        + [a for a in argv if "/" in a]
        + ["arena-studio"]
    )


@pytest.mark.parametrize("command", IN_PROCESS)
def test_argument_vectors_end_cleanly(command):
    @fuzz_settings()
    @given(argument_vectors(command))
    def check(argv):
        with tempfile.TemporaryDirectory(prefix="fuzz-args-") as tmp:
            real = _materialise(argv, Path(tmp))
            result = run_in_process(real)
            assert_clean(result, *_places(real))

    check()


def test_app_argument_vectors_end_cleanly(tmp_path):
    """The app (``--screenshot``) runs in a subprocess: it owns a Qt application."""

    @fuzz_settings()
    @given(argument_vectors("app"))
    def check(argv):
        assume(not any("\x00" in a for a in argv))  # an OS argument vector cannot hold NUL
        with tempfile.TemporaryDirectory(prefix="fuzz-app-") as tmp:
            real = _materialise(argv[1:], Path(tmp))
            result = run_subprocess(real, Path(tmp))
            assert_clean(result, *_places(real))

    check()
