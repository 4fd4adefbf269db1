"""Runs the scene checker (and par times) after edits: debounced, off the UI thread.

Results for a scene that is no longer current are dropped. While the app starts, the first
check waits for the window's first paint (:mod:`arena_studio.app.startup`). When ``core.checks`` or
``core.partime`` are missing from this build, the panels say so instead of failing.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from typing import Any

from PySide6.QtCore import QObject, QTimer, Signal

from arena_studio.app.startup import wait_for_first_paint
from arena_studio.core.scene.model import Scene
from arena_studio.editing.goal_rows import goal_rows

MAX_PAR_GOALS = 64  # par times beyond this many goals are left to the batch command


def check(scene: Scene) -> tuple[list[Any], str | None]:
    """Findings, and an error text when the checker failed."""
    from arena_studio.core.checks.checker import (
        check_scene,  # lazy: shapely and scipy load off the UI thread
    )

    try:
        return list(check_scene(scene)), None
    except Exception as exc:  # a checker bug must never take the editor down
        return [], f"The checker stopped: {exc}"


def par_plans(scene: Scene, stale: Callable[[], bool] = lambda: False) -> list[Any] | None:
    """One par-time plan per goal (``None`` entries where planning failed), or ``None`` when
    there is nothing to plan or ``stale()`` turns true meanwhile."""
    from arena_studio.core.geometry.paths import PathPlanner
    from arena_studio.core.planning.partime import plan_goal

    rows = goal_rows(scene)
    if not (0 < len(rows) <= MAX_PAR_GOALS) or not scene.agents:
        return None
    try:
        planner: Any = PathPlanner(scene)  # our own: prepared geometry stays in this thread
    except Exception:
        planner = None
    plans: list[Any] = []
    for row in rows:
        if stale():
            return None
        try:
            plans.append(plan_goal(scene, row.vector, planner=planner))
        except Exception:
            plans.append(None)
    return plans


class CheckRunner(QObject):
    """``schedule(scene)`` after each edit. ``results`` fires with the newest scene's findings
    as soon as the checker is done; ``plansReady`` follows with par-time plans per goal."""

    results = Signal(object, object, object)  # scene, findings, error
    plansReady = Signal(object, object)  # scene, plans (list or None)
    _checked = Signal(object, object, object)
    _planned = Signal(object, object)

    def __init__(self, delay_ms: int = 250) -> None:
        super().__init__()
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(delay_ms)
        self._timer.timeout.connect(self._start)
        self._pool = ThreadPoolExecutor(max_workers=1, thread_name_prefix="scene-check")
        self._pending: Scene | None = None
        self._running: Scene | None = None
        self._closed = False
        self.latest: Scene | None = None
        self.last_seconds = 0.0
        self._checked.connect(self._on_checked)
        self._planned.connect(self._on_planned)

    def schedule(self, scene: Scene) -> None:
        if self._closed:
            return
        self.latest = scene
        self._pending = scene
        self._timer.start()

    def run_now(self, scene: Scene) -> None:
        """Check and plan synchronously (screenshots, tests) and publish both results."""
        self.latest = scene
        self._pending = None
        self._timer.stop()
        self.results.emit(scene, *check(scene))
        self.plansReady.emit(scene, par_plans(scene))

    def _start(self) -> None:
        # a result queued before shutdown may still arrive and ask for the next run
        if self._closed or self._running is not None or self._pending is None:
            return
        scene, self._pending = self._pending, None
        self._running = scene
        self._pool.submit(self._work, scene)

    def _work(self, scene: Scene) -> None:
        wait_for_first_paint()
        t0 = time.perf_counter()
        findings, error = check(scene)
        self.last_seconds = time.perf_counter() - t0
        self._checked.emit(scene, findings, error)
        plans = par_plans(scene, stale=lambda: self.latest != scene)
        self._planned.emit(scene, plans)

    def _on_checked(self, scene: Scene, findings: Any, error: Any) -> None:
        if scene == self.latest:
            self.results.emit(scene, findings, error)

    def _on_planned(self, scene: Scene, plans: Any) -> None:
        self._running = None
        if scene == self.latest:
            self.plansReady.emit(scene, plans)
        if self._pending is not None:
            self._start()

    @property
    def busy(self) -> bool:
        return self._running is not None or self._pending is not None or self._timer.isActive()

    def shutdown(self) -> None:
        self._closed = True
        self._pending = None
        self._timer.stop()
        self.latest = None  # lets a running par-time computation stop early
        self._pool.shutdown(wait=True, cancel_futures=True)
