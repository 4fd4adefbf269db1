"""World (metres, y up) <-> pixels (y down), aspect locked: one scale for both axes.

Every painter takes a :class:`ViewTransform` so the scene, the agents and the overlays agree
on where a metre lands, whatever the output size. Pure arithmetic, no Qt state: the same
transform maps numpy arrays (trails, hundreds of agents) and single points.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from PySide6.QtCore import QPointF, QRectF
from PySide6.QtGui import QTransform

from arena_studio.core.geometry.regions import bounds
from arena_studio.core.scene.model import Scene


@dataclass(frozen=True)
class ViewTransform:
    """``px = ox + s * x``, ``py = oy - s * y`` with ``s`` pixels per metre."""

    scale: float  # pixels per metre
    offset_x: float  # pixel x of world x = 0
    offset_y: float  # pixel y of world y = 0

    def __post_init__(self) -> None:
        if not (self.scale > 0 and np.isfinite(self.scale)):
            raise ValueError(f"view scale must be a positive number, got {self.scale!r}")

    # -- construction ------------------------------------------------------------------
    @classmethod
    def fit(
        cls,
        world: tuple[float, float, float, float],
        rect: QRectF | tuple[float, float, float, float],
        margin_px: float = 24.0,
    ) -> ViewTransform:
        """Fit the world box ``(minx, miny, maxx, maxy)`` centred inside a pixel rectangle.

        ``rect`` is ``(left, top, width, height)`` in pixels; ``margin_px`` is kept free on
        every side. A degenerate world box (a point or a line) gets a 1 m extent.
        """
        if isinstance(rect, QRectF):
            left, top, width, height = rect.x(), rect.y(), rect.width(), rect.height()
        else:
            left, top, width, height = rect
        minx, miny, maxx, maxy = world
        ww, wh = max(maxx - minx, 1e-9), max(maxy - miny, 1e-9)
        if ww < 1e-6 and wh < 1e-6:
            ww = wh = 1.0
        avail_w = max(width - 2 * margin_px, 1.0)
        avail_h = max(height - 2 * margin_px, 1.0)
        scale = min(avail_w / ww, avail_h / wh)
        cx, cy = (minx + maxx) / 2, (miny + maxy) / 2
        return cls(scale, left + width / 2 - scale * cx, top + height / 2 + scale * cy)

    @classmethod
    def fit_scene(
        cls,
        scene: Scene,
        rect: QRectF | tuple[float, float, float, float],
        margin_px: float = 24.0,
        world_margin: float = 0.3,
    ) -> ViewTransform:
        """Fit the scene's bounds (plus ``world_margin`` metres for labels), with every
        landmark's reach ring inside: a wall landmark's ring reaches past the wall."""
        minx, miny, maxx, maxy = bounds(scene, world_margin)
        for lm in scene.landmarks:
            (x, y), reach = lm.position, lm.reach_radius + world_margin
            if np.isfinite(x) and np.isfinite(y) and np.isfinite(reach):
                minx, maxx = min(minx, x - reach), max(maxx, x + reach)
                miny, maxy = min(miny, y - reach), max(maxy, y + reach)
        return cls.fit((minx, miny, maxx, maxy), rect, margin_px)

    # -- mapping -----------------------------------------------------------------------
    def to_px(self, x: float, y: float) -> QPointF:
        return QPointF(self.offset_x + self.scale * x, self.offset_y - self.scale * y)

    def to_world(self, px: float, py: float) -> tuple[float, float]:
        return ((px - self.offset_x) / self.scale, (self.offset_y - py) / self.scale)

    def map_array(self, xy: np.ndarray) -> np.ndarray:
        """(..., 2) world metres -> (..., 2) float64 pixels."""
        xy = np.asarray(xy, dtype=np.float64)
        out = np.empty_like(xy)
        out[..., 0] = self.offset_x + self.scale * xy[..., 0]
        out[..., 1] = self.offset_y - self.scale * xy[..., 1]
        return out

    def length_px(self, metres: float) -> float:
        return self.scale * metres

    def qtransform(self) -> QTransform:
        """The same mapping as a QTransform (for painting world-space paths directly)."""
        return QTransform(self.scale, 0.0, 0.0, -self.scale, self.offset_x, self.offset_y)

    def world_rect(self, width: float, height: float) -> tuple[float, float, float, float]:
        """World box ``(minx, miny, maxx, maxy)`` visible in a ``width`` x ``height`` image."""
        x0, y1 = self.to_world(0.0, 0.0)
        x1, y0 = self.to_world(width, height)
        return (x0, y0, x1, y1)
