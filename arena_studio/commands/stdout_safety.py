"""Standard output that closes early or fills up ends a command cleanly.

``arena-studio goals SCENE --json | head -c 20`` closes the pipe after 20 bytes; the next
write raises BrokenPipeError. Writing to a full device raises OSError (ENOSPC), often only
when the buffer is flushed. :func:`run_with_safe_stdout` wraps ``sys.stdout`` while a
command runs so that such errors are told apart from errors on the command's own files:

- a closed pipe ends the command quietly with status 141 (128 + SIGPIPE, what a shell
  reports for a program that a closed pipe stopped: common practice), nothing on stderr;
- any other write error on stdout is one line on stderr and exit 2.

Afterwards stdout points at the null device, so Python's final flush at exit has nothing
left to complain about.
"""

from __future__ import annotations

import contextlib
import errno
import os
import sys
from collections.abc import Callable
from typing import Any, TextIO

#: Exit status after a closed pipe: 128 + SIGPIPE (13), as shells report it.
EXIT_CLOSED_PIPE = 141
EXIT_WRITE_FAILED = 2


class StdoutError(Exception):
    """A write to standard output failed; ``error`` is the OSError."""

    def __init__(self, error: OSError) -> None:
        super().__init__(str(error))
        self.error = error


class GuardedStdout:
    """A text stream around the real stdout whose write errors become :class:`StdoutError`
    (not an OSError, so a command's ``except OSError`` about its own files never eats it)."""

    def __init__(self, stream: TextIO | None) -> None:
        self._stream = stream

    def _target(self) -> TextIO:
        if self._stream is None:  # started with stdout closed (>&-)
            raise StdoutError(OSError(errno.EBADF, "standard output is closed"))
        return self._stream

    def write(self, text: str) -> int:
        try:
            return self._target().write(text)
        except OSError as exc:
            raise StdoutError(exc) from None

    def writelines(self, lines: Any) -> None:
        for line in lines:
            self.write(line)

    def flush(self) -> None:
        try:
            self._target().flush()
        except OSError as exc:
            raise StdoutError(exc) from None
        except ValueError:  # flushing a closed file
            raise StdoutError(OSError(errno.EBADF, "standard output is closed")) from None

    def isatty(self) -> bool:
        return bool(self._stream is not None and self._stream.isatty())

    def __getattr__(self, name: str) -> Any:
        return getattr(self._target(), name)


def _is_closed_pipe(error: OSError) -> bool:
    return isinstance(error, BrokenPipeError) or error.errno in (errno.EPIPE, errno.ECONNRESET)


def _stdout_to_null(original: TextIO | None) -> None:
    """Point fd 1 at the null device so nothing is flushed into the broken stream again."""
    with contextlib.suppress(OSError, ValueError, AttributeError):
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, original.fileno() if original is not None else 1)
        os.close(null)


def run_with_safe_stdout(run: Callable[[], int], report: Callable[[str], None]) -> int:
    """Run a command with a guarded stdout; returns its exit code (see the module doc).
    ``report`` prints one error line (``cli``'s error_line)."""
    original = sys.stdout
    sys.stdout = GuardedStdout(original)  # type: ignore[assignment]
    try:
        code = run()
        sys.stdout.flush()  # a full device often fails only here
        return code
    except StdoutError as exc:
        _stdout_to_null(original)
        if _is_closed_pipe(exc.error):
            return EXIT_CLOSED_PIPE
        reason = exc.error.strerror or str(exc.error)
        report(f"cannot write to standard output ({reason})")
        return EXIT_WRITE_FAILED
    finally:
        sys.stdout = original


__all__ = [
    "EXIT_CLOSED_PIPE",
    "EXIT_WRITE_FAILED",
    "GuardedStdout",
    "StdoutError",
    "run_with_safe_stdout",
]
