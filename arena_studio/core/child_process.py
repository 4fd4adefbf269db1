"""Child processes that end when their parent dies (the ffmpeg encoder of a clip).

A killed ``render`` used to leave its ffmpeg child running, still writing a temporary file
nobody would publish. On Linux the child asks the kernel for SIGKILL when its parent goes
(``prctl(PR_SET_PDEATHSIG)``, set between fork and exec) and checks that the parent did not
die before that request. The kernel sends the signal when the *thread* that started the
child ends, so start such a child from the thread that also waits for it (as clip export
does). Elsewhere :func:`die_with_parent` returns None and the caller's own clean-up (kill
on error or Ctrl+C) is what remains.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import os
import signal
import sys
from collections.abc import Callable

PR_SET_PDEATHSIG = 1  # from <linux/prctl.h>


def _libc_prctl() -> Callable[..., int] | None:
    if not sys.platform.startswith("linux"):
        return None
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6", use_errno=True)
        prctl: Callable[..., int] = libc.prctl
    except (OSError, AttributeError):
        return None
    return prctl


def die_with_parent() -> Callable[[], None] | None:
    """A ``preexec_fn`` for :class:`subprocess.Popen` that makes the child die with this
    process (Linux), or None where that is not available."""
    prctl = _libc_prctl()
    if prctl is None:
        return None
    parent = os.getpid()

    def preexec() -> None:
        prctl(PR_SET_PDEATHSIG, int(signal.SIGKILL), 0, 0, 0)
        if os.getppid() != parent:  # the parent died before the request took effect
            os._exit(1)

    return preexec


__all__ = ["die_with_parent"]
