"""An earlier run's recoverable ``.partial`` survives a second rollout (never truncated).

The first run is killed for real (os._exit in a child process after three finished
episodes), as a crash would leave it. The tape reader (DEVELOPERS.md "Tape format": a reader
walks the records of a file without a trailer) must still recover those episodes from the
kept file after the second run has finished its own tape.
"""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap
from pathlib import Path

from arena_studio.cli import main
from arena_studio.core.scene.model import load_scene
from arena_studio.core.tape import TapeWriter, open_tape
from arena_studio.core.tape.writer import partial_path, set_aside_partial
from tests.conftest import REPO, SCENES

GREENHOUSE = SCENES / "greenhouse.scene.json"

CRASHING_ROLLOUT = textwrap.dedent(
    """
    import os, sys
    from arena_studio.core.sim.rollout import run_rollout
    from arena_studio.core.scene.model import load_scene
    from arena_studio.core.tape import writer
    real = writer.TapeWriter.end_episode
    ended = [0]
    def end_episode(self, *a, **k):
        real(self, *a, **k)
        ended[0] += 1
        if ended[0] == 3:
            os._exit(9)  # a crash: no clean-up runs
    writer.TapeWriter.end_episode = end_episode
    run_rollout(load_scene(sys.argv[1]), sys.argv[2], episodes=6, seed=0, mode="shared")
    """
)


def _crashed_run(out: Path) -> bytes:
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    proc = subprocess.run(
        [sys.executable, "-c", CRASHING_ROLLOUT, str(GREENHOUSE), str(out)],
        env=env,
        timeout=300,
        capture_output=True,
    )
    assert proc.returncode == 9
    return partial_path(out).read_bytes()


def test_partial_survives_a_second_rollout(tmp_path: Path, capsys) -> None:
    out = tmp_path / "run.tape"
    earlier = _crashed_run(out)
    assert len(open_tape(partial_path(out))) == 3
    assert main(["rollout", str(GREENHOUSE), "-o", str(out), "--episodes", "1", "--quiet"]) == 0
    err = capsys.readouterr().err
    kept = tmp_path / "run.earlier-1.tape.partial"
    assert str(kept) in err and "recoverable" in err  # the run says so, one line
    assert kept.read_bytes() == earlier  # byte for byte
    assert len(open_tape(kept)) == 3 and len(open_tape(out)) == 1
    # a third run keeps the first kept file and needs no new name (nothing to keep now)
    assert main(["rollout", str(GREENHOUSE), "-o", str(out), "--episodes", "1", "--quiet"]) == 0
    assert kept.read_bytes() == earlier


def test_writer_itself_never_truncates_a_partial(tmp_path: Path) -> None:
    out = tmp_path / "rec.tape"
    _crashed_run(out)
    before = partial_path(out).read_bytes()
    with TapeWriter(out, load_scene(GREENHOUSE), dt=0.1) as w:  # the Python API, no command
        assert w.set_aside is not None and w.set_aside.read_bytes() == before


def test_empty_partial_is_simply_replaced(tmp_path: Path) -> None:
    out = tmp_path / "e.tape"
    partial_path(out).write_bytes(b"")
    assert set_aside_partial(out) is None
    assert sorted(p.name for p in tmp_path.iterdir()) == ["e.tape.partial"]
