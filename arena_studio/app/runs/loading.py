"""Loading a sweep off the UI thread: listing tapes, cached figures, the rest computed.

One thread per load; a newer load makes older ones' results stale (dropped by token). The
figures are computed in this process, one tape after another (no process pool under a Qt
app), and cached, so reopening a folder or reloading after a new tape is quick.

The loading thread never touches a Qt object: it puts its news on a plain queue, and a timer
on the UI thread turns them into signals (Qt objects used from a Python thread that Qt did
not start have crashed the process during garbage collection).
"""

from __future__ import annotations

import queue
import threading
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from PySide6.QtCore import QObject, QTimer, Signal

from arena_studio.core.errors import ArenaError
from arena_studio.core.wording import LandmarkNames


@dataclass
class SweepData:
    """What a load produced (handed to the page on the UI thread)."""

    root: Path
    runs: list[Any] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)
    recording: list[Path] = field(default_factory=list)
    folders: list[Path] = field(default_factory=list)  # to watch for new tapes
    names: LandmarkNames = field(default_factory=lambda: LandmarkNames(()))  # goals by label


class SweepLoader(QObject):
    progress = Signal(int, int, int)  # token, done, total
    loaded = Signal(int, object)  # token, SweepData
    failed = Signal(int, str)

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._token = 0
        self._threads: list[threading.Thread] = []
        self._news: queue.SimpleQueue[tuple[Any, ...]] = queue.SimpleQueue()
        self._timer = QTimer(self)
        self._timer.setInterval(50)
        self._timer.timeout.connect(self.deliver)
        self.use_cache = True

    def deliver(self) -> None:
        """Emit what the loading threads reported (on the UI thread)."""
        while True:
            try:
                kind, *news = self._news.get_nowait()
            except queue.Empty:
                break
            getattr(self, kind).emit(*news)
        if not any(t.is_alive() for t in self._threads) and self._news.empty():
            self._timer.stop()

    def load(self, path: Path) -> int:
        """Start loading ``path``; returns the token its signals carry."""
        self._token += 1
        token = self._token
        thread = threading.Thread(target=self._run, args=(token, path), daemon=True)
        self._threads = [t for t in self._threads if t.is_alive()] + [thread]
        thread.start()
        self._timer.start()
        return token

    @property
    def latest(self) -> int:
        return self._token

    def wait(self, timeout: float = 60.0) -> None:
        for t in list(self._threads):
            t.join(timeout)
        self.deliver()

    def _run(self, token: int, path: Path) -> None:
        from arena_studio.core.runs import Execution, FigureCache, load_runs, scan_sweep
        from arena_studio.core.runs.sweep import landmark_names

        try:
            sweep = scan_sweep(path)
            total = len(sweep.ready)
            done = [0]

            def advance(n: int) -> None:
                done[0] += n
                if token == self._token:
                    self._news.put(("progress", token, done[0], total))

            cache = FigureCache(sweep.root) if self.use_cache else None
            runs, problems = load_runs(sweep, Execution(processes=1), cache, advance)
            names = landmark_names(sweep.ready)
        except (ArenaError, OSError) as exc:
            self._news.put(("failed", token, str(exc)))
            return
        except Exception as exc:  # shown in the page, never a traceback
            self._news.put(("failed", token, f"{type(exc).__name__}: {exc}"))
            return
        folders = sorted({p for p in Path(sweep.root).rglob("*") if p.is_dir()} | {sweep.root})
        data = SweepData(
            root=sweep.root,
            runs=runs,
            problems=problems,
            recording=[t.path for t in sweep.recording],
            folders=folders,
            names=names,
        )
        self._news.put(("loaded", token, data))
