"""No orphaned encoder: the ffmpeg child of ``render`` ends when its parent is killed.

Linux only (prctl(2) PR_SET_PDEATHSIG, /proc); the parent is SIGKILLed, which no Python
handler can see, while it pipes frames of a GIF to ffmpeg. A process in state Z (zombie,
proc(5)) has ended and only waits to be reaped by whoever adopted it. This is the end-to-end
check; an encoder can also end here through its closed pipes, so the mechanism itself (a
child that would otherwise live on) is tested in tests/core/test_child_process.py.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from tests.conftest import REPO

from .demo_episode import write_demo_tape

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="prctl is Linux")


def _children(pid: int) -> list[int]:
    out: list[int] = []
    for task in Path(f"/proc/{pid}/task").glob("*"):
        try:
            out += [int(c) for c in (task / "children").read_text().split()]
        except OSError:
            continue
    return out


def _encoder(pid: int) -> int | None:
    for child in _children(pid):
        try:
            cmd = Path(f"/proc/{child}/cmdline").read_bytes().decode(errors="replace")
        except OSError:
            continue
        if "ffmpeg" in cmd and ".clip.gif.~" in cmd:
            return child
    return None


def _running(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except (OSError, IndexError):
        return False
    return state not in ("Z", "X")


def _wait_for(condition, tries: int = 600) -> bool:
    """Poll ``condition`` up to ``tries`` times, 0.05 s apart (a bound, not a timing test)."""
    for _ in range(tries):
        if condition():
            return True
        time.sleep(0.05)
    return False


def test_killed_render_leaves_no_ffmpeg_running(tmp_path: Path) -> None:
    tape = write_demo_tape(tmp_path / "demo.tape")
    env = {**os.environ, "PYTHONPATH": str(REPO), "QT_QPA_PLATFORM": "offscreen"}
    args = [sys.executable, "-m", "arena_studio.cli", "render", str(tape), "-o"]
    args += [str(tmp_path / "clip.gif"), "--size", "640x360", "--fps", "60", "--quiet"]
    parent = subprocess.Popen([*args, "--speed", "0.1"], env=env, stderr=subprocess.DEVNULL)
    try:
        # the encoder: the child whose command line names the clip's temporary file
        assert _wait_for(lambda: _encoder(parent.pid) is not None), "ffmpeg never started"
        child = _encoder(parent.pid)
        assert child is not None
        parent.send_signal(signal.SIGKILL)
        parent.wait()
        assert _wait_for(lambda: not _running(child)), "ffmpeg outlived its parent"
        assert [p for p in tmp_path.iterdir() if p.name.startswith(".clip.gif.")]
    finally:
        if parent.poll() is None:
            parent.kill()
            parent.wait()
    # the killed run's temporary is removed by the next run in that folder
    still = tmp_path / "still.png"
    code = subprocess.run(
        [
            sys.executable,
            "-m",
            "arena_studio.cli",
            "render",
            str(tape),
            "-o",
            str(still),
            "--size",
            "320x180",
        ],
        env=env,
        capture_output=True,
        timeout=120,
    ).returncode
    assert code == 0
    assert not [p.name for p in tmp_path.iterdir() if p.name.startswith(".clip.gif.")]
