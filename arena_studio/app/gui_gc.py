"""Python's cycle collector, run on the GUI thread only.

The collector runs in whichever thread happens to allocate past its threshold. When that is a
worker (a tape loader, the scene checker) and a collected cycle holds a Qt object's wrapper,
the object's C++ destructor runs off the GUI thread: Qt forbids that, and here it deadlocked
(the worker stuck in ``~QObject`` waiting for the interpreter lock the GUI thread wanted
back). So automatic collection is switched off and the GUI thread collects on a timer, by
the same generation thresholds Python itself uses.
"""

from __future__ import annotations

import gc

from PySide6.QtCore import QObject, QTimer

__all__ = ["GuiThreadCollector", "collect_due"]

#: how often the GUI thread looks at the collector's counts
INTERVAL_MS = 500


def collect_due(thresholds: tuple[int, int, int] | None = None) -> int | None:
    """Collect the generation Python would collect now, in the calling thread; the
    generation collected, or None when no count is past its threshold."""
    t0, t1, t2 = thresholds or gc.get_threshold()
    c0, c1, c2 = gc.get_count()
    if c0 <= t0:
        return None
    generation = 2 if (c1 > t1 and c2 > t2) else 1 if c1 > t1 else 0
    gc.collect(generation)
    return generation


class GuiThreadCollector(QObject):
    """Switches automatic collection off and collects from a GUI-thread timer instead.

    Create it on the GUI thread (it becomes the QApplication's child); :meth:`stop` gives
    collection back to Python."""

    def __init__(self, parent: QObject, interval_ms: int = INTERVAL_MS) -> None:
        super().__init__(parent)
        self.thresholds = gc.get_threshold()
        self._was_enabled = gc.isenabled()
        gc.disable()
        self.timer = QTimer(self)
        self.timer.timeout.connect(lambda: collect_due(self.thresholds))
        self.timer.start(interval_ms)

    def stop(self) -> None:
        self.timer.stop()
        if self._was_enabled:
            gc.enable()
