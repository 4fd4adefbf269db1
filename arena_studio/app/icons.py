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


def _pixmap(name: str, color: str, size: int) -> QPixmap:
    data = QByteArray(_svg_text(name).replace("currentColor", color).encode("utf-8"))
    renderer = QSvgRenderer(data)
    pm = QPixmap(size, size)
    pm.fill(Qt.GlobalColor.transparent)
    painter = QPainter(pm)
    renderer.render(painter, QRectF(0, 0, size, size))
    painter.end()
    return pm


def themed_icon(name: str, color: str, disabled_color: str) -> QIcon:
    icon = QIcon()
    for size in (16, 24, 32, 48):
        icon.addPixmap(_pixmap(name, color, size), QIcon.Mode.Normal)
        icon.addPixmap(_pixmap(name, disabled_color, size), QIcon.Mode.Disabled)
    return icon
