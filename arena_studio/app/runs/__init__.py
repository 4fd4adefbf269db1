"""Runs: a sweep of tapes (conditions x seeds x steps) as curves, comparisons and a heat map.

The main window calls :func:`open_sweep` for folders; the page is
:class:`.runs_page.RunsPage`.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any


def open_sweep(window: Any, path: str | Path) -> bool:
    """Open the sweep folder ``path`` in the runs page of ``window`` (created on first use)."""
    from arena_studio.app.runs.integration import open_sweep_in_window

    return open_sweep_in_window(window, Path(path))
