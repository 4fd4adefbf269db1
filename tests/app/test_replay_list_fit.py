"""The episode list at a 1280x800 window: every column, Diagnosis included, is visible
without scrolling sideways, and short headers carry their full meaning as tooltips.

Fit is measured on the laid-out widgets (Qt's own header geometry), not on numbers the code
computes, so a wider font or a narrower dock shows up here (common practice, no source).
"""

from __future__ import annotations

from PySide6.QtCore import QRect, Qt
from PySide6.QtGui import QFontMetrics

from arena_studio.app.replay.episode_list import COL, COLUMNS, HEADER_TIPS
from arena_studio.app.window_size import first_size

from .test_replay_compare_small import GREEDY
from .test_replay_window import open_window, written_tape  # noqa: F401 (fixture)


def test_important_columns_fit_a_1280_window(qtbot, written_tape):  # noqa: F811
    w = open_window(qtbot, written_tape)
    qtbot.waitUntil(lambda: w.episode_list.table.viewport().width() > 200, timeout=5000)
    table = w.episode_list.table
    header = table.horizontalHeader()
    right = header.sectionViewportPosition(COL["aligned"]) + header.sectionSize(COL["aligned"])
    assert table.horizontalScrollBar().value() == 0
    assert right <= table.viewport().width(), (right, table.viewport().width())
    # each header's text fits its section (bold header fonts included)
    for key in ("index", "kind", "success", "time_to_success", "par_ratio", "aligned"):
        title = COLUMNS[COL[key]][1]
        assert header.fontMetrics().horizontalAdvance(title) < header.sectionSize(COL[key])


def test_headers_and_compact_kind_keep_the_full_meaning(qtbot, written_tape):  # noqa: F811
    w = open_window(qtbot, written_tape)
    model = w.episode_list.model
    for i, (key, _title) in enumerate(COLUMNS):
        tip = model.headerData(i, Qt.Orientation.Horizontal, Qt.ItemDataRole.ToolTipRole)
        assert tip == HEADER_TIPS[key] and len(tip) > 10
    kinds = {model.data(model.index(r, COL["kind"])) for r in range(model.rowCount())}
    assert kinds <= {"coop", "indiv", "-"} and kinds - {"-"}


def test_every_column_shows_in_the_window_a_1280x800_screen_opens(make_window, qtbot):
    """Inside the main window at the size a 1280x800 screen gives it (app.window_size), the
    list shows every column, Diagnosis included, each header whole, without scrolling."""
    win = make_window()
    win.resize(first_size(QRect(0, 0, 1280, 800)))
    assert win.open_path(GREEDY)
    page = win.replay_page
    assert page.wait_loaded() and page.session.wait_summaries(60000)
    qtbot.waitUntil(lambda: page.session.summaries_done, timeout=10000)
    qtbot.wait(100)  # the first-show dock sizing runs from the event loop
    table = page.episode_list.table
    header = table.horizontalHeader()
    assert table.horizontalScrollBar().maximum() == 0  # nothing off to the side
    for i, (key, title) in enumerate(COLUMNS):
        left = header.sectionViewportPosition(i)
        assert left >= 0 and left + header.sectionSize(i) <= table.viewport().width(), key
        # the bold title fits its section with the style's margins on both sides
        bold = header.font()
        bold.setBold(True)
        assert QFontMetrics(bold).horizontalAdvance(title) + 8 <= header.sectionSize(i), key
    # the Diagnosis cells show their word whole (the full text is the tooltip)
    model, diag = page.episode_list.proxy, COL["diagnosis"]
    cells = [model.index(r, diag) for r in range(model.rowCount())]
    words = [c.data() for c in cells if c.data() not in ("-", "")]
    assert words, "the demo tape has failures"
    for c in cells:
        if c.data() not in ("-", ""):
            assert table.fontMetrics().horizontalAdvance(c.data()) < header.sectionSize(diag)
            assert len(c.data(Qt.ItemDataRole.ToolTipRole)) > len(c.data())  # the full text
