"""Multi-file outputs appear together or not at all; a killed run's temporaries are cleaned.

The kill is real: a child process exports a grid over an earlier one and SIGKILLs itself
after k of the renames (k = 0..2), the moment "kill -9 between grid renames" names. What is
left must never read as a grid whose parts disagree (numpy.load reads the parts; the sidecar
records their SHA-256, hashlib). POSIX rename(2) replaces a name atomically: common practice.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from arena_studio.core import atomic
from arena_studio.core.atomic import clean_stale_temps, make_temp, temp_owner, write_set_atomic
from arena_studio.core.export import ExportError, export_scene
from arena_studio.core.export.grid import read_grid
from arena_studio.core.scene.model import load_scene
from tests.conftest import REPO, SCENES

GREENHOUSE = SCENES / "greenhouse.scene.json"

KILLING_EXPORT = textwrap.dedent(
    """
    import os, signal, sys
    from arena_studio.core import atomic
    from arena_studio.core.export import export_scene
    from arena_studio.core.scene.model import load_scene
    allowed = int(sys.argv[2])
    real = atomic.publish
    done = [0]
    def publish(tmp, target, directory=False):
        if done[0] == allowed:
            os.kill(os.getpid(), signal.SIGKILL)
        real(tmp, target, directory)
        done[0] += 1
    atomic.publish = publish
    export_scene(load_scene(sys.argv[1]), "grid", sys.argv[3], resolution=0.2)
    """
)


@pytest.mark.parametrize("renames_before_kill", [0, 1, 2])  # 3 renames: npy, png, json
def test_kill_between_grid_renames_leaves_no_mixed_set(
    renames_before_kill: int, tmp_path: Path
) -> None:
    out = tmp_path / "g"
    export_scene(load_scene(GREENHOUSE), "grid", out, resolution=0.1)  # the earlier set
    old_grid, _ = read_grid(tmp_path / "g.json")
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    proc = subprocess.run(
        [sys.executable, "-c", KILLING_EXPORT, str(GREENHOUSE), str(renames_before_kill), str(out)],
        env=env,
        capture_output=True,
        timeout=120,
    )
    assert proc.returncode == -signal.SIGKILL
    try:
        grid, doc = read_grid(tmp_path / "g.json")
    except ExportError:
        grid = None  # no set at all: "not at all" is allowed
    if grid is not None:
        # whichever set is there, its parts agree: old (0.1 m) or new (0.2 m) throughout
        assert doc["resolution"] in (0.1, 0.2)
        assert list(grid.shape) == doc["shape"]
        if doc["resolution"] == 0.1:
            assert np.array_equal(grid, old_grid)
    # the next run in that folder removes the killed run's temporaries and publishes a set
    leftovers = [p for p in tmp_path.iterdir() if temp_owner(p.name) is not None]
    assert len(leftovers) == 3 - renames_before_kill
    export_scene(load_scene(GREENHOUSE), "grid", out, resolution=0.2)
    clean_stale_temps(tmp_path)
    assert not [p for p in tmp_path.iterdir() if temp_owner(p.name) is not None]
    grid, doc = read_grid(tmp_path / "g.json")
    assert doc["resolution"] == 0.2 and list(grid.shape) == doc["shape"]


def test_error_while_publishing_leaves_no_sidecar(tmp_path: Path, monkeypatch) -> None:
    a, b, meta = tmp_path / "a.bin", tmp_path / "b.bin", tmp_path / "m.json"
    write_set_atomic([(a, b"old a"), (b, b"old b"), (meta, b"{}")])
    calls = []

    def failing_publish(tmp: Path, target: Path, directory: bool = False) -> None:
        calls.append(target)
        if len(calls) == 2:
            raise OSError(28, "No space left on device")
        os.replace(tmp, target)

    monkeypatch.setattr(atomic, "publish", failing_publish)
    with pytest.raises(OSError):
        write_set_atomic([(a, b"new a"), (b, b"new b"), (meta, b'{"new": 1}')])
    assert not meta.exists()  # no metadata: nothing claims a.bin and b.bin form a set
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.bin", "b.bin"]  # temps removed


def test_stale_temp_of_a_dead_process_is_cleaned_live_ones_kept(tmp_path: Path) -> None:
    target = tmp_path / "clip.mp4"
    dead = subprocess.run(
        [sys.executable, "-c", "import os; print(os.getpid())"],
        capture_output=True,
        text=True,
        check=True,
    )
    dead_pid = int(dead.stdout)  # a process that has ended
    stale = tmp_path / f".clip.mp4.~{dead_pid}.abcd1234.part"
    stale.write_bytes(b"x" * 100)
    stale_dir = tmp_path / f".frames.~{dead_pid}.abcd1234.part"
    stale_dir.mkdir()
    (stale_dir / "frame_00000.png").write_bytes(b"png")
    fd, ours = make_temp(target, ".part")  # this (live) process's own temp
    os.close(fd)
    partial = tmp_path / "run.tape.partial"  # recoverable data, never a temp
    partial.write_bytes(b"data")
    foreign = tmp_path / ".clip.mp4.abcd.part"  # not our pattern: someone else's
    foreign.write_bytes(b"x")
    removed = clean_stale_temps(tmp_path)
    assert sorted(removed) == sorted([stale, stale_dir])
    assert ours.exists() and partial.exists() and foreign.exists()


def test_scene_export_sidecar_records_the_file(tmp_path: Path) -> None:
    written = export_scene(load_scene(GREENHOUSE), "json", tmp_path / "s.json")
    about = json.loads(written[1].read_text(encoding="utf-8"))
    import hashlib

    assert about["file_sha256"] == hashlib.sha256(written[0].read_bytes()).hexdigest()
