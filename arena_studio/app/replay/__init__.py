"""Replay viewer: step through recorded episodes of a tape with overlays, events and plots.

Widgets here are standalone (each testable with hand-made :class:`Episode` objects) and are
put together by :class:`.replay_window.ReplayWindow`, the replay page of the main window.
The main window calls :func:`open_tape` for ``.tape`` files; ``--screenshot`` calls
:func:`prepare_screenshot`.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any


def open_tape(window: Any, path: str | Path, show: bool = True) -> bool:
    """Open ``path`` in the replay page of ``window`` (created on first use); with ``show``
    false the page is filled but the page on screen stays."""
    from arena_studio.app.replay.integration import open_tape_in_window

    return open_tape_in_window(window, Path(path), show)


def prepare_screenshot(window: Any, episode: int | None, seconds: float | None) -> str | None:
    """Show episode ``episode`` at ``seconds``; returns an error line, or None when ready."""
    from arena_studio.app.replay.integration import prepare_screenshot as prepare

    return prepare(window, episode, seconds)


def show_moment(window: Any, episode: int | None, seconds: float | None) -> str | None:
    """Go to episode ``episode`` at ``seconds`` in the open tape; an error line, or None."""
    from arena_studio.app.replay.integration import show_moment as show

    return show(window, episode, seconds)
