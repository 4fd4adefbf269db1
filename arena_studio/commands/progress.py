"""A small progress bar on stderr for long batch commands.

::

    with progress_bar(total, "rollout", quiet=args.quiet) as bar:
        for item in work:
            ...
            bar.advance(1)

It draws only when stderr is a terminal and ``quiet`` is False, redraws at most ten times a
second, and clears its line when done, so logs and pipes never see control characters.
"""

from __future__ import annotations

import contextlib
import sys
import time
from collections.abc import Iterator
from typing import TextIO

WIDTH = 28
MIN_INTERVAL = 0.1


class ProgressBar:
    def __init__(self, total: int, label: str, enabled: bool, stream: TextIO) -> None:
        self.total = max(int(total), 0)
        self.label = label
        self.enabled = enabled
        self.stream = stream
        self.done = 0
        self._last = 0.0
        self._start = time.monotonic()

    def advance(self, n: int = 1) -> None:
        self.done += n
        if not self.enabled:
            return
        now = time.monotonic()
        if now - self._last >= MIN_INTERVAL or self.done >= self.total:
            self._last = now
            self._draw(now)

    def _draw(self, now: float) -> None:
        frac = min(self.done / self.total, 1.0) if self.total else 1.0
        filled = round(frac * WIDTH)
        bar = "#" * filled + "-" * (WIDTH - filled)
        elapsed = now - self._start
        self.stream.write(
            f"\r{self.label} [{bar}] {self.done}/{self.total} {frac:4.0%} {elapsed:5.1f}s"
        )
        self.stream.flush()

    def finish(self) -> None:
        if self.enabled:
            self.stream.write("\r\033[K")
            self.stream.flush()


@contextlib.contextmanager
def progress_bar(
    total: int, label: str, quiet: bool = False, stream: TextIO | None = None
) -> Iterator[ProgressBar]:
    """Yield a bar with ``advance(n)``; silent when ``quiet`` or stderr is not a terminal."""
    out = sys.stderr if stream is None else stream
    enabled = not quiet and bool(getattr(out, "isatty", lambda: False)())
    bar = ProgressBar(total, label, enabled, out)
    try:
        yield bar
    finally:
        bar.finish()


@contextlib.contextmanager
def graph_bar(quiet: bool = False, stream: TextIO | None = None) -> Iterator[None]:
    """A bar for each visibility graph built inside (corner pairs tested), on a terminal."""
    from arena_studio.core.geometry.visibility import graph_progress  # lazy: shapely and scipy

    out = sys.stderr if stream is None else stream
    enabled = not quiet and bool(getattr(out, "isatty", lambda: False)())
    current: list[ProgressBar] = []

    def report(done: int, total: int) -> None:
        if not current or current[0].done > done:
            if current:
                current.pop().finish()
            current.append(ProgressBar(total, "visibility graph", enabled, out))
        current[0].advance(done - current[0].done)

    try:
        with graph_progress(report):
            yield
    finally:
        if current:
            current[0].finish()


__all__ = ["ProgressBar", "graph_bar", "progress_bar"]
