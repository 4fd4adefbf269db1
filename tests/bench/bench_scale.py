"""Commands on scenes at the documented maxima: wall time and peak memory per run.

Run with `.venv/bin/pytest tests/bench/bench_scale.py -s`. Each run is a subprocess with an
address-space limit of 4 GiB; the table printed is what README "Limits" quotes. Asserts only
that every run ends with exit 0, 1 or 2 (no crash): speed is never asserted.
"""

from __future__ import annotations

import json
import os
import resource
import subprocess
import sys
from pathlib import Path

import pytest

from tests.fuzz import big_scenes as big

ROOT = Path(__file__).resolve().parents[2]
CASES = {
    "room of 10,000 vertices": lambda: big.zigzag_room(10_000),
    "room near the planning limit (1,000 vertices)": lambda: big.zigzag_room(1_000),
    "5,000 obstacles": lambda: big.many_obstacles(5_000),
    "130 obstacles": lambda: big.many_obstacles(130),
    "3,000 landmarks": lambda: big.many_landmarks(3_000),
    "1,000 agents": lambda: big.many_agents(1_000),
    "10,000 goals (families 1..30 over 30 landmarks)": lambda: big.many_goals(
        30, list(range(1, 31))
    ),
}
COMMANDS = {
    "check": ["check", "{scene}"],
    "goals": ["goals", "{scene}", "--quiet"],
    "export npz": ["export", "{scene}", "-f", "npz", "-o", "{out}.npz"],
    "screenshot": ["--screenshot", "{out}.png", "{scene}"],
}
CODE = (
    "import resource, sys, time\n"
    "from arena_studio.cli import main\n"
    "t = time.perf_counter(); code = main(sys.argv[1:])\n"
    "peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss // 1024\n"
    "print(f'RESULT {code} {time.perf_counter() - t:.2f} {peak}', file=sys.stderr)\n"
)


def _limit() -> None:
    resource.setrlimit(resource.RLIMIT_AS, (4 << 30, 4 << 30))


@pytest.mark.bench
@pytest.mark.parametrize("case", list(CASES))
def test_commands_at_the_maxima(case, tmp_path):
    scene = tmp_path / "s.scene.json"
    scene.write_text(json.dumps(CASES[case]()))
    env = dict(os.environ, PYTHONPATH=str(ROOT), QT_QPA_PLATFORM="offscreen")
    for name, argv in COMMANDS.items():
        args = [a.format(scene=scene, out=tmp_path / "out") for a in argv]
        proc = subprocess.run(
            [sys.executable, "-c", CODE, *args],
            env=env,
            capture_output=True,
            text=True,
            timeout=600,
            preexec_fn=_limit,
        )
        lines = proc.stderr.splitlines()
        result = [line for line in lines if line.startswith("RESULT")]
        assert result, proc.stderr[-2000:]
        _, code, seconds, mb = result[0].split()
        assert int(code) in (0, 1, 2)
        said = next((line for line in lines if "error" in line), "")[-90:]
        print(f"{case:48s} {name:11s} exit {code} {float(seconds):7.2f} s {int(mb):6d} MB {said}")
