"""Small drawing helpers shared by the painters: fonts, shapely -> QPainterPath, labels.

Kept apart so the scene painter and the episode painter draw text and outlines the same way
(one font family, one label backdrop), which is what makes a still look like the screen.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFont, QFontMetricsF, QPainter, QPainterPath, QPen, QPolygonF
from shapely.geometry import MultiPolygon, Polygon
from shapely.geometry.base import BaseGeometry

from arena_studio.render.view import ViewTransform

#: one family everywhere; DejaVu Sans ships with most Linux systems and Qt falls back cleanly
FONT_FAMILY = "DejaVu Sans"


def font(pixel_size: float, bold: bool = False) -> QFont:
    f = QFont(FONT_FAMILY)
    f.setPixelSize(max(6, round(pixel_size)))
    f.setBold(bold)
    f.setHintingPreference(QFont.HintingPreference.PreferNoHinting)
    return f


_PENS: dict[tuple[Any, ...], QPen] = {}


def cached_pen(key: tuple[Any, ...], make: Callable[[], QPen]) -> QPen:
    """The pen ``make()`` builds, built once per ``key`` (start keys with the caller's name).

    A frame sets dozens of pens, and a QPen with a parsed theme colour costs a few
    microseconds to build, which a 2-agent frame's budget notices."""
    pen = _PENS.get(key)
    if pen is None:
        if len(_PENS) > 4096:
            _PENS.clear()
        pen = _PENS[key] = make()
    return pen


def polygon_f(points: np.ndarray) -> QPolygonF:
    """(N, 2) pixel coordinates -> QPolygonF."""
    return QPolygonF([QPointF(float(x), float(y)) for x, y in points])


def ring_path(coords: np.ndarray, view: ViewTransform, path: QPainterPath) -> None:
    px = view.map_array(np.asarray(coords, dtype=np.float64))
    if len(px) < 2:
        return
    path.addPolygon(polygon_f(px))
    path.closeSubpath()


def geometry_path(geom: BaseGeometry, view: ViewTransform) -> QPainterPath:
    """Filled path (odd-even) of a (multi)polygon with holes, in pixels."""
    path = QPainterPath()
    path.setFillRule(Qt.FillRule.OddEvenFill)
    for g in _polygons(geom):
        ring_path(np.asarray(g.exterior.coords), view, path)
        for hole in g.interiors:
            ring_path(np.asarray(hole.coords), view, path)
    return path


def _polygons(geom: BaseGeometry) -> list[Polygon]:
    if geom.is_empty:
        return []
    if isinstance(geom, Polygon):
        return [geom]
    if isinstance(geom, MultiPolygon):
        return list(geom.geoms)
    out: list[Polygon] = []
    for g in getattr(geom, "geoms", []):
        out.extend(_polygons(g))
    return out


def label(
    painter: QPainter,
    text: str,
    anchor: QPointF,
    qfont: QFont,
    color: QColor,
    backdrop: QColor | None,
    align: str = "left",
    pad: float = 2.0,
) -> QRectF:
    """Draw ``text`` with its baseline box anchored at ``anchor`` (left/centre/right of it).

    A translucent backdrop keeps labels readable over walls and trails while the text stays a
    text element in SVG output (no outlined glyph paths). Returns the box drawn.
    """
    metrics = QFontMetricsF(qfont)
    w = metrics.horizontalAdvance(text)
    h = metrics.height()
    if align == "center":
        x = anchor.x() - w / 2
    elif align == "right":
        x = anchor.x() - w
    else:
        x = anchor.x()
    box = QRectF(x - pad, anchor.y() - h / 2 - pad, w + 2 * pad, h + 2 * pad)
    painter.setFont(qfont)
    if backdrop is not None:
        painter.setPen(Qt.PenStyle.NoPen)
        painter.setBrush(backdrop)
        painter.drawRoundedRect(box, 3.0, 3.0)
    painter.setPen(color)
    painter.drawText(QPointF(x, anchor.y() - h / 2 + metrics.ascent()), text)
    return box


def nice_step(target: float) -> float:
    """Largest 1, 2 or 5 x 10^k not above ``target`` (scale bars, grid spacing)."""
    if target <= 0:
        return 1.0
    k = np.floor(np.log10(target))
    base = 10.0**k
    for m in (5.0, 2.0, 1.0):
        if m * base <= target:
            return float(m * base)
    return float(base)
