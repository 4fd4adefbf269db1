"""The scene's underlay image drawn under the layout editor's canvas.

The image item sits below the scene layer; while an underlay shows, the layer paints with a
see-through floor (:func:`see_through`) so the map is visible under rooms and obstacles.
A missing or unreadable image is told once in the status bar and drawn as nothing.
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path
from typing import Any

from PySide6.QtCore import QObject, QRectF, QTimer
from PySide6.QtGui import QImage, QImageReader, QPainter, QTransform
from PySide6.QtWidgets import QGraphicsItem, QStyleOptionGraphicsItem, QWidget

from arena_studio.core.robot.underlay import image_path
from arena_studio.core.scene import Underlay
from arena_studio.render.theme import Theme

#: floor and obstacle fills while an underlay shows (alpha, as #RRGGBBAA)
FLOOR_ALPHA, OBSTACLE_ALPHA = "55", "99"


def see_through(theme: Theme) -> Theme:
    """The theme with translucent room and obstacle fills (its own name, for caches)."""
    if theme.name.endswith("+underlay"):
        return theme
    colors = dict(theme.colors)
    colors["room_fill"] = colors["room_fill"][:7] + FLOOR_ALPHA
    colors["obstacle_fill"] = colors["obstacle_fill"][:7] + OBSTACLE_ALPHA
    return dataclasses.replace(theme, name=f"{theme.name}+underlay", colors=colors)


def pixel_to_world(underlay: Underlay, width: float, height: float) -> QTransform:
    """Image pixels (x right, y down, row 0 on top) to metres (y up), as the scene states:
    lower-left corner at ``origin``, ``scale`` metres a pixel, turned ``rotation``."""
    c, s, k = math.cos(underlay.rotation), math.sin(underlay.rotation), underlay.scale
    ox, oy = underlay.origin
    # world = origin + R (k u, k (height - v))
    return QTransform(c * k, s * k, s * k, -c * k, ox - s * k * height, oy + c * k * height)


def load_image(path: Path) -> QImage | Any | None:
    """A QImage, a QSvgRenderer for ``.svg``, or None when it cannot be read."""
    if path.suffix.lower() == ".svg":
        from PySide6.QtSvg import QSvgRenderer

        renderer = QSvgRenderer(str(path))
        return renderer if renderer.isValid() else None
    reader = QImageReader(str(path))
    image = reader.read()
    return None if image.isNull() else image


class UnderlayItem(QGraphicsItem):
    """Draws one image (raster or SVG) in world coordinates, under the scene layer."""

    def __init__(self) -> None:
        super().__init__()
        self.image: QImage | Any | None = None
        self.underlay: Underlay | None = None
        self.setZValue(5)

    def size(self) -> tuple[float, float]:
        if self.image is None:
            return (0.0, 0.0)
        if isinstance(self.image, QImage):
            return (float(self.image.width()), float(self.image.height()))
        box = self.image.viewBoxF()
        return (box.width(), box.height())

    def show(self, underlay: Underlay | None, image: QImage | Any | None) -> None:
        self.prepareGeometryChange()
        self.underlay, self.image = underlay, image
        if underlay is not None and image is not None:
            w, h = self.size()
            self.setTransform(pixel_to_world(underlay, w, h))
            self.setOpacity(underlay.opacity)
        self.setVisible(underlay is not None and image is not None)
        self.update()

    def boundingRect(self) -> QRectF:
        w, h = self.size()
        return QRectF(0.0, 0.0, w, h)

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        if self.image is None:
            return
        painter.setRenderHint(QPainter.RenderHint.SmoothPixmapTransform, False)
        if isinstance(self.image, QImage):
            painter.drawImage(0, 0, self.image)
        else:
            self.image.render(painter, self.boundingRect())


class UnderlayView(QObject):
    """Keeps the canvas's underlay item in step with the document and the theme."""

    def __init__(self, canvas: Any, document: Any, message: Any) -> None:
        super().__init__(canvas)
        self.canvas, self.document, self.message = canvas, document, message
        self.item = UnderlayItem()
        canvas.scene().addItem(self.item)
        self._key: tuple[str, float] | None = None
        self._image: QImage | Any | None = None
        self._warned: str | None = None
        self.theme: Theme = canvas.theme
        document.changed.connect(self.refresh)
        document.pathChanged.connect(self.refresh)
        self.refresh()

    def path(self) -> Path | None:
        under = self.document.scene.underlay
        return None if under is None else image_path(under, self.document.path)

    def refresh(self) -> None:
        under = self.document.scene.underlay
        image = self._image_for(self.path()) if under is not None else None
        self.item.show(under, self._themed(image))
        self.canvas.layer.theme = see_through(self.theme) if image is not None else self.theme
        self.canvas.layer.update()
        self.canvas.viewport().update()

    def _themed(self, image: QImage | Any | None) -> QImage | Any | None:
        """A grey map on the dark theme is drawn inverted: dark floor, light walls, as the
        theme draws them (colour plans and SVGs are left as they are)."""
        if not (isinstance(image, QImage) and image.isGrayscale()):
            return image
        if not self.theme.name.startswith("dark"):
            return image
        inverted = image.convertToFormat(QImage.Format.Format_Grayscale8)
        inverted.invertPixels()
        return inverted

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.refresh()

    def _image_for(self, path: Path | None) -> QImage | Any | None:
        if path is None:
            return None
        try:
            key = (str(path), path.stat().st_mtime)
        except OSError:
            key = None
        if key is not None and key == self._key:
            return self._image
        image = load_image(path) if key is not None else None
        self._key, self._image = key, image
        if image is None and self._warned != str(path):
            self._warned = str(path)
            text = f"Underlay image not found or unreadable: {path} (the scene is fine)"
            QTimer.singleShot(0, lambda: self.message(text))  # after "Opened ..." says its part
        return image


__all__ = ["UnderlayItem", "UnderlayView", "load_image", "pixel_to_world", "see_through"]
