"""Our monochrome SVG icons (resources/icons), recoloured to the theme's text colour."""

from __future__ import annotations

from functools import cache

from PySide6.QtCore import QByteArray, QRectF, Qt
from PySide6.QtGui import QIcon, QPainter, QPixmap
from PySide6.QtSvg import QSvgRenderer

from arena_studio.core.resources import resource_path


@cache
def _svg_text(name: str) -> str:
    return resource_path("icons", f"{name}.svg").read_text(encoding="utf-8")


SIZES = (16, 24, 32, 48)


def _pixmaps(name: str, color: str) -> list[QPixmap]:
    """The icon in every size of :data:`SIZES`; the SVG is parsed once for all of them (the
    window makes ~20 icons while it starts)."""
    data = QByteArray(_svg_text(name).replace("currentColor", color).encode("utf-8"))
    renderer = QSvgRenderer(data)
    out = []
    for size in SIZES:
        pm = QPixmap(size, size)
        pm.fill(Qt.GlobalColor.transparent)
        painter = QPainter(pm)
        renderer.render(painter, QRectF(0, 0, size, size))
        painter.end()
        out.append(pm)
    return out


def themed_icon(name: str, color: str, disabled_color: str) -> QIcon:
    icon = QIcon()
    for normal, disabled in zip(_pixmaps(name, color), _pixmaps(name, disabled_color), strict=True):
        icon.addPixmap(normal, QIcon.Mode.Normal)
        icon.addPixmap(disabled, QIcon.Mode.Disabled)
    return icon
