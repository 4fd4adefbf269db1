"""Fixtures for the app tests: a main window whose settings and recovery copies live in tmp."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
from PySide6.QtCore import QPoint, QPointF, QSettings

from arena_studio.app.main_window import MainWindow


class FakeDialogs:
    """Answers every question the window would ask, and records what it said."""

    def __init__(self) -> None:
        self.errors: list[tuple[str, str]] = []
        self.infos: list[tuple[str, str]] = []
        self.unsaved_answer = "discard"
        self.restore_answer = True
        self.save_answer: str | None = None
        self.open_answer: str | None = None
        self.asked_unsaved = 0
        self.asked_restore = 0

    def error(self, title: str, text: str) -> None:
        self.errors.append((title, text))

    def info(self, title: str, text: str) -> None:
        self.infos.append((title, text))

    def ask_unsaved(self, name: str) -> str:
        self.asked_unsaved += 1
        return self.unsaved_answer

    def ask_restore(self, copy: object) -> bool:
        self.asked_restore += 1
        return self.restore_answer

    def open_path(self, start: str) -> str | None:
        return self.open_answer

    def save_path(self, suggestion: str) -> str | None:
        return self.save_answer


@pytest.fixture
def settings_path(tmp_path: Path) -> Path:
    return tmp_path / "settings" / "arena-studio.ini"


@pytest.fixture
def make_window(qtbot, tmp_path: Path, settings_path: Path):
    """Factory: a new MainWindow sharing this test's settings file and recovery folder."""
    windows: list[MainWindow] = []

    def make(theme: str | None = None) -> MainWindow:
        settings = QSettings(str(settings_path), QSettings.Format.IniFormat)
        win = MainWindow(
            settings=settings,
            recovery_dir=tmp_path / "recovery",
            dialogs=FakeDialogs(),  # type: ignore[arg-type]
            theme=theme,
        )
        qtbot.addWidget(win)
        win.resize(1280, 800)
        win.show()
        qtbot.waitExposed(win)
        windows.append(win)
        return win

    yield make
    for win in windows:
        # work a replay left running holds the core lock; let it end before the next test
        page = getattr(win, "replay_page", None)
        session = getattr(page, "session", None)
        if session is not None:
            session.wait_idle()
        win.document.undo_stack.setClean()
        win.document._restored_dirty = False
        win.close()  # stops the checker thread and any mode's background work
        win.checks.shutdown()


@pytest.fixture
def main_window(make_window) -> Iterator[MainWindow]:
    yield make_window()


def view_point(win: MainWindow, x: float, y: float) -> QPoint:
    """Viewport pixel of a world point (metres)."""
    p = win.canvas.mapFromScene(QPointF(x, y))
    return QPoint(p.x(), p.y())
