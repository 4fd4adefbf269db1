"""SceneCanvas: a metric view of a scene (metres, y up, aspect locked) with grid and scale bar.

Pan with the middle or right button, or hold Space and drag; the wheel zooms around the
cursor; :meth:`SceneCanvas.fit_scene` frames everything. The canvas itself is read-only: it
shows a scene through :meth:`show_scene`, and the layout editor (``EditorCanvas``) and the
replay viewer add their behaviour and items on top (``canvas.scene()`` is the QGraphicsScene).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from PySide6.QtCore import QPoint, QPointF, QRect, QRectF, Qt, Signal
from PySide6.QtGui import (
    QImage,
    QKeyEvent,
    QMouseEvent,
    QPainter,
    QResizeEvent,
    QTransform,
    QWheelEvent,
)
from PySide6.QtWidgets import QFrame, QGraphicsScene, QGraphicsView, QWidget

from arena_studio.app.scene_items import WORLD, SceneLayer
from arena_studio.core.geometry.regions import bounds
from arena_studio.core.scene.model import Scene
from arena_studio.render.drawing import nice_step
from arena_studio.render.paint_guard import guarded
from arena_studio.render.raster import blits_exactly
from arena_studio.render.scene_painter import paint_scale_bar
from arena_studio.render.theme import Theme
from arena_studio.render.view import ViewTransform

MIN_PPM, MAX_PPM = 0.5, 4000.0  # pixels per metre
EMPTY_VIEW = (0.0, 0.0, 20.0, 12.0)  # metres shown for a new, empty scene
GRID_MIN_PX = 12.0  # smallest on-screen spacing of minor grid lines


class SceneCanvas(QGraphicsView):
    """Metric, y-up view. ``cursorMoved`` reports the pointer in metres."""

    cursorMoved = Signal(float, float)
    cursorLeft = Signal()
    zoomChanged = Signal(float)

    def __init__(self, theme: Theme, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.theme = theme
        self._graphics = QGraphicsScene(self)
        self._graphics.setSceneRect(WORLD)
        self.setScene(self._graphics)
        self.layer = SceneLayer(theme)
        self._graphics.addItem(self.layer)
        self.setFrameShape(QFrame.Shape.NoFrame)
        self.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        self.setRenderHint(QPainter.RenderHint.TextAntialiasing, True)
        self.setViewportUpdateMode(QGraphicsView.ViewportUpdateMode.FullViewportUpdate)
        self.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.setVerticalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.setTransformationAnchor(QGraphicsView.ViewportAnchor.NoAnchor)
        self.setResizeAnchor(QGraphicsView.ViewportAnchor.AnchorViewCenter)
        self.setMouseTracking(True)
        self.setFocusPolicy(Qt.FocusPolicy.StrongFocus)
        self.setTransform(QTransform.fromScale(40.0, -40.0))
        self._pan_from: QPoint | None = None
        self._space = False
        self._fitted_once = False
        self._scale_bar_cache: tuple[tuple[Any, ...], tuple[QPoint, QImage]] | None = None

    # -- content -----------------------------------------------------------------------
    @property
    def scene_value(self) -> Scene:
        return self.layer.scene_value

    def show_scene(self, scene: Scene) -> None:
        self.layer.scene_value = scene
        self.layer.update()
        self.viewport().update()

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.layer.theme = theme
        self.viewport().update()

    # -- view --------------------------------------------------------------------------
    def pixels_per_metre(self) -> float:
        t = self.transform()
        return math.hypot(t.m11(), t.m12())

    def metres_per_pixel(self) -> float:
        return 1.0 / self.pixels_per_metre()

    def grid_step(self) -> float:
        """Minor grid spacing (m), the same rule the shared scene painter draws the grid with
        (render.scene_painter.paint_grid), so snapping lands on the lines the user sees."""
        scale = self.pixels_per_metre()
        minor = nice_step(max(GRID_MIN_PX / scale, 1e-6) * 2.5)
        while minor * scale < GRID_MIN_PX:
            minor *= 2
        return minor

    def fit_scene(self, margin_px: float = 36.0) -> None:
        scene = self.scene_value
        empty = not (scene.rooms or scene.obstacles or scene.landmarks or scene.agents)
        # An empty scene shows a room-sized area to start drawing in, not a 1 m box.
        minx, miny, maxx, maxy = EMPTY_VIEW if empty else bounds(scene)
        w, h = max(maxx - minx, 1.0), max(maxy - miny, 1.0)
        vw = max(self.viewport().width() - 2 * margin_px, 40.0)
        vh = max(self.viewport().height() - 2 * margin_px, 40.0)
        s = min(max(min(vw / w, vh / h), MIN_PPM), MAX_PPM)
        self.setTransform(QTransform.fromScale(s, -s))
        self.centerOn(QPointF((minx + maxx) / 2, (miny + maxy) / 2))
        self.zoomChanged.emit(s)

    def zoom_by(self, factor: float, anchor: QPoint | None = None) -> None:
        """Zoom keeping the world point under ``anchor`` (viewport pixels; default centre)."""
        ppm = self.pixels_per_metre()
        factor = min(max(factor, MIN_PPM / ppm), MAX_PPM / ppm)
        if anchor is None:
            anchor = self.viewport().rect().center()
        fixed = self.mapToScene(anchor)
        self.scale(factor, factor)
        drift = self.mapFromScene(fixed) - anchor
        h, v = self.horizontalScrollBar(), self.verticalScrollBar()
        h.setValue(h.value() + drift.x())
        v.setValue(v.value() + drift.y())
        self.zoomChanged.emit(self.pixels_per_metre())

    def zoom_in(self) -> None:
        self.zoom_by(1.25)

    def zoom_out(self) -> None:
        self.zoom_by(0.8)

    def centre_on(self, xy: tuple[float, float]) -> None:
        self.centerOn(QPointF(*xy))

    def world_at(self, pos: QPointF | QPoint) -> tuple[float, float]:
        p = self.mapToScene(pos.toPoint() if isinstance(pos, QPointF) else pos)
        return (p.x(), p.y())

    # -- drawing -----------------------------------------------------------------------
    def drawBackground(self, painter: QPainter, rect: QRectF | QRect) -> None:
        painter.fillRect(rect, self.theme.qcolor("background"))

    def drawForeground(self, painter: QPainter, rect: QRectF | QRect) -> None:
        """Scale bar in viewport pixels, drawn by the shared scene painter's function.

        It changes only with the zoom, the view size and the theme, yet sits above the items,
        so on a raster device it is drawn once into a small transparent image (aligned to
        whole pixels, hence the same pixels) and blitted each frame after."""
        t = self.viewportTransform()
        view = ViewTransform(math.hypot(t.m11(), t.m12()), t.dx(), t.dy())
        size = (float(self.viewport().width()), float(self.viewport().height()))
        with guarded(painter, "the scale bar", theme=self.theme):
            painter.resetTransform()
            if blits_exactly(painter):
                origin, image = self._scale_bar_image(view, size)
                painter.drawImage(origin, image)
            else:
                painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
                paint_scale_bar(painter, view, self.theme, size)

    def _scale_bar_image(
        self, view: ViewTransform, size: tuple[float, float]
    ) -> tuple[QPoint, QImage]:
        """The scale bar cut out of a transparent view-sized image: the cut is found from the
        pixels painted, so it follows whatever layout the shared painter uses."""
        key = (view.scale, size, self.theme.name)
        if self._scale_bar_cache is not None and self._scale_bar_cache[0] == key:
            return self._scale_bar_cache[1]
        w, h = max(math.ceil(size[0]), 1), max(math.ceil(size[1]), 1)
        full = QImage(w, h, QImage.Format.Format_ARGB32_Premultiplied)
        full.fill(Qt.GlobalColor.transparent)
        p = QPainter(full)
        try:
            p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
            p.setRenderHint(QPainter.RenderHint.TextAntialiasing, True)
            paint_scale_bar(p, view, self.theme, size)
        finally:
            p.end()
        pixels = np.frombuffer(full.constBits(), np.uint32, count=h * full.bytesPerLine() // 4)
        painted = pixels.reshape(h, -1)[:, :w] != 0
        rows, cols = np.flatnonzero(painted.any(axis=1)), np.flatnonzero(painted.any(axis=0))
        if len(rows) == 0:
            cut = (QPoint(0, 0), QImage(1, 1, QImage.Format.Format_ARGB32_Premultiplied))
            cut[1].fill(Qt.GlobalColor.transparent)
        else:
            x0, y0 = int(cols[0]), int(rows[0])
            x1, y1 = int(cols[-1]) + 1, int(rows[-1]) + 1
            cut = (QPoint(x0, y0), full.copy(x0, y0, x1 - x0, y1 - y0))
        self._scale_bar_cache = (key, cut)
        return cut

    # -- input -------------------------------------------------------------------------
    def _starts_pan(self, event: QMouseEvent) -> bool:
        b = event.button()
        return b in (Qt.MouseButton.MiddleButton, Qt.MouseButton.RightButton) or (
            b == Qt.MouseButton.LeftButton and self._space
        )

    def mousePressEvent(self, event: QMouseEvent) -> None:
        if self._starts_pan(event):
            self._pan_from = event.position().toPoint()
            self.viewport().setCursor(Qt.CursorShape.ClosedHandCursor)
            event.accept()
            return
        self.canvas_press(event)

    def mouseMoveEvent(self, event: QMouseEvent) -> None:
        pos = event.position().toPoint()
        if self._pan_from is not None:
            delta = pos - self._pan_from
            self._pan_from = pos
            h, v = self.horizontalScrollBar(), self.verticalScrollBar()
            h.setValue(h.value() - delta.x())
            v.setValue(v.value() - delta.y())
            event.accept()
            return
        x, y = self.world_at(pos)
        self.cursorMoved.emit(x, y)
        self.canvas_move(event)

    def mouseReleaseEvent(self, event: QMouseEvent) -> None:
        if self._pan_from is not None:
            self._pan_from = None
            self.viewport().setCursor(
                Qt.CursorShape.OpenHandCursor if self._space else Qt.CursorShape.ArrowCursor
            )
            event.accept()
            return
        self.canvas_release(event)

    def mouseDoubleClickEvent(self, event: QMouseEvent) -> None:
        if event.button() == Qt.MouseButton.LeftButton and not self._space:
            self.canvas_double_click(event)

    def wheelEvent(self, event: QWheelEvent) -> None:
        steps = event.angleDelta().y() / 120.0
        if steps:
            self.zoom_by(1.2**steps, event.position().toPoint())
        event.accept()

    def keyPressEvent(self, event: QKeyEvent) -> None:
        if event.key() == Qt.Key.Key_Space and not event.isAutoRepeat():
            self._space = True
            self.viewport().setCursor(Qt.CursorShape.OpenHandCursor)
            event.accept()
            return
        super().keyPressEvent(event)

    def keyReleaseEvent(self, event: QKeyEvent) -> None:
        if event.key() == Qt.Key.Key_Space and not event.isAutoRepeat():
            self._space = False
            self.viewport().setCursor(Qt.CursorShape.ArrowCursor)
            event.accept()
            return
        super().keyReleaseEvent(event)

    def leaveEvent(self, event: object) -> None:
        self.cursorLeft.emit()

    def resizeEvent(self, event: QResizeEvent) -> None:
        super().resizeEvent(event)
        if not self._fitted_once and self.viewport().width() > 50:
            self._fitted_once = True
            self.fit_scene()

    # Hooks for subclasses (the editor forwards these to its tools).
    def canvas_press(self, event: QMouseEvent) -> None:
        event.ignore()

    def canvas_move(self, event: QMouseEvent) -> None:
        event.ignore()

    def canvas_release(self, event: QMouseEvent) -> None:
        event.ignore()

    def canvas_double_click(self, event: QMouseEvent) -> None:
        event.ignore()
