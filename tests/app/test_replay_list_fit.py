"""The episode list at a 1280x800 window: every column up to Aligned is visible without
scrolling sideways, and short headers carry their full meaning as tooltips.

Fit is measured on the laid-out widgets (Qt's own header geometry), not on numbers the code
computes, so a wider font or a narrower dock shows up here (common practice, no source).
"""

from __future__ import annotations

from PySide6.QtCore import Qt

from arena_studio.app.replay.episode_list import COL, COLUMNS, HEADER_TIPS

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
