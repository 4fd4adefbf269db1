"""Clicking an agent's row in the canvas legend focuses that agent, as clicking its body does;
clicking the row again clears it, and the focused row is marked in the selection colour.

Row rectangles come from the legend's own layout (the rows the painter drew, or the compact
legend's chips), never from pixel constants. The mark is read back from the grabbed canvas
and compared with the theme's palette file (resources/palettes/light.json).
"""

from __future__ import annotations

import json
from pathlib import Path

from PySide6.QtCore import QPoint, Qt

from .test_replay_compare_small import compare_at_1280
from .test_replay_window import open_window, written_tape  # noqa: F401  (fixture)

REPO = Path(__file__).resolve().parents[2]


def _rgb(hexcode: str) -> tuple[int, int, int]:
    return tuple(int(hexcode[i : i + 2], 16) for i in (1, 3, 5))  # type: ignore[return-value]


def _marked_pixels(canvas, rect, colour, fill) -> int:
    """Pixels along the row's top edge nearer ``colour`` than the legend's ``fill``."""
    img = canvas.viewport().grab().toImage()

    def dist(a, b) -> int:
        return sum((x - y) ** 2 for x, y in zip(a, b, strict=True))

    y0 = int(rect.top())
    count = 0
    for y in range(y0, y0 + 3):
        for x in range(int(rect.left()) + 4, int(rect.right()) - 4):
            c = img.pixelColor(x, y).getRgb()[:3]
            count += dist(c, colour) < dist(c, fill)
    return count


def test_clicking_a_legend_row_focuses_that_agent(qtbot, written_tape):  # noqa: F811
    palette = json.loads((REPO / "resources/palettes/light.json").read_text())["colors"]
    selection, fill = _rgb(palette["selection"]), _rgb(palette["room_fill"])
    w = open_window(qtbot, written_tape)
    w.resize(1600, 900)  # a wide canvas: the full legend
    qtbot.waitUntil(lambda: w.canvas.viewport().width() >= 520, timeout=5000)
    assert w.canvas.legend_place().kind == "full"
    rows = dict(w.canvas.legend_agent_rows())
    assert sorted(rows) == list(range(w.prepared.episode.agent_count))
    row = rows[1]
    before = _marked_pixels(w.canvas, row, selection, fill)
    qtbot.mouseClick(w.canvas.viewport(), Qt.MouseButton.LeftButton, pos=row.center().toPoint())
    assert w.canvas.options.focus == 1
    assert (
        _marked_pixels(w.canvas, row, selection, fill) > before + row.width() / 2
    )  # the row shows it
    # another row moves the focus; the focused row again clears it
    qtbot.mouseClick(w.canvas.viewport(), Qt.MouseButton.LeftButton, pos=rows[0].center().toPoint())
    assert w.canvas.options.focus == 0
    qtbot.mouseClick(w.canvas.viewport(), Qt.MouseButton.LeftButton, pos=rows[0].center().toPoint())
    assert w.canvas.options.focus is None
    # a click on the legend beside every row (its title) changes nothing
    legend = w.canvas.legend_rect()
    title = QPoint(int(legend.center().x()), int(legend.top()) + 3)
    assert w.canvas.legend_agent_at(title.toPointF()) is None
    qtbot.mouseClick(w.canvas.viewport(), Qt.MouseButton.LeftButton, pos=title)
    assert w.canvas.options.focus is None
    w.close()


def test_compact_legend_rows_focus_in_both_panes(make_window, qtbot):
    _win, page = compare_at_1280(make_window, qtbot)
    for canvas, agent in ((page.canvas_b, 2), (page.canvas, 0)):
        assert canvas.legend_place().kind == "compact"
        rows = dict(canvas.legend_agent_rows())
        at = rows[agent].center().toPoint()
        qtbot.mouseClick(canvas.viewport(), Qt.MouseButton.LeftButton, pos=at)
        assert page.canvas.options.focus == page.canvas_b.options.focus == agent
        qtbot.mouseClick(canvas.viewport(), Qt.MouseButton.LeftButton, pos=at)
        assert page.canvas.options.focus is None and page.canvas_b.options.focus is None


def test_the_legend_box_hides_the_legend_in_both_panes(make_window, qtbot):
    _win, page = compare_at_1280(make_window, qtbot)
    page.view_toolbar.legend_box.setChecked(False)
    qtbot.waitUntil(lambda: page.canvas.legend_rect() is None, timeout=2000)
    assert page.canvas_b.legend_rect() is None
    page.view_toolbar.legend_box.setChecked(True)
    qtbot.waitUntil(lambda: page.canvas_b.legend_rect() is not None, timeout=2000)
