"""File > Import Map: a building's occupancy map traced into a scene, previewed first.

The preview shows the map image with the traced outlines over it (rooms in the selection
colour, obstacles in the warning colour); the tolerance and speck-size sliders retrace after
a short pause, and the counts say what the scene will hold. Tracing is
:mod:`arena_studio.core.robot.map_trace`, the same as ``arena-studio import map``.
"""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path

import numpy as np
from PySide6.QtCore import QPointF, QRectF, Qt, QTimer
from PySide6.QtGui import QImage, QPainter, QPaintEvent, QPen, QPolygonF
from PySide6.QtWidgets import (
    QDialog,
    QDialogButtonBox,
    QHBoxLayout,
    QLabel,
    QSlider,
    QVBoxLayout,
    QWidget,
)

from arena_studio.core.robot.map_trace import DEFAULT_SPECK_CELLS, TracedMap, map_scene, trace_map
from arena_studio.core.robot.map_yaml import OccupancyMap
from arena_studio.core.robot.underlay import map_underlay
from arena_studio.core.scene import Scene
from arena_studio.core.wording import count
from arena_studio.render.theme import Theme

CAUTION = (
    "Traced layouts and replays of real runs are analysis aids. Safety of robots near "
    "people is assessed on site, under the applicable standards and local rules."
)
TOL_STEPS = 40  # tolerance slider: 0 .. 10 cells in quarter cells
SPECK_MAX_CELLS = 400


def grey_image(pixels: np.ndarray) -> QImage:
    """A copy of an (H, W) uint8 array as an 8-bit grey QImage."""
    data = np.ascontiguousarray(pixels, dtype=np.uint8)
    h, w = data.shape
    return QImage(data.data, w, h, w, QImage.Format.Format_Grayscale8).copy()


class MapPreview(QWidget):
    """The map image fitted into the widget, with the traced outlines drawn over it."""

    def __init__(self, omap: OccupancyMap, theme: Theme, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.omap, self.theme = omap, theme
        self.image = grey_image(omap.pixels)
        self.traced: TracedMap | None = None
        self.setMinimumSize(360, 280)

    def _to_pixels(self, pts: np.ndarray) -> np.ndarray:
        """Map-frame metres to image pixels (x right, y down)."""
        info = self.omap.info
        ox, oy, yaw = info.origin
        c, s = math.cos(yaw), math.sin(yaw)
        dx, dy = pts[:, 0] - ox, pts[:, 1] - oy
        u = (c * dx + s * dy) / info.resolution
        v = self.image.height() - (-s * dx + c * dy) / info.resolution
        return np.column_stack([u, v])

    def paintEvent(self, event: QPaintEvent) -> None:
        painter = QPainter(self)
        painter.fillRect(self.rect(), self.theme.qcolor("ui_base"))
        w, h = self.image.width(), self.image.height()
        k = min((self.width() - 16) / w, (self.height() - 16) / h)
        x0, y0 = (self.width() - k * w) / 2, (self.height() - k * h) / 2
        painter.drawImage(QRectF(x0, y0, k * w, k * h), self.image)
        if self.traced is not None:
            painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
            for polys, role in ((self.traced.rooms, "selection"), (self.traced.obstacles, "error")):
                pen = QPen(self.theme.qcolor(role), 2.0)
                painter.setPen(pen)
                for poly in polys:
                    px = self._to_pixels(np.asarray(poly.exterior.coords))
                    ring = QPolygonF([QPointF(x0 + k * u, y0 + k * v) for u, v in px])
                    painter.drawPolygon(ring)
                    painter.setBrush(self.theme.qcolor(role))
                    for pt in ring:
                        painter.drawEllipse(pt, 2.0, 2.0)
                    painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.end()


class MapImportDialog(QDialog):
    """Preview, sliders and counts; :meth:`scene` is the result after Import."""

    def __init__(
        self, omap: OccupancyMap, yaml_path: Path, theme: Theme, parent: QWidget | None = None
    ) -> None:
        super().__init__(parent)
        self.omap, self.yaml_path = omap, yaml_path
        self.setWindowTitle(f"Import Map — {yaml_path.name}")
        res = omap.info.resolution
        self.preview = MapPreview(omap, theme)
        self.tolerance = QSlider(Qt.Orientation.Horizontal)
        self.tolerance.setRange(0, TOL_STEPS)
        self.tolerance.setValue(4)  # one cell
        self.speck = QSlider(Qt.Orientation.Horizontal)
        self.speck.setRange(0, SPECK_MAX_CELLS)
        self.speck.setValue(DEFAULT_SPECK_CELLS)
        self.tolerance_label, self.speck_label = QLabel(), QLabel()
        self.counts = QLabel()
        self.counts.setObjectName("map_counts")
        h, w = omap.cells.shape
        ox, oy, yaw = omap.info.origin
        about = QLabel(
            f"{w} × {h} cells of {res:g} m ({w * res:.1f} m × {h * res:.1f} m), origin "
            f"({ox:g}, {oy:g}) m, yaw {math.degrees(yaw):.1f}°, mode {omap.info.mode}"
        )
        about.setWordWrap(True)
        caution = QLabel(CAUTION)
        caution.setWordWrap(True)
        caution.setObjectName("caution")
        side = QVBoxLayout()
        side.addWidget(about)
        side.addSpacing(8)
        side.addWidget(self._row("Simplify outlines by", self.tolerance_label))
        side.addWidget(self.tolerance)
        side.addWidget(self._row("Drop specks smaller than", self.speck_label))
        side.addWidget(self.speck)
        side.addSpacing(8)
        side.addWidget(self.counts)
        side.addStretch(1)
        side.addWidget(caution)
        buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel
        )
        buttons.button(QDialogButtonBox.StandardButton.Ok).setText("Import")
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        self.import_button = buttons.button(QDialogButtonBox.StandardButton.Ok)
        body = QHBoxLayout()
        body.addWidget(self.preview, 3)
        panel = QWidget()
        panel.setLayout(side)
        panel.setMinimumWidth(280)
        panel.setMaximumWidth(380)
        body.addWidget(panel, 1)
        outer = QVBoxLayout(self)
        outer.addLayout(body, 1)
        outer.addWidget(buttons)
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(150)
        self._timer.timeout.connect(self.retrace)
        self.tolerance.valueChanged.connect(self._changed)
        self.speck.valueChanged.connect(self._changed)
        self.traced: TracedMap | None = None
        self._changed()
        self.retrace()
        self.resize(1000, 640)

    @staticmethod
    def _row(title: str, value: QLabel) -> QWidget:
        """A caption with the slider's current value at its right."""
        box = QWidget()
        lay = QHBoxLayout(box)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.addWidget(QLabel(title), 1)
        lay.addWidget(value)
        return box

    def tolerance_m(self) -> float:
        return self.tolerance.value() / 4 * self.omap.info.resolution

    def min_area_m2(self) -> float:
        return self.speck.value() * self.omap.info.resolution**2

    def _changed(self) -> None:
        self.tolerance_label.setText(f"{self.tolerance_m():.3g} m")
        self.speck_label.setText(f"{self.min_area_m2():.3g} m²")
        self._timer.start()

    def retrace(self) -> None:
        self._timer.stop()
        self.traced = trace_map(self.omap, self.tolerance_m(), self.min_area_m2())
        t = self.traced
        self.counts.setText(
            f"{count(len(t.rooms), 'room')}, {count(len(t.obstacles), 'obstacle')}\n"
            f"{count(t.vertex_count, 'vertex', 'vertices')}, {count(t.dropped, 'speck')} dropped"
        )
        self.import_button.setEnabled(bool(t.rooms))
        self.preview.traced = t
        self.preview.update()

    def scene(self) -> Scene:
        """The traced scene with the map image as its underlay (an absolute path until saved;
        saving makes it relative to the scene file)."""
        if self._timer.isActive() or self.traced is None:
            self.retrace()
        assert self.traced is not None
        scene = map_scene(self.traced, self.yaml_path.stem, f"Traced from {self.yaml_path.name}.")
        image = self.omap.info.image.resolve()
        under = replace(map_underlay(self.omap.info, image), image=image.as_posix())
        return scene.with_changes(underlay=under)


__all__ = ["CAUTION", "MapImportDialog", "MapPreview", "grey_image"]
