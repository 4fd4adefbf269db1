"""CSV import of a large long-format file: peak memory and throughput of `arena-studio import`.

A file of ``ARENA_BENCH_IMPORT_MB`` MiB (default 1024) is generated in a temporary folder
(episodes of 400 steps x 3 agents, with rewards), imported by the command in a child process
and measured there: peak resident memory from ``resource.getrusage(RUSAGE_CHILDREN)``
(``ru_maxrss``) and MB/s of file read. The child's baseline (Python, numpy, pyarrow loaded,
a 1 MiB import) is measured the same way, and the plain read speed of the file in this run
gives the ratio. Targets: under 500 MB peak and at least 50 MB/s. Nothing is asserted about
time. Run with ``ARENA_BENCH_IMPORT_MB=100 .venv/bin/pytest tests/bench/bench_import.py -s``
for a quick look.
"""

from __future__ import annotations

import os
import subprocess
import sys
import time
from pathlib import Path

from arena_studio.core.scene.files import write_scene_file
from tests.core.tape_helpers import box_scene, write_long_csv

MIB = 1 << 20


def _child_peak(cmd: list[str], env: dict[str, str]) -> tuple[float, int]:
    """(wall seconds, peak resident bytes) of one command run in a fresh child.

    ``ru_maxrss`` of RUSAGE_CHILDREN is the largest of all children waited for, so every
    measurement runs under its own intermediate Python (whose own peak is small)."""
    probe = (
        "import resource, subprocess, sys, time;"
        "t = time.perf_counter(); rc = subprocess.call(sys.argv[1:]);"
        "dt = time.perf_counter() - t;"
        "print(dt, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss, rc)"
    )
    out = subprocess.run(
        [sys.executable, "-c", probe, *cmd], capture_output=True, text=True, env=env, check=True
    )
    seconds, kib, rc = out.stdout.split()[-3:]
    assert rc == "0", out.stderr
    return float(seconds), int(kib) * 1024  # Linux reports ru_maxrss in KiB


def _read_speed(path: Path) -> float:
    t = time.perf_counter()
    with open(path, "rb") as f:
        while f.read(8 * MIB):
            pass
    return path.stat().st_size / (time.perf_counter() - t)


def test_bench_import_large_csv(tmp_path: Path) -> None:
    size_mb = int(os.environ.get("ARENA_BENCH_IMPORT_MB", "1024"))
    root = Path(__file__).resolve().parents[2]
    scene = tmp_path / "bench.scene.json"
    write_scene_file(box_scene(agents=3), scene)
    src, small = tmp_path / "big.csv", tmp_path / "small.csv"
    t = time.perf_counter()
    episodes = write_long_csv(src, size_mb * MIB)
    write_long_csv(small, MIB)
    made = time.perf_counter() - t
    size = src.stat().st_size
    env = {**os.environ, "PYTHONPATH": str(root)}

    def command(path: Path, out: Path) -> list[str]:
        return [sys.executable, "-m", "arena_studio.cli", "import", "csv", str(path), "--scene",
                str(scene), "-o", str(out), "--quiet"]  # fmt: skip

    _, base = _child_peak(command(small, tmp_path / "small.tape"), env)
    seconds, peak = _child_peak(command(src, tmp_path / "big.tape"), env)
    floor = _read_speed(src)
    rate = size / seconds
    print(
        f"\nimport csv: {size / 1e6:,.0f} MB ({episodes:,} episodes; generated in {made:.1f} s)"
        f"\n  time {seconds:.1f} s, {rate / 1e6:.1f} MB/s (target >= 50); plain read "
        f"{floor / 1e6:.0f} MB/s, ratio {floor / rate:.1f}x"
        f"\n  peak memory {peak / 1e6:.0f} MB (target < 500), of which "
        f"{base / 1e6:.0f} MB for a 1 MiB import (interpreter and libraries)"
        f"\n  tape {(tmp_path / 'big.tape').stat().st_size / 1e6:,.0f} MB"
    )
