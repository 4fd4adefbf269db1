"""Starts the desktop app for ``arena-studio [PATH] [--screenshot OUT.png] [--theme ...]``."""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

SCREENSHOT_SIZE = (1600, 1000)
DEMO_TAPE = "greenhouse-shared.tape"  # recorded in the default demo scene


def _ensure_platform(screenshot: bool) -> None:
    """Screenshots need no display: fall back to Qt's offscreen platform when there is none."""
    has_display = os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")
    if screenshot and "QT_QPA_PLATFORM" not in os.environ and not has_display:
        os.environ["QT_QPA_PLATFORM"] = "offscreen"


def launch_app(args: argparse.Namespace) -> int:
    screenshot = getattr(args, "screenshot", None)
    path = getattr(args, "path", None)
    if path is not None and not Path(path).exists():
        print(f"arena-studio: {path}: no such file", file=sys.stderr)
        return 2
    if screenshot and not Path(screenshot).resolve().parent.is_dir():
        print(f"arena-studio: {screenshot}: folder does not exist", file=sys.stderr)
        return 2
    _ensure_platform(bool(screenshot))

    from PySide6.QtWidgets import QApplication

    from .main_window import MainWindow

    app = QApplication.instance() or QApplication(sys.argv[:1])
    app.setOrganizationName("arena_studio")
    app.setApplicationName("arena-studio")
    window = MainWindow(theme=getattr(args, "theme", None))
    if not screenshot:
        window.offer_recovery()
    if path is not None:
        opened = window.open_path(path)
        if not opened and screenshot:
            print(f"arena-studio: {path}: could not be opened", file=sys.stderr)
            return 2
        if screenshot and Path(path).suffix.lower() == ".tape":
            from .replay import prepare_screenshot

            window.resize(*SCREENSHOT_SIZE)
            problem = prepare_screenshot(
                window, getattr(args, "episode", None), getattr(args, "time", None)
            )
            if problem:
                print(f"arena-studio: {problem}", file=sys.stderr)
                return 2
    elif not window.document.dirty:
        if not screenshot:
            _open_demo_tape(window)
        window.open_demo()
    if screenshot:
        return _screenshot(app, window, Path(screenshot))
    window.show()
    return int(app.exec())


def _open_demo_tape(window: object) -> None:
    """With no argument the replay page also gets the demo tape (the editor stays in front)."""
    from ..core.resources import demo_path

    tape = demo_path(DEMO_TAPE)
    if not tape.is_file():
        return
    try:
        from .replay import open_tape
    except ImportError:
        return
    open_tape(window, tape)


def _screenshot(app: object, window: object, out: Path) -> int:
    from PySide6.QtWidgets import QApplication

    from .main_window import MainWindow

    assert isinstance(window, MainWindow)
    window.resize(*SCREENSHOT_SIZE)
    window.show()
    QApplication.processEvents()
    if window.modes.currentWidget() is window.canvas:
        window.canvas.fit_scene()
        window.run_checks_now()
    QApplication.processEvents()
    image = window.grab()
    ok = image.save(str(out))
    window.document.undo_stack.setClean()
    window.close()
    if not ok:
        print(f"arena-studio: could not write {out}", file=sys.stderr)
        return 2
    return 0
