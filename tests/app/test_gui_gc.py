"""Cycle collection happens on the GUI thread only.

Reference: Python's ``gc`` module documents that automatic collection runs when the
allocation count of generation 0 passes its threshold, in whichever thread allocates, and
that ``gc.disable()`` stops it; Qt documents that a QObject must be destroyed in the thread it
lives in. The worker below builds a cycle holding a Qt object and allocates far past the
thresholds: with the collector installed, nothing is collected there, and the GUI thread's
timer frees the cycle.
"""

from __future__ import annotations

import gc
import threading
import weakref

from PySide6.QtCore import QObject

from arena_studio.app.gui_gc import GuiThreadCollector, collect_due


class _Holder:
    def __init__(self) -> None:
        self.me = self  # a reference cycle: only the cycle collector frees it
        self.qt = QObject()


def test_workers_never_collect_and_the_gui_thread_does(qapp, qtbot):
    gc.enable()  # as in a fresh interpreter (the test session keeps it off)
    collector = GuiThreadCollector(qapp, interval_ms=20)
    try:
        assert not gc.isenabled()
        holder = _Holder()
        gone = weakref.ref(holder)
        del holder
        collected_in: list[str] = []
        gc.callbacks.append(
            lambda phase, _info: phase == "start"
            and collected_in.append(threading.current_thread().name)
        )

        kept: list[list[list[int]]] = []

        def allocate() -> None:  # containers kept alive count (allocations minus frees)
            kept.append([[] for _ in range(50 * gc.get_threshold()[0])])

        worker = threading.Thread(target=allocate, name="worker")
        worker.start()
        worker.join()
        assert "worker" not in collected_in and gone() is not None
        qtbot.waitUntil(lambda: gone() is None, timeout=5000)
        assert set(collected_in) == {threading.main_thread().name}
    finally:
        gc.callbacks.pop()
        collector.stop()
        assert gc.isenabled()  # given back
        gc.disable()
        collector.deleteLater()


def test_collect_due_follows_the_thresholds():
    gc.collect()
    assert collect_due((10**9, 10, 10)) is None  # nothing is due below the threshold
    kept = [[] for _ in range(50)]
    assert collect_due((1, 10**9, 10**9)) == 0
    assert kept
