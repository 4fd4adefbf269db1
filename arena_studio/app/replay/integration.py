"""How the replay page plugs into the main window: page, Replay menu, mode switching.

The main window knows only :func:`arena_studio.app.replay.open_tape`; everything else (the
page, its menu, enabling the playback keys only while the page is shown, handing a scene copy
to the layout editor, warning about a scene file that differs from the tape's) lives here.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from PySide6.QtWidgets import QApplication, QMenu

from arena_studio.app.replay.replay_window import ReplayWindow
from arena_studio.core.errors import ArenaError
from arena_studio.core.scene.fields import cap_text

PAGE_ATTR = "replay_page"
MODE = "replay"


def replay_page(window: Any) -> ReplayWindow:
    """The window's replay page, built (with its menu) on first use."""
    page = getattr(window, PAGE_ATTR, None)
    if isinstance(page, ReplayWindow):
        return page
    page = ReplayWindow(window.theme)
    setattr(window, PAGE_ATTR, page)
    window.add_mode(MODE, page)
    page.statusMessage.connect(window.show_message)
    dialogs = getattr(window, "dialogs", None)
    if dialogs is not None:  # one place decides how the user is told (quiet when headless)
        page.warn = dialogs.error
    page.openSceneInEditor.connect(lambda scene: open_scene_copy(window, scene))
    _build_menu(window, page)
    settings = getattr(window, "settings", None)
    if settings is not None:
        page.restore_layout(settings)  # docks where the user left them last time
    app = QApplication.instance()
    if app is not None:
        app.aboutToQuit.connect(page.close_tape)
        if settings is not None:
            app.aboutToQuit.connect(lambda: page.save_layout(settings))
    modes = getattr(window, "modes", None)
    if modes is not None:
        modes.currentChanged.connect(lambda _i: _sync_enabled(window, page))
    # Opening a scene file beside the tape is checked against it; saving edits is not (an
    # edited scene differs from the tape's on purpose).
    opened = getattr(window, "sceneOpened", None)
    if opened is not None:
        opened.connect(lambda _path: _on_document_path(window))
    theme_action = getattr(window, "actions_by_id", {}).get("view.dark")
    if theme_action is not None:
        theme_action.toggled.connect(lambda dark: page.set_theme("dark" if dark else "light"))
    return page


def _build_menu(window: Any, page: ReplayWindow) -> None:
    menu = QMenu("&Replay", window)
    show = menu.addAction("Show Replay")
    show.triggered.connect(lambda _c=False: window.set_mode(MODE))
    menu.addSeparator()
    for action in page.replay_menu_actions():
        if action is None:
            menu.addSeparator()
        else:
            menu.addAction(action)
    clip = _clip_action(window, page)
    if clip is not None:
        menu.addSeparator()
        menu.addAction(clip)
    window.menuBar().addMenu(menu)
    page.replay_menu = menu


def _clip_action(window: Any, page: ReplayWindow):
    """'Export Clip…': the clip and still dialog at the current episode and time."""
    from PySide6.QtGui import QAction

    action = QAction("Export Clip…", page)

    def run() -> None:
        from arena_studio.app.clip_dialog import open_clip_dialog  # lazy: loaded when used

        if page.session is None or page.prepared is None:
            return
        page.clock.pause()
        dialog = open_clip_dialog(
            page, page.session.tape, page.prepared.episode.index, page.clock.time
        )
        dialog.exec()

    action.triggered.connect(lambda _c=False: run())
    return action


def _sync_enabled(window: Any, page: ReplayWindow) -> None:
    """Playback keys work only while the replay page is shown (the editor owns them else)."""
    shown = window.modes.currentWidget() is page
    page.set_actions_enabled(shown and page.session is not None)
    findings = getattr(window, "docks", {}).get("findings")
    if findings is not None:  # the editor's findings are about the edited scene, not the tape
        findings.setVisible(not shown)
    if not shown:
        page.clock.pause()


def open_tape_in_window(window: Any, path: Path, show: bool = True) -> bool:
    """Open ``path`` in the replay page; ``show``: switch to it and say so in the status bar
    (else the page on screen stays, and a scene open in the editor is checked against it)."""
    page = replay_page(window)
    try:
        page.open_tape(path)
    except (ArenaError, OSError, ValueError) as exc:
        window.dialogs.error("Cannot open tape", f"{exc}\n\nNothing else was changed.")
        return False
    if show:
        window.set_mode(MODE)
    _sync_enabled(window, page)
    if show:
        window.show_message(f"Opened {path.name}: {len(page.session)} episodes")
    elif getattr(window, "sceneOpened", None) is not None:
        _on_document_path(window)  # as if the scene had been opened after the tape
    return True


def open_scene_copy(window: Any, scene: Any) -> None:
    """Give the layout editor an unsaved copy of the tape's scene (the tape stays as it is)."""
    if not window.maybe_keep_changes():
        return
    window.document.reset(scene, None, dirty=True)
    window.set_mode("layout")
    window.canvas.fit_scene()
    window.show_message("Editing a copy of the tape's scene; save it under a new name.")


def _on_document_path(window: Any) -> None:
    """A scene file was opened in the editor while a tape is open: a differing scene is said
    in the status bar (no modal box: opening one's own scene beside a tape is normal); the
    same scene needs no word."""
    page = getattr(window, PAGE_ATTR, None)
    path = getattr(window.document, "path", None)
    if isinstance(page, ReplayWindow) and page.session is not None and path is not None:
        scene = window.document.scene
        key = (str(path), scene.content_hash(), str(page.session.path))
        if key in page.scene_checks_done:  # saving the same file again: said it already
            return
        page.scene_checks_done.add(key)
        if page.scene_matches_tape(scene) is False:
            window.show_message(
                f"Opened {Path(path).name}; it differs from the scene stored in "
                f"{Path(page.session.path).name}, which the replay keeps showing."
            )


def _show_moment(page: ReplayWindow, episode: int | None, seconds: float | None) -> str | None:
    assert page.session is not None
    count = len(page.session)
    if count == 0:
        return "the tape has no episodes"
    index = 0 if episode is None else int(episode)
    if not 0 <= index < count:
        return f"--episode {index}: the tape has episodes 0 to {count - 1}"
    page.last_load_error = None
    page.select_episode(index)
    loaded = page.wait_loaded(60000)
    damage = page.shown_damage
    if damage is not None and damage.episode == index:
        place = f"{damage.place}: " if damage.place else ""
        return (
            f"{page.session.path}: episode {index} is damaged and cannot be shown "
            f"({place}{cap_text(damage.reason)}); the other episodes read normally"
        )
    if not loaded or page.prepared is None or page.prepared.episode.index != index:
        reason = getattr(page, "last_load_error", None) or (
            "still loading after 60 s" if not loaded else "no reason given"
        )
        return f"{page.session.path}: episode {index} did not load: {cap_text(reason)}"
    if seconds is not None:
        ep = page.prepared.episode
        if seconds < 0 or seconds > ep.duration + 1e-9:
            return f"--time {seconds:g}: episode {index} lasts {ep.duration:.2f} s"
        page.clock.seek_time(seconds)
    return None


def show_moment(window: Any, episode: int | None, seconds: float | None) -> str | None:
    """``arena-studio TAPE --episode N --time S`` in a normal window: go there."""
    page = getattr(window, PAGE_ATTR, None)
    if not isinstance(page, ReplayWindow) or page.session is None:
        return "no tape is open"
    return _show_moment(page, episode, seconds)


def prepare_screenshot(window: Any, episode: int | None, seconds: float | None) -> str | None:
    page = getattr(window, PAGE_ATTR, None)
    if not isinstance(page, ReplayWindow) or page.session is None:
        return "no tape is open"
    problem = _show_moment(page, episode, seconds)
    if problem:
        page.close_tape()
        return problem
    page.session.wait_summaries(30000)
    QApplication.processEvents()
    return None
