"""The selected entry of an open drop-down list is readable in both themes.

Reference: WCAG 2.1 contrast ratio (success criterion 1.4.3, minimum 4.5:1 for normal text),
with relative luminance from sRGB as WCAG 2.1 defines it: the ratio is measured between
the selected row's background and its text as Qt actually paints them.
"""

from __future__ import annotations

from collections import Counter

import pytest
from PySide6.QtWidgets import QApplication, QComboBox

from arena_studio.app.appearance import apply_theme
from arena_studio.render.theme import load_theme


def _luminance(rgb: tuple[int, int, int]) -> float:
    def lin(c: float) -> float:  # WCAG 2.1 relative luminance (sRGB)
        c /= 255.0
        return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4

    r, g, b = rgb
    return 0.2126 * lin(r) + 0.7152 * lin(g) + 0.0722 * lin(b)


def contrast(a: tuple[int, int, int], b: tuple[int, int, int]) -> float:
    la, lb = sorted((_luminance(a), _luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def test_contrast_formula_matches_the_standard_extremes():
    # WCAG 2.1: black on white is 21:1, a colour on itself 1:1 (from the definition)
    assert contrast((0, 0, 0), (255, 255, 255)) == pytest.approx(21.0)
    assert contrast((119, 119, 119), (119, 119, 119)) == pytest.approx(1.0)


@pytest.mark.parametrize("theme", ["light", "dark"])
def test_selected_entry_of_an_open_drop_down_is_readable(qtbot, theme):
    app = QApplication.instance()
    old_sheet, old_palette, old_style = app.styleSheet(), app.palette(), app.style().name()
    try:
        apply_theme(app, load_theme(theme))
        box = QComboBox()
        qtbot.addWidget(box)
        box.addItems(["All episodes", "Failed cooperative", "Successes only"])
        box.setCurrentIndex(1)
        box.show()
        box.showPopup()
        view = box.view()
        qtbot.waitUntil(view.isVisible)
        view.setCurrentIndex(box.model().index(1, 0))
        rect = view.visualRect(view.currentIndex())
        image = view.viewport().grab(rect).toImage()
        pixels = [
            image.pixelColor(x, y).getRgb()[:3]
            for y in range(image.height())
            for x in range(image.width())
        ]
        background = Counter(pixels).most_common(1)[0][0]
        text = max(pixels, key=lambda p: contrast(p, background))
        assert contrast(text, background) >= 4.5, (theme, background, text)
        box.hidePopup()
    finally:
        app.setStyleSheet(old_sheet)
        app.setPalette(old_palette)
        app.setStyle(old_style)
