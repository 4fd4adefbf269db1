"""The replay canvas's episode layer: one QGraphicsItem that paints an episode at one step
through the shared frame painter (the function clip export uses), in pixels."""

from __future__ import annotations

import math

from PySide6.QtCore import QRectF
from PySide6.QtGui import QPainter
from PySide6.QtWidgets import QGraphicsItem, QStyleOptionGraphicsItem, QWidget

from arena_studio.app.replay.trail_prefill import TrailPrefill
from arena_studio.app.scene_items import WORLD
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.render.episode_painter import FrameOptions, paint_episode_frame
from arena_studio.render.paint_guard import saved
from arena_studio.render.theme import Theme
from arena_studio.render.view import ViewTransform


def view_from_painter(painter: QPainter) -> ViewTransform:
    """The ViewTransform equal to the painter's metre -> pixel mapping (no rotation)."""
    t = painter.worldTransform()
    scale = math.hypot(t.m11(), t.m12())
    return ViewTransform(scale=scale, offset_x=t.dx(), offset_y=t.dy())


class EpisodeLayer(QGraphicsItem):
    """Paints one episode at one step through the shared frame painter."""

    def __init__(self, theme: Theme, ghost: bool = False) -> None:
        super().__init__()
        self.theme = theme
        self.scene_value: Scene | None = None
        self.episode: Episode | None = None
        self.step = 0
        self.options = FrameOptions()
        self.painted_step: int | None = None  # what the last paint() drew (for tests)
        self.prefill: TrailPrefill | None = None  # draws trail blocks ahead when idle
        self.setZValue(30 if not ghost else 25)
        if ghost:
            self.setOpacity(0.38)

    def boundingRect(self) -> QRectF:
        return WORLD

    def set_content(self, scene: Scene | None, episode: Episode | None) -> None:
        self.scene_value, self.episode = scene, episode
        self.painted_step = None
        self.update()

    def set_step(self, step: int) -> None:
        if step != self.step:
            self.step = step
            self.update()

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        if self.scene_value is None or self.episode is None:
            return
        view = view_from_painter(painter)
        with saved(painter):
            painter.resetTransform()
            paint_episode_frame(
                painter, self.scene_value, self.episode, self.step, view, self.theme, self.options
            )
        self.painted_step = self.step
        if self.prefill is not None:
            self.prefill.request(
                self, self.scene_value, self.episode, self.step, view, self.theme, self.options
            )

