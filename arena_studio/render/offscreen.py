"""A Qt application for painting without a window (batch rendering from the command line).

Fonts need a QGuiApplication; batch rendering never needs a display, so unless the caller
chose a platform, Qt's offscreen platform is used (works on machines with no display).
"""

from __future__ import annotations

import os

from PySide6.QtCore import QCoreApplication
from PySide6.QtGui import QGuiApplication


def ensure_gui_app() -> QCoreApplication:
    app = QGuiApplication.instance()
    if app is None:
        os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
        app = QGuiApplication(["arena-studio"])
    return app
