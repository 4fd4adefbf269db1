"""Run ``arena-studio`` on hostile input and check the one rule every run keeps.

The rule (README "Commands", DEVELOPERS.md "Errors"): exit 0, 1 or 2; no traceback; when the
input is refused (exit 2), stderr is exactly one line starting with ``arena-studio`` that
names the place (a file, an option, a field). In-process runs are for cheap cases (argument
vectors, small files); anything that may hang or grow runs in a subprocess under
``resource`` limits (address space, CPU seconds) with a timeout as a hang guard only.
"""

from __future__ import annotations

import contextlib
import io
import os
import resource
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
#: Memory one run may map (bytes) and CPU seconds it may use, in the subprocess runs.
MEMORY_LIMIT = 4 << 30
CPU_LIMIT = 120
#: A run with no output for this long is a hang (guard only; no speed is asserted).
HANG_SECONDS = 180
#: Lines Qt's offscreen platform plugin prints on its own (not ours, not an error).
QT_NOISE = ("This plugin does not support",)


@dataclass
class Result:
    argv: list[str]
    code: int
    out: str
    err: str

    def lines(self) -> list[str]:
        return [
            line for line in self.err.splitlines() if line.strip() and not line.startswith(QT_NOISE)
        ]


def run_in_process(argv: list[str]) -> Result:
    """``cli.main(argv)`` with stdout and stderr captured (argparse's exits included)."""
    from arena_studio.cli import main

    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            code = main(argv)
        except SystemExit as exc:  # --help and --version exit through argparse
            code = int(exc.code or 0)
    return Result(argv, int(code), out.getvalue(), err.getvalue())


def _limits() -> None:
    resource.setrlimit(resource.RLIMIT_AS, (MEMORY_LIMIT, MEMORY_LIMIT))
    resource.setrlimit(resource.RLIMIT_CPU, (CPU_LIMIT, CPU_LIMIT))


def run_subprocess(argv: list[str], cwd: Path) -> Result:
    """``python -m arena_studio ARGV`` under memory and CPU limits, user settings kept apart."""
    env = dict(
        os.environ,
        PYTHONPATH=str(ROOT),
        QT_QPA_PLATFORM="offscreen",
        HOME=str(cwd),
        XDG_CONFIG_HOME=str(cwd / "cfg"),
        XDG_DATA_HOME=str(cwd / "data"),
    )
    proc = subprocess.run(
        [sys.executable, "-m", "arena_studio", *argv],
        env=env,
        cwd=cwd,
        capture_output=True,
        text=True,
        timeout=HANG_SECONDS,
        preexec_fn=_limits,
    )
    return Result(argv, proc.returncode, proc.stdout, proc.stderr)


def assert_clean(result: Result, *places: str) -> None:
    """Exit 0/1/2, no traceback; a refusal is one line naming one of ``places``."""
    text = result.err
    assert "Traceback" not in text, (result.argv, text[-3000:])
    assert result.code in (0, 1, 2), (result.argv, result.code, text[-3000:])
    lines = result.lines()
    if result.code == 2:
        assert len(lines) == 1, (result.argv, lines)
        assert lines[0].startswith("arena-studio"), (result.argv, lines)
        if places:
            assert any(p in lines[0] for p in places), (result.argv, lines[0], places)
    else:
        for line in lines:  # warnings and notes only, each one line of ours
            assert line.startswith("arena-studio"), (result.argv, lines)
