"""A child started with ``die_with_parent`` ends when its parent is SIGKILLed.

The child sleeps and reads nothing, so only the kernel's parent-death signal (prctl(2),
PR_SET_PDEATHSIG) can end it; without it the child would outlive the test. /proc/PID/stat
state Z or X (proc(5)) means the process has ended.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from arena_studio.core.child_process import die_with_parent
from tests.conftest import REPO

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="prctl is Linux")

PARENT = textwrap.dedent(
    """
    import subprocess, sys, time
    from arena_studio.core.child_process import die_with_parent
    mode = sys.argv[1]
    child = subprocess.Popen(
        [sys.executable, "-c", "import time; time.sleep(300)"],
        stdin=subprocess.DEVNULL,
        preexec_fn=die_with_parent() if mode == "guarded" else None,
    )
    print(child.pid, flush=True)
    time.sleep(300)
    """
)


def _running(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except (OSError, IndexError):
        return False
    return state not in ("Z", "X")


def _child_after_parent_killed(mode: str, tries: int) -> tuple[int, bool]:
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    with subprocess.Popen(
        [sys.executable, "-c", PARENT, mode], env=env, stdout=subprocess.PIPE, text=True
    ) as parent:
        assert parent.stdout is not None
        child = int(parent.stdout.readline())
        parent.send_signal(signal.SIGKILL)
    for _ in range(tries):  # polls 0.05 s apart: a bound, not a timing test
        if not _running(child):
            return child, False
        time.sleep(0.05)
    return child, True


def test_guarded_child_dies_with_its_parent() -> None:
    _child, alive = _child_after_parent_killed("guarded", 200)
    assert not alive


def test_unguarded_child_would_be_orphaned() -> None:
    # the control: the same child without the request keeps running (then we end it)
    child, alive = _child_after_parent_killed("plain", 10)
    try:
        assert alive
    finally:
        os.kill(child, signal.SIGKILL)


def test_available_on_linux() -> None:
    assert die_with_parent() is not None
