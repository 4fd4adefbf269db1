"""How the runs page plugs into the main window: page, mode switching, opening a tape."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from arena_studio.app.runs.runs_page import RunsPage

PAGE_ATTR = "runs_page"
MODE = "runs"


def runs_page(window: Any) -> RunsPage:
    """The window's runs page, built on first use."""
    page = getattr(window, PAGE_ATTR, None)
    if isinstance(page, RunsPage):
        return page
    page = RunsPage(window.theme)
    setattr(window, PAGE_ATTR, page)
    window.add_mode(MODE, page)
    page.statusMessage.connect(window.show_message)
    page.openTape.connect(lambda path, failed: open_run_tape(window, Path(path), failed))
    page.export_button.clicked.connect(lambda: _export(window, page))
    theme_action = getattr(window, "actions_by_id", {}).get("view.dark")
    if theme_action is not None:
        theme_action.toggled.connect(lambda dark: page.set_theme("dark" if dark else "light"))
    return page


def open_sweep_in_window(window: Any, path: Path) -> bool:
    page = runs_page(window)
    page.open_folder(path)
    window.set_mode(MODE)
    return True


def open_run_tape(window: Any, path: Path, failed: list[int]) -> bool:
    """Open a tape of the sweep in the replay, listing its failed cooperative episodes
    first (the first of them selected)."""
    from arena_studio.app.replay import open_tape

    if not open_tape(window, path):
        return False
    page = getattr(window, "replay_page", None)
    if page is not None and failed:
        page.episode_list.set_preset("failed_cooperative")
        page.select_episode(int(failed[0]))
    return True


def _export(window: Any, page: RunsPage) -> None:
    from PySide6.QtWidgets import QFileDialog

    name, _ = QFileDialog.getSaveFileName(
        page, "Export Figure", str(Path.cwd() / "runs.svg"), "SVG (*.svg);;PNG (*.png);;PDF (*.pdf)"
    )
    if not name:
        return
    try:
        page.export_figure(name)
    except (OSError, ImportError, ValueError) as exc:
        window.dialogs.error("Cannot export figure", str(exc))
        return
    window.show_message(f"Figure written to {name}")
