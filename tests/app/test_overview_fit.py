"""Overview cells never cut their text: the font shrinks until every line fits whole.

Reference: Qt's own text measurement (QFontMetricsF at the size the painter used).
"""

from __future__ import annotations

import pytest
from PySide6.QtCore import QRectF, Qt
from PySide6.QtGui import QFont, QFontMetricsF, QImage, QPainter

from arena_studio.app.replay.batch_view import fit_text


@pytest.mark.parametrize(
    ("w", "h", "text"), [(30, 14, "100%"), (26, 28, "100%\n20/20"), (200, 12, "0%")]
)
def test_cell_text_fits_its_cell(qapp, w, h, text):
    img = QImage(300, 100, QImage.Format.Format_ARGB32)
    p = QPainter(img)
    p.setFont(QFont("DejaVu Sans", 10))
    size = fit_text(p, QRectF(0, 0, w, h), text, Qt.AlignmentFlag.AlignCenter)
    p.end()
    font = QFont("DejaVu Sans")
    font.setPointSizeF(size)
    metrics = QFontMetricsF(font)
    lines = text.split("\n")
    assert max(metrics.horizontalAdvance(line) for line in lines) <= w
    assert metrics.height() * len(lines) <= h + 1


@pytest.mark.parametrize("width", [250, 320, 600])
def test_every_goal_cell_is_inside_a_narrow_grid(qtbot, width):
    """Seven landmarks in a grid a 1280 screen leaves narrow: row names give up width, so
    no column is cut. Reference: QRectF.contains (Qt geometry) of each cell in the widget."""
    from arena_studio.app.replay.batch_stats import BatchStats, GoalStat
    from arena_studio.app.replay.batch_view import GoalGrid
    from arena_studio.core.resources import demo_path
    from arena_studio.core.scene.model import load_scene

    scene = load_scene(demo_path("parking-level.scene.json"))
    n = len(scene.landmarks)
    assert n == 7
    pairs = {(i,) if i == j else (i, j) for i in range(n) for j in (i, n - 1)}
    goals = tuple(GoalStat(goal, "", 4, 2) for goal in sorted(pairs))
    stats = BatchStats(8, 8, 4, 0.5, 0.5, (2, 4), (2, 4), goals)
    grid = GoalGrid()
    qtbot.addWidget(grid)
    grid.resize(width, 260)
    grid.set_data(scene, stats)
    grid.grab()  # paints, laying out the cells
    frame = QRectF(grid.rect())
    assert grid.cells() and all(frame.contains(rect) for rect, _stat in grid.cells())
