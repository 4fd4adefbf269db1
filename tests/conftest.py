"""Shared fixtures. GUI tests run on Qt's offscreen platform; nothing needs a display."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

REPO = Path(__file__).resolve().parent.parent
SCENES = REPO / "scenes"
DATA = Path(__file__).resolve().parent / "data"


@pytest.fixture
def demo_scene_paths() -> list[Path]:
    return sorted(SCENES.glob("*.scene.json"))
