"""Whether a painter may blit pre-drawn pixels: a light module of its own, so that the editor's
first paint (its scale bar) does not load the episode painter and the analysis behind it."""

from __future__ import annotations

from PySide6.QtGui import QPaintEngine, QPainter, QTransform

__all__ = ["blits_exactly"]


def blits_exactly(painter: QPainter) -> bool:
    """True when pre-drawn sprites can stand in for shapes: a raster device (image, widget
    backing store) with no scaling between painter and pixels. Vector output (SVG keeps text
    as text), printers and HiDPI or zoomed painters draw every shape instead."""
    engine = painter.paintEngine()
    return (
        engine is not None
        and engine.type() == QPaintEngine.Type.Raster
        and painter.deviceTransform().type() == QTransform.TransformationType.TxNone
    )
