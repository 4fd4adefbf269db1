"""Work off the UI thread: episode metrics for the list, and preparing a selected episode.

Both run Python callables on worker threads and hand results back through queued Qt signals,
so the window keeps repainting while a 2,000-episode tape is summarised or a long episode is
decoded. Stale results (the user already picked another episode) are dropped by a token.
"""

from __future__ import annotations

import atexit
import contextlib
import threading
import time
import weakref
from collections.abc import Callable, Iterator
from typing import Any

from PySide6.QtCore import QObject, QThread, Signal

#: held around every core computation the viewer runs off the UI thread (metrics, planning,
#: episode caches): shapely's prepared geometries, which core caches per scene and shares,
#: must not be used by two threads at once (GEOS prepared geometry is not thread-safe; two
#: workers sharing the planner crash inside shapely.covers).
CORE_LOCK = threading.RLock()

BATCH_SECONDS = 0.1
BATCH_MAX = 200
_LIVE: weakref.WeakSet[StreamWorker] = weakref.WeakSet()


@atexit.register
def stop_all_workers() -> None:
    """Stop running workers before Python exits (Qt aborts on a running QThread's delete)."""
    for worker in list(_LIVE):
        with contextlib.suppress(RuntimeError):  # the C++ object may already be gone
            worker.stop()


class StreamWorker(QThread):
    """Runs ``produce(should_stop)`` (an iterator) and emits its items in batches."""

    batchReady = Signal(object)  # list of items
    progress = Signal(int, int)  # done, total
    failed = Signal(str)

    def __init__(
        self,
        produce: Callable[[Callable[[], bool]], Iterator[Any]],
        total: int,
        parent: QObject | None = None,
    ) -> None:
        super().__init__(parent)
        self._produce = produce
        self._total = total
        _LIVE.add(self)

    def run(self) -> None:
        batch: list[Any] = []
        done = 0
        last = time.monotonic()
        try:
            for item in self._produce(self.isInterruptionRequested):
                if self.isInterruptionRequested():
                    return
                batch.append(item)
                done += 1
                now = time.monotonic()
                if len(batch) >= BATCH_MAX or now - last >= BATCH_SECONDS:
                    self.batchReady.emit(batch)
                    self.progress.emit(done, self._total)
                    batch, last = [], now
            if batch:
                self.batchReady.emit(batch)
            self.progress.emit(self._total, self._total)
        except Exception as exc:  # shown to the user in the status bar, never a traceback
            self.failed.emit(f"{type(exc).__name__}: {exc}")

    def stop(self) -> None:
        self.requestInterruption()
        self.wait(5000)


class BackgroundCall(QObject):
    """Run one callable at a time on a worker thread; only the newest request reports."""

    done = Signal(int, object)  # token, result
    failed = Signal(int, str)

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._token = 0
        self._lock = threading.Lock()
        self._threads: list[threading.Thread] = []

    def submit(self, fn: Callable[[], Any]) -> int:
        """Start ``fn`` on a worker thread; returns the token its result will carry."""
        self._token += 1
        token = self._token
        self._threads = [t for t in self._threads if t.is_alive()]
        thread = threading.Thread(target=self._run, args=(token, fn), daemon=True)
        self._threads.append(thread)
        thread.start()
        return token

    @property
    def latest(self) -> int:
        return self._token

    def _run(self, token: int, fn: Callable[[], Any]) -> None:
        with self._lock:  # serialise: tapes read one chunk at a time
            if token != self._token:
                return  # superseded before it started
            try:
                result = fn()
            except Exception as exc:
                self.failed.emit(token, f"{type(exc).__name__}: {exc}")
                return
        if token == self._token:
            self.done.emit(token, result)

    def wait_idle(self, timeout: float = 10.0) -> None:
        for thread in list(self._threads):
            thread.join(timeout)
