"""Runs the scene checker (and par times) after edits: debounced, off the UI thread.

Results for a scene that is no longer current are dropped. When ``core.checks`` or
``core.partime`` are missing from this build, the panels say so instead of failing.
"""

from __future__ import annotations

import time
from concurrent.futures import ThreadPoolExecutor
from typing import Any

from PySide6.QtCore import QObject, QTimer, Signal

from ..core.scene import Scene
from .goal_rows import goal_rows

MAX_PAR_GOALS = 64  # par times beyond this many goals are left to the batch command


def load_checker() -> Any | None:
    try:
        from ..core.checks import check_scene
    except ImportError:
        return None
    return check_scene


def load_planner() -> Any | None:
    try:
        from ..core.partime import plan_goal
    except ImportError:
        return None
    return plan_goal


def compute(scene: Scene) -> tuple[list[Any], list[Any] | None, str | None]:
    """Findings, par-time plans per goal (or None) and an error text if the checker failed."""
    check = load_checker()
    findings: list[Any] = []
    error = None
    if check is None:
        error = "The scene checker is not part of this build."
    else:
        try:
            findings = list(check(scene))
        except Exception as exc:  # a checker bug must never take the editor down
            error = f"The checker stopped: {exc}"
    plans: list[Any] | None = None
    plan = load_planner()
    rows = goal_rows(scene)
    if plan is not None and 0 < len(rows) <= MAX_PAR_GOALS and scene.agents:
        plans = []
        planner = None
        try:
            from ..core.paths import PathPlanner

            planner = PathPlanner(scene)
        except Exception:
            planner = None
        for row in rows:
            try:
                plans.append(plan(scene, row.vector, planner=planner))
            except Exception:
                plans.append(None)
    return findings, plans, error


class CheckRunner(QObject):
    """``schedule(scene)`` after each edit; ``results`` fires with the newest scene's outcome."""

    results = Signal(object, object, object, object)  # scene, findings, plans, error
    _finished = Signal(object, object, object, object)

    def __init__(self, delay_ms: int = 250) -> None:
        super().__init__()
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(delay_ms)
        self._timer.timeout.connect(self._start)
        self._pool = ThreadPoolExecutor(max_workers=1, thread_name_prefix="scene-check")
        self._pending: Scene | None = None
        self._running: Scene | None = None
        self.latest: Scene | None = None
        self.last_seconds = 0.0
        self._finished.connect(self._on_finished)

    def schedule(self, scene: Scene) -> None:
        self.latest = scene
        self._pending = scene
        self._timer.start()

    def run_now(self, scene: Scene) -> None:
        """Check synchronously (screenshots, tests) and publish the result."""
        self.latest = scene
        self._pending = None
        self._timer.stop()
        self.results.emit(scene, *compute(scene))

    def _start(self) -> None:
        if self._running is not None or self._pending is None:
            return
        scene, self._pending = self._pending, None
        self._running = scene
        self._pool.submit(self._work, scene)

    def _work(self, scene: Scene) -> None:
        t0 = time.perf_counter()
        out = compute(scene)
        self.last_seconds = time.perf_counter() - t0
        self._finished.emit(scene, *out)

    def _on_finished(self, scene: Scene, findings: Any, plans: Any, error: Any) -> None:
        self._running = None
        if scene == self.latest:
            self.results.emit(scene, findings, plans, error)
        if self._pending is not None:
            self._start()

    @property
    def busy(self) -> bool:
        return self._running is not None or self._pending is not None or self._timer.isActive()

    def shutdown(self) -> None:
        self._timer.stop()
        self._pool.shutdown(wait=True, cancel_futures=True)
