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
