"""The fuzz tests render in-process: make pytest-qt's QApplication first, so a command's own
``QGuiApplication`` never takes its place for the GUI tests that run later."""

from __future__ import annotations

import pytest


@pytest.fixture(autouse=True, scope="session")
def _qt_application(qapp):
    return qapp
