"""The first window fits the screen's available area (a 1280x800 screen minus its panel).

Reference: Qt's QRect geometry (QRect.contains) for "inside the available area".
"""

from __future__ import annotations

from PySide6.QtCore import QRect, QSize

from arena_studio.app.window_size import PREFERRED, first_size


def test_small_screen_gets_a_window_inside_its_free_area():
    available = QRect(0, 27, 1280, 773)  # 1280x800 with a 27 px top panel
    size = first_size(available)
    assert QRect(available.topLeft(), size).intersected(available).size() == size
    assert size.width() <= 1280 and size.height() <= 773


def test_large_screens_get_most_of_their_area():
    # 85 % of 1920x1080 (2 px of rounding) and of 2560x1440, never under the preferred size
    assert first_size(QRect(0, 0, 1920, 1080)) == QSize(1632, 918)
    assert first_size(QRect(0, 0, 2560, 1440)) == QSize(2176, 1224)
    assert first_size(QRect(0, 0, 1500, 1000)) == PREFERRED
    assert first_size(QRect(0, 0, 1440, 900)) == QSize(1382, 864)  # 96 % caps it
    assert first_size(None) == PREFERRED


def test_new_main_window_fits_its_screen(qtbot, tmp_path):
    from PySide6.QtCore import QSettings

    from arena_studio.app.main_window import MainWindow

    from .conftest import FakeDialogs

    settings = QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat)
    w = MainWindow(settings=settings, recovery_dir=tmp_path / "r", dialogs=FakeDialogs())
    qtbot.addWidget(w)
    available = w.screen().availableGeometry()  # the offscreen platform's 800x800 screen
    want = first_size(available).expandedTo(w.minimumSizeHint())  # Qt keeps the minimum
    assert w.size() == want
    assert w.size() != QSize(1400, 900)
    w.document.undo_stack.setClean()
    w.close()
    w.checks.shutdown()
