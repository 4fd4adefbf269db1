"""Work off the UI thread: episode metrics for the list, and preparing a selected episode.

Both run Python callables on worker threads and hand results back through queued Qt signals,
so the window keeps repainting while a 2,000-episode tape is summarised or a long episode is
decoded. Stale results (the user already picked another episode) are dropped by a token.
While the app starts, both wait for the window's first paint
(:func:`arena_studio.app.startup.wait_for_first_paint`).
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

from arena_studio.app.startup import wait_for_first_paint
from arena_studio.core.errors import ArenaError

#: held around every core computation the viewer runs off the UI thread (metrics, planning,
#: episode caches). Core keeps GEOS prepared geometry per thread, so this is not needed for
#: safety any more; it keeps the viewer's workers to one busy core of the two, so the UI
#: thread always has the other, and a selected episode waits for at most one list row.
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
        wait_for_first_paint()
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
    """Run callables on one long-lived worker thread; only the newest request reports.

    One thread for the window's life, not one per request: core keeps its planners and
    geometry caches per thread (GEOS prepared geometry must not cross threads), so a
    persistent thread keeps them warm from one selected episode to the next.
    """

    done = Signal(int, object)  # token, result
    failed = Signal(int, str)

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._token = 0
        self._job: tuple[int, Callable[[], Any]] | None = None
        self._busy = False
        self._stop = False
        self._wake = threading.Condition()
        self._thread: threading.Thread | None = None

    def submit(self, fn: Callable[[], Any]) -> int:
        """Queue ``fn`` (dropping any queued, not yet started one); returns its token."""
        with self._wake:
            self._token += 1
            self._job = (self._token, fn)
            if self._thread is None:
                self._thread = threading.Thread(target=self._loop, daemon=True)
                self._thread.start()
            self._wake.notify()
            return self._token

    @property
    def latest(self) -> int:
        return self._token

    def _loop(self) -> None:
        wait_for_first_paint()
        while True:
            with self._wake:
                while self._job is None and not self._stop:
                    self._wake.wait()
                if self._stop:
                    return
                assert self._job is not None
                token, fn = self._job
                self._job = None
                self._busy = True
            try:
                with CORE_LOCK:
                    result = fn()
            except Exception as exc:
                if token == self._token:
                    # our own errors name the place already; others get their type
                    text = (
                        str(exc) if isinstance(exc, ArenaError) else f"{type(exc).__name__}: {exc}"
                    )
                    self.failed.emit(token, text)
            else:
                if token == self._token:
                    self.done.emit(token, result)
            finally:
                with self._wake:
                    self._busy = False
                    self._wake.notify_all()

    def wait_idle(self, timeout: float = 10.0) -> None:
        """Wait until no job is queued or running (or ``timeout`` seconds)."""
        end = time.monotonic() + timeout
        with self._wake:
            while (self._job is not None or self._busy) and time.monotonic() < end:
                self._wake.wait(max(end - time.monotonic(), 0.0))

    def shutdown(self, timeout: float = 5.0) -> None:
        self.wait_idle(timeout)
        with self._wake:
            self._stop = True
            self._wake.notify_all()
        if self._thread is not None:
            self._thread.join(timeout)
