"""Standard output that closes early or is full: no traceback, the conventional status.

A pipe whose reader has gone makes write(2) fail with EPIPE (POSIX); a shell reports a
program stopped that way with status 128 + 13 (SIGPIPE) = 141 (common practice). Writing to
/dev/full fails with ENOSPC (Linux null(4)/full(4) man page).
"""

from __future__ import annotations

import errno
import io
import os
import subprocess
import sys
from pathlib import Path

import pytest

from arena_studio.cli import main
from tests.conftest import REPO, SCENES

GREENHOUSE = str(SCENES / "greenhouse.scene.json")
TAPE = str(SCENES / "greenhouse-greedy.tape")
ENV = {**os.environ, "PYTHONPATH": str(REPO), "QT_QPA_PLATFORM": "offscreen"}


def _commands(tmp: Path) -> list[list[str]]:
    csv = tmp / "in.csv"
    rows = [f"0,{t},{a},{1 + a},{1 + 0.1 * t},0" for t in range(2) for a in range(3)]
    csv.write_text("episode,step,agent,x,y,heading\n" + "\n".join(rows) + "\n", "utf-8")
    return [
        ["check", GREENHOUSE],
        ["check", GREENHOUSE, "--json"],
        ["goals", GREENHOUSE],
        ["goals", GREENHOUSE, "--json"],
        ["export", GREENHOUSE, "--format", "wkt", "-o", str(tmp / "x.wkt")],
        ["stats", TAPE],
        ["stats", TAPE, "--json"],
        ["stats", TAPE, "--csv"],
        ["import", "csv", str(csv), "--scene", GREENHOUSE, "-o", str(tmp / "i.tape")],
    ]


def _run(args: list[str], stdout: int) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "arena_studio.cli", *args],
        stdout=stdout,
        stderr=subprocess.PIPE,
        env=ENV,
        text=True,
        timeout=300,
    )


def test_closed_pipe_ends_quietly_with_141(tmp_path: Path) -> None:
    for args in _commands(tmp_path):
        read, write = os.pipe()
        os.close(read)  # the reader is gone before the first byte, like `| head -c 0`
        try:
            proc = _run(args, write)
        finally:
            os.close(write)
        assert proc.returncode == 141, (args, proc.stderr)
        assert proc.stderr == "", (args, proc.stderr)


def test_head_reads_a_little_and_closes(tmp_path: Path) -> None:
    # the measured case, `arena-studio goals SCENE --json | head -c 20`
    proc = subprocess.run(
        f"{sys.executable} -m arena_studio.cli goals {GREENHOUSE} --json | head -c 20",
        shell=True,
        env=ENV,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert len(proc.stdout) == 20
    assert "Traceback" not in proc.stderr and proc.stderr == ""


@pytest.mark.skipif(not os.path.exists("/dev/full"), reason="needs Linux /dev/full")
def test_full_device_is_one_line_and_exit_2(tmp_path: Path) -> None:
    for args in _commands(tmp_path):
        with open("/dev/full", "w") as full:
            proc = _run(args, full.fileno())
        assert proc.returncode == 2, (args, proc.stderr)
        lines = proc.stderr.splitlines()
        assert len(lines) == 1 and "standard output" in lines[0] and "space" in lines[0], args


class _FullStream(io.StringIO):
    """A file object that fails like a full disk on every write."""

    def write(self, text: str) -> int:
        raise OSError(errno.ENOSPC, "No space left on device")


def test_enospc_file_object_in_process(monkeypatch, capsys) -> None:
    monkeypatch.setattr(sys, "stdout", _FullStream())
    assert main(["goals", GREENHOUSE, "--json"]) == 2
    err = capsys.readouterr().err.splitlines()
    assert err == ["arena-studio: error: cannot write to standard output (No space left on device)"]


def test_stdout_closed_from_the_start(tmp_path: Path) -> None:
    proc = subprocess.run(
        f"{sys.executable} -m arena_studio.cli check {GREENHOUSE} >&-",
        shell=True,
        env=ENV,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert proc.returncode == 2 and len(proc.stderr.splitlines()) == 1
