"""Start-up ordering: work waits for the main window's first paint, and the measuring hook
reports that paint (used by tests/bench/bench_startup.py).

The reference is Qt's own paint event: a shown widget gets ``QEvent.Paint`` (Qt documentation
of QWidget::paintEvent); nothing here depends on wall-clock time (the report's clock is
injected).
"""

from __future__ import annotations

import json
import sys
import threading
from pathlib import Path

import pytest
from PySide6.QtWidgets import QApplication, QLabel, QMainWindow

from arena_studio.app import startup
from arena_studio.core.resources import DEFAULT_DEMO_SCENE, demo_path


@pytest.fixture
def held():
    """Start-up hold on, always lifted after the test (other tests must never wait)."""
    startup.hold_background()
    yield
    startup.release_background()


def _window(qtbot) -> QMainWindow:
    w = QMainWindow()
    w.setCentralWidget(QLabel("start"))
    qtbot.addWidget(w)
    w.resize(400, 300)
    return w


def test_callbacks_run_once_after_the_first_paint_and_release_workers(qtbot, held, monkeypatch):
    monkeypatch.delenv(startup.REPORT_ENV, raising=False)
    calls: list[str] = []
    w = _window(qtbot)
    startup.after_first_paint(w, lambda: calls.append("first"), lambda: calls.append("second"))
    QApplication.processEvents()  # not shown yet: no paint, nothing runs, workers held
    assert calls == [] and not startup.FIRST_PAINT.is_set()

    waited = threading.Event()
    worker = threading.Thread(target=lambda: (startup.wait_for_first_paint(), waited.set()))
    worker.start()
    w.show()
    qtbot.waitUntil(lambda: calls == ["first", "second"])
    assert startup.FIRST_PAINT.is_set()
    worker.join(5)
    assert waited.is_set()
    w.update()  # later paints run nothing again
    w.repaint()
    QApplication.processEvents()
    assert calls == ["first", "second"]


def test_work_added_after_the_first_paint_still_runs(qtbot, held, monkeypatch) -> None:
    """A dialog at start-up (a recovery question) lets the window paint before the rest of
    the start-up has queued its work: that work runs on the next turn of the event loop."""
    monkeypatch.delenv(startup.REPORT_ENV, raising=False)
    calls: list[str] = []
    w = _window(qtbot)
    startup.after_first_paint(w)
    w.show()
    qtbot.waitUntil(startup.FIRST_PAINT.is_set)
    startup.after_first_paint(w, lambda: calls.append("late"))
    assert calls == []  # never inside the caller
    qtbot.waitUntil(lambda: calls == ["late"])


def test_a_window_that_never_paints_still_runs_its_work(qtbot, held, monkeypatch, tmp_path):
    """Hidden for good: after the hold limit the work runs and the workers go, but no paint
    time is reported (there was none)."""
    out = tmp_path / "shown.json"
    monkeypatch.setenv(startup.REPORT_ENV, str(out))
    monkeypatch.setattr(startup, "HOLD_LIMIT_S", 0.05)
    calls: list[str] = []
    w = _window(qtbot)  # never shown
    startup.after_first_paint(w, lambda: calls.append("ran"))
    qtbot.waitUntil(lambda: calls == ["ran"])
    assert startup.FIRST_PAINT.is_set() and not out.exists()


def test_workers_never_wait_unless_start_up_holds() -> None:
    assert startup.FIRST_PAINT.is_set()
    startup.wait_for_first_paint()  # returns at once (the hold limit would take seconds)


def test_report_hook_writes_paint_time_and_modules_then_closes(
    qtbot, held, monkeypatch, tmp_path: Path
) -> None:
    out = tmp_path / "shown.json"
    monkeypatch.setenv(startup.REPORT_ENV, str(out))
    monkeypatch.setenv(startup.QUIT_ENV, "1")
    monkeypatch.setattr(startup, "clock", lambda: 1234.5)  # the injected clock
    w = _window(qtbot)
    startup.after_first_paint(w)
    assert not out.exists()
    w.show()
    qtbot.waitUntil(out.exists)
    data = json.loads(out.read_text())
    assert data["shown"] == 1234.5
    assert "PySide6.QtWidgets" in data["modules"] and data["modules"] == sorted(data["modules"])
    assert set(data["modules"]) <= set(sys.modules)
    qtbot.waitUntil(lambda: not w.isVisible())  # ARENA_STUDIO_QUIT_AFTER_SHOWN closes it


def test_report_hook_is_off_by_default(qtbot, held, monkeypatch, tmp_path: Path) -> None:
    monkeypatch.delenv(startup.REPORT_ENV, raising=False)
    monkeypatch.setenv(startup.QUIT_ENV, "1")  # without a report file it does nothing
    monkeypatch.chdir(tmp_path)
    w = _window(qtbot)
    startup.after_first_paint(w)
    w.show()
    qtbot.waitUntil(startup.FIRST_PAINT.is_set)
    QApplication.processEvents()
    assert w.isVisible() and list(tmp_path.iterdir()) == []


def test_demo_tape_opened_after_the_paint_keeps_the_editor_in_front(make_window) -> None:
    from arena_studio.app.launch import _open_demo_tape

    win = make_window()
    assert win.open_demo()
    title, message = win.windowTitle(), win.message_label.text()
    _open_demo_tape(win)
    assert win.mode == "layout" and win.modes.currentWidget() is win.canvas
    assert win.windowTitle() == title == f"{DEFAULT_DEMO_SCENE} — arena_studio"
    assert win.message_label.text() == message  # "Opened greenhouse.scene.json" stays
    page = win.replay_page
    assert page.session is not None and len(page.session) > 0
    assert win.actions_by_id["mode.replay"].isEnabled()
    assert not page.replay_actions["play"].isEnabled()  # playback keys: only on its page
    win.set_mode("replay")
    assert page.replay_actions["play"].isEnabled()
    assert win.document.path == demo_path(DEFAULT_DEMO_SCENE).resolve()
