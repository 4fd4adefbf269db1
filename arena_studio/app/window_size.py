"""The first window size: from the screen's available area, never larger than it.

A fixed 1400x900 window on a 1280x800 screen put the legend, the time readout, the plots and
the status bar off screen. The window asks for its preferred size, shrunk to leave a margin
inside the area the desktop leaves free (panels and task bars excluded).
"""

from __future__ import annotations

from PySide6.QtCore import QRect, QSize

#: the smallest size the window prefers (what it gets with no screen to measure)
PREFERRED = QSize(1400, 900)
#: part of a large screen's available area the first window takes (room for other windows)
ROOMY = 0.85
#: part of the available area the first window may take at most
SHARE = 0.96


def first_size(available: QRect | None, preferred: QSize = PREFERRED) -> QSize:
    """``ROOMY`` of ``available`` but at least ``preferred``, shrunk into ``SHARE`` of it
    (None: no screen, ``preferred``)."""
    if available is None or available.isEmpty():
        return QSize(preferred)
    w = max(preferred.width(), int(available.width() * ROOMY))
    h = max(preferred.height(), int(available.height() * ROOMY))
    w = min(w, int(available.width() * SHARE))
    h = min(h, int(available.height() * SHARE))
    return QSize(max(w, 640), max(h, 480))


def place_on_screen(window: object) -> None:
    """Size a new top-level window to its screen's available area, centred on it."""
    from PySide6.QtWidgets import QWidget

    assert isinstance(window, QWidget)
    screen = window.screen()
    available = screen.availableGeometry() if screen is not None else None
    size = first_size(available)
    window.resize(size)
    if available is not None and not available.isEmpty():
        window.move(
            available.x() + (available.width() - size.width()) // 2,
            available.y() + (available.height() - size.height()) // 2,
        )
