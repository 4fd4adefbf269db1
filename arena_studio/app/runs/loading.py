"""Loading a sweep off the UI thread: listing tapes, cached figures, the rest computed.

One thread per load; a newer load makes older ones' results stale (dropped by token). The
figures are computed in this process, one tape after another (no process pool under a Qt
app), and cached, so reopening a folder or reloading after a new tape is quick.
"""

from __future__ import annotations

import threading
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from PySide6.QtCore import QObject, Signal

from arena_studio.core.errors import ArenaError


@dataclass
class SweepData:
    """What a load produced (handed to the page on the UI thread)."""

    root: Path
    runs: list[Any] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)
    recording: list[Path] = field(default_factory=list)
    folders: list[Path] = field(default_factory=list)  # to watch for new tapes


class SweepLoader(QObject):
    progress = Signal(int, int, int)  # token, done, total
    loaded = Signal(int, object)  # token, SweepData
    failed = Signal(int, str)

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._token = 0
        self._threads: list[threading.Thread] = []
        self.use_cache = True

    def load(self, path: Path) -> int:
        """Start loading ``path``; returns the token its signals carry."""
        self._token += 1
        token = self._token
        thread = threading.Thread(target=self._run, args=(token, path), daemon=True)
        self._threads = [t for t in self._threads if t.is_alive()] + [thread]
        thread.start()
        return token

    @property
    def latest(self) -> int:
        return self._token

    def wait(self, timeout: float = 60.0) -> None:
        for t in list(self._threads):
            t.join(timeout)

    def _run(self, token: int, path: Path) -> None:
        from arena_studio.core.runs import Execution, FigureCache, load_runs, scan_sweep

        try:
            sweep = scan_sweep(path)
            total = len(sweep.ready)
            done = [0]

            def advance(n: int) -> None:
                done[0] += n
                if token == self._token:
                    self.progress.emit(token, done[0], total)

            cache = FigureCache(sweep.root) if self.use_cache else None
            runs, problems = load_runs(sweep, Execution(processes=1), cache, advance)
        except (ArenaError, OSError) as exc:
            self.failed.emit(token, str(exc))
            return
        except Exception as exc:  # shown in the page, never a traceback
            self.failed.emit(token, f"{type(exc).__name__}: {exc}")
            return
        folders = sorted({p for p in Path(sweep.root).rglob("*") if p.is_dir()} | {sweep.root})
        data = SweepData(
            root=sweep.root,
            runs=runs,
            problems=problems,
            recording=[t.path for t in sweep.recording],
            folders=folders,
        )
        self.loaded.emit(token, data)
