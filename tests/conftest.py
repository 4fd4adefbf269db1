"""Shared fixtures. GUI tests run on Qt's offscreen platform; nothing needs a display."""

from __future__ import annotations

import gc
import os
from pathlib import Path

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

REPO = Path(__file__).resolve().parent.parent
SCENES = REPO / "scenes"
DATA = Path(__file__).resolve().parent / "data"


@pytest.fixture(scope="session", autouse=True)
def _collect_on_the_main_thread():
    """As in the app (arena_studio.app.gui_gc): no automatic cycle collection, which would
    run in whatever worker thread allocates and could destroy a closed window's Qt objects
    there; the main thread collects between tests instead."""
    was = gc.isenabled()
    gc.disable()
    yield
    if was:
        gc.enable()


@pytest.fixture(autouse=True)
def _collect_after_each_test():
    yield
    from arena_studio.app.gui_gc import collect_due

    collect_due()


@pytest.fixture
def demo_scene_paths() -> list[Path]:
    return sorted(SCENES.glob("*.scene.json"))
