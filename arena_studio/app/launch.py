"""Starts the desktop app for ``arena-studio [PATH] [--screenshot OUT.png] [--theme ...]``.

Arguments are checked before any window exists, so a bad path or option is one line on stderr
and exit 2. The window paints before the rest of the start-up work (the demo tape's replay
page, background threads; see :mod:`arena_studio.app.startup`). Runs nobody watches
(``--screenshot``, an offscreen platform) get :class:`~arena_studio.app.dialogs.QuietDialogs`:
an error can never wait on a modal box there.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from arena_studio.core.atomic import write_bytes_atomic
from arena_studio.core.safe_open import InputFileError, check_input

SCREENSHOT_SIZE = (1600, 1000)
DEMO_TAPE = "greenhouse-greedy.tape"  # default demo scene; successes and several failure kinds
SCENE_SUFFIXES = (".json", ".msgpack", ".mpk")
TAPE_SUFFIX = ".tape"


def is_tape_path(path: str | Path) -> bool:
    """A tape, or one still being written (``NAME.tape.partial``)."""
    return Path(path).name.lower().endswith((TAPE_SUFFIX, TAPE_SUFFIX + ".partial"))


def _still_written(p: Path) -> bool:
    """``NAME.tape`` named while only ``NAME.tape.partial`` exists (a trainer is writing)."""
    return is_tape_path(p) and not p.exists() and p.with_name(p.name + ".partial").exists()


HEADLESS_PLATFORMS = ("offscreen", "minimal")
IMAGE_SUFFIXES = (".png", ".jpg", ".jpeg", ".bmp")


def _ensure_platform(screenshot: bool) -> None:
    """Screenshots need no display: fall back to Qt's offscreen platform when there is none."""
    has_display = os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")
    if screenshot and "QT_QPA_PLATFORM" not in os.environ and not has_display:
        os.environ["QT_QPA_PLATFORM"] = "offscreen"


def argument_problem(args: argparse.Namespace) -> str | None:
    """What is wrong with the command line, as one line, or None (no Qt needed)."""
    screenshot = getattr(args, "screenshot", None)
    path = getattr(args, "path", None)
    episode = getattr(args, "episode", None)
    seconds = getattr(args, "time", None)
    is_tape = path is not None and is_tape_path(path)
    if path is not None:
        p = Path(path)
        if p.is_dir() and not (is_tape or p.suffix.lower() in SCENE_SUFFIXES):
            # a sweep of tapes: the runs page
            if episode is not None or seconds is not None:
                return "--episode and --time need a tape (.tape), not a folder"
            if next(p.rglob(f"*{TAPE_SUFFIX}*"), None) is None:
                return f"{path}: is a folder with no tapes (.tape) in it"
            return None if not screenshot else _screenshot_problem(args)
        # folders, pipes, devices and oversized files are named, never opened; a tape whose
        # writer still works on NAME.tape.partial is checked through that file
        checked = p.with_name(p.name + ".partial") if _still_written(p) else p
        try:
            check_input(checked, "tape" if is_tape else "scene")
        except InputFileError as exc:
            return str(exc)
        if not (is_tape or p.suffix.lower() in SCENE_SUFFIXES):
            expected = ".scene.json, .scene.msgpack or .tape"
            return f"{path}: not a scene or tape file (expected {expected})"
        if not os.access(p if p.exists() else p.with_name(p.name + ".partial"), os.R_OK):
            return f"{path}: cannot read (permission denied)"
    if (episode is not None or seconds is not None) and not is_tape:
        option = "--episode" if episode is not None else "--time"
        return f"{option} needs a tape (.tape) to open"
    if episode is not None and episode < 0:
        return f"--episode {episode}: episodes are numbered from 0"
    if seconds is not None and not (seconds >= 0):  # also refuses nan
        return f"--time {seconds:g}: expected seconds >= 0"
    return _screenshot_problem(args) if screenshot else None


def _screenshot_problem(args: argparse.Namespace) -> str | None:
    """A bad picture name, or a file there that is not an earlier screenshot of ours (it is
    replaced only with ``--force``) or that is the file being opened (never replaced)."""
    from arena_studio.core.outputs import OutputClash, prepare_outputs, screenshot_outputs

    screenshot = args.screenshot
    out = Path(screenshot)
    if not out.resolve().parent.is_dir():
        return f"{screenshot}: folder does not exist"
    if out.suffix.lower() not in IMAGE_SUFFIXES:
        return f"{screenshot}: expected a .png (or .jpg, .bmp) file name"
    path = getattr(args, "path", None)
    try:
        prepare_outputs(
            screenshot_outputs(out), [] if path is None else [path], getattr(args, "force", False)
        )
    except OutputClash as exc:
        return str(exc)
    return None


def is_interactive(screenshot: bool) -> bool:
    """False when nobody can answer a dialog: screenshots and display-less platforms."""
    platform = os.environ.get("QT_QPA_PLATFORM", "").split(":", 1)[0].strip().lower()
    return not screenshot and platform not in HEADLESS_PLATFORMS


def launch_app(args: argparse.Namespace) -> int:
    screenshot = getattr(args, "screenshot", None)
    path = getattr(args, "path", None)
    problem = argument_problem(args)
    if problem:
        print(f"arena-studio: {problem}", file=sys.stderr)
        return 2
    _ensure_platform(bool(screenshot))
    interactive = is_interactive(bool(screenshot))

    from PySide6.QtWidgets import QApplication

    from arena_studio.app.dialogs import QuietDialogs
    from arena_studio.app.main_window import MainWindow
    from arena_studio.app.startup import after_first_paint, hold_background

    # a screenshot or a --episode/--time run waits for loads before any paint: no hold there
    if not screenshot and not _wants_moment(args):
        hold_background()
    app = QApplication.instance() or QApplication(sys.argv[:1])
    from arena_studio.app.gui_gc import GuiThreadCollector

    GuiThreadCollector(app)  # Qt objects die on the GUI thread only (a child of the app)
    app.setOrganizationName("arena_studio")
    app.setApplicationName("arena-studio")
    quiet = None if interactive else QuietDialogs()
    scratch = None if interactive else _scratch_settings()  # the user's settings untouched
    window = MainWindow(
        settings=scratch.settings if scratch else None,
        theme=getattr(args, "theme", None),
        dialogs=quiet,  # type: ignore[arg-type]
    )
    if not screenshot:
        after_first_paint(window)  # watches for the first paint (and the measuring hook)
    if interactive:
        window.show()  # dialogs about the file below sit on a visible window
        window.offer_recovery()
    if path is not None:
        if not window.open_path(path):
            if interactive:
                print(f"arena-studio: {path}: could not be opened", file=sys.stderr)
                return int(app.exec())  # the dialog said why; the window stays usable
            _close_quietly(window)
            return 2
        is_tape = is_tape_path(path)
        if Path(path).is_dir() and screenshot:
            window.resize(*SCREENSHOT_SIZE)
            window.runs_page.wait_loaded()
        if is_tape and (screenshot or _wants_moment(args)):
            if screenshot:
                window.resize(*SCREENSHOT_SIZE)
            from arena_studio.app.replay import prepare_screenshot, show_moment

            moment = prepare_screenshot if screenshot else show_moment
            problem = moment(window, getattr(args, "episode", None), getattr(args, "time", None))
            if problem:
                print(f"arena-studio: {problem}", file=sys.stderr)
                _close_quietly(window)
                return 2
    elif not window.document.dirty:
        window.open_demo()
        if not screenshot:
            after_first_paint(window, lambda: _open_demo_tape(window))
    if screenshot:
        return _screenshot(app, window, Path(screenshot))
    window.show()
    return int(app.exec())


class _ScratchSettings:
    """Settings in a temporary folder for runs nobody watches (``--screenshot``, offscreen):
    such a run neither reads nor writes the user's window layout, theme or recent files."""

    def __init__(self) -> None:
        import tempfile

        from PySide6.QtCore import QSettings

        self.folder = tempfile.TemporaryDirectory(prefix="arena-studio-settings-")
        path = str(Path(self.folder.name) / "settings.ini")
        self.settings = QSettings(path, QSettings.Format.IniFormat)


def _scratch_settings() -> _ScratchSettings:
    return _ScratchSettings()


def _wants_moment(args: argparse.Namespace) -> bool:
    return getattr(args, "episode", None) is not None or getattr(args, "time", None) is not None


def _close_quietly(window: object) -> None:
    """Stop background work before exiting with an error (nothing was edited)."""
    from arena_studio.app.main_window import MainWindow

    assert isinstance(window, MainWindow)
    window.document.undo_stack.setClean()
    window.close()


def _open_demo_tape(window: object) -> None:
    """With no argument the replay page also gets the demo tape, after the first paint; the
    editor stays in front."""
    from arena_studio.core.resources import demo_path

    tape = demo_path(DEMO_TAPE)
    if not tape.is_file():
        return
    from arena_studio.app.replay import open_tape

    open_tape(window, tape, show=False)


def _screenshot(app: object, window: object, out: Path) -> int:
    from PySide6.QtWidgets import QApplication

    from arena_studio.app.main_window import MainWindow

    assert isinstance(window, MainWindow)
    window.resize(*SCREENSHOT_SIZE)
    window.show()
    QApplication.processEvents()
    if window.modes.currentWidget() is window.canvas:
        window.canvas.fit_scene()
        window.run_checks_now()
    QApplication.processEvents()
    data = _picture_bytes(window.grab().toImage(), out.suffix.lower().lstrip("."))
    window.document.undo_stack.setClean()
    window.close()
    try:
        if data is None:
            raise OSError("the picture could not be encoded")
        write_bytes_atomic(out, data)  # a file already there is replaced whole or not at all
    except OSError as exc:
        print(f"arena-studio: {out}: could not write ({exc.strerror or exc})", file=sys.stderr)
        return 2
    return 0


def _picture_bytes(image: object, fmt: str) -> bytes | None:
    """The window's picture encoded as ``fmt``, marked as our screenshot (PNG text, JPEG
    comment) so that a later ``--screenshot`` may replace it without ``--force``."""
    from PySide6.QtCore import QBuffer, QIODevice
    from PySide6.QtGui import QImage

    from arena_studio.core.outputs import SCREENSHOT_MARK

    assert isinstance(image, QImage)
    image.setText("Software", SCREENSHOT_MARK.decode())
    buffer = QBuffer()
    buffer.open(QIODevice.OpenModeFlag.WriteOnly)
    ok = image.save(buffer, "JPG" if fmt == "jpeg" else fmt.upper())
    data = bytes(buffer.data().data())
    buffer.close()
    return data if ok else None
