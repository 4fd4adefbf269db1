"""Start-up ordering: the window paints first, the rest of the work follows.

``arena-studio`` shows its window before it builds what is not on screen (the replay page of
a start without a tape) and before background threads (scene checks, episode metrics) start:
Python threads share one interpreter lock, so work started earlier delays the first paint.
:func:`after_first_paint` runs callbacks once the main window has finished its first paint;
:data:`FIRST_PAINT` is set then, and :func:`wait_for_first_paint` holds worker threads
until it is (at most :data:`HOLD_LIMIT_S`). The event is set unless :func:`hold_background`
cleared it, so windows built by tests, screenshots and scripts never wait.

Measuring hook (off by default; ``tests/bench/bench_startup.py`` uses it):
``ARENA_STUDIO_REPORT_SHOWN=FILE`` writes ``{"shown": time.time(), "modules": [...]}`` to FILE
(JSON: the wall time of the main window's first completed paint and the modules imported by
then); with ``ARENA_STUDIO_QUIT_AFTER_SHOWN=1`` the app then quits.
"""

from __future__ import annotations

import json
import os
import sys
import threading
import time
from collections.abc import Callable
from pathlib import Path

from PySide6.QtCore import QEvent, QObject, QTimer
from PySide6.QtWidgets import QWidget

REPORT_ENV = "ARENA_STUDIO_REPORT_SHOWN"
QUIT_ENV = "ARENA_STUDIO_QUIT_AFTER_SHOWN"
#: longest a worker waits for the first paint (a window never shown must not stall work)
HOLD_LIMIT_S = 3.0
#: the report's wall clock (tests replace it)
clock: Callable[[], float] = time.time

FIRST_PAINT = threading.Event()
FIRST_PAINT.set()


def hold_background() -> None:
    """Make worker threads wait (see :func:`wait_for_first_paint`) until the first paint."""
    FIRST_PAINT.clear()


def release_background() -> None:
    FIRST_PAINT.set()


def wait_for_first_paint() -> None:
    """Called by worker threads before they start: returns at once unless start-up holds."""
    FIRST_PAINT.wait(HOLD_LIMIT_S)


class _FirstPaint(QObject):
    """Event filter on the main window: after its first paint event has been handled (and
    the frame flushed), writes the measuring report (when asked for), releases the workers,
    runs the callbacks once, then closes the window when the hook asks for that."""

    def __init__(self, window: QWidget) -> None:
        super().__init__(window)
        self.window = window
        self.callbacks: list[Callable[[], object]] = []
        self.seen = False
        self.done = False
        # a window that never paints (hidden, minimised, a platform without exposes) must
        # not keep the queued work and the workers waiting for ever
        QTimer.singleShot(int(HOLD_LIMIT_S * 1000), self, self._without_paint)

    def eventFilter(self, watched: QObject, event: QEvent) -> bool:
        if event.type() == QEvent.Type.Paint and not self.seen:
            self.seen = True
            # a zero timer runs after the paint event and the flush of the whole window
            QTimer.singleShot(0, self._fire)
        return False

    def _without_paint(self) -> None:
        if not self.seen:
            self.seen = True
            self._fire(painted=False)

    def _fire(self, painted: bool = True) -> None:
        self.window.removeEventFilter(self)
        report = os.environ.get(REPORT_ENV) if painted else None
        if report:
            write_report(Path(report))  # the paint time, before any other work
        release_background()
        self.done = True
        callbacks, self.callbacks = self.callbacks, []
        for callback in callbacks:
            callback()
        if report and os.environ.get(QUIT_ENV) == "1":
            QTimer.singleShot(0, self.window.close)


def after_first_paint(window: QWidget, *callbacks: Callable[[], object]) -> None:
    """Run ``callbacks`` (in order) right after ``window``'s first completed paint, or on the
    next turn of the event loop when that paint is already past (e.g. a dialog at start-up
    let the window paint). The first call also installs the measuring hook."""
    watcher = window.findChild(_FirstPaint)
    if watcher is None:
        watcher = _FirstPaint(window)
        window.installEventFilter(watcher)
    if watcher.done:
        for callback in callbacks:
            QTimer.singleShot(0, callback)
    else:
        watcher.callbacks.extend(callbacks)


def write_report(path: Path) -> None:
    """The measuring hook's file: first-paint wall time and the modules loaded by then."""
    data = {"shown": clock(), "modules": sorted(sys.modules)}
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_text(json.dumps(data), encoding="utf-8")
    os.replace(tmp, path)
