"""Pre-draw the shown episode's trail blocks and body sprites while the event loop is idle.

Raster frames blit trail blocks and body sprites that are already drawn and draw the others
(:mod:`arena_studio.render.trail_blocks`, :mod:`arena_studio.render.agent_painter`): a frame
whose blocks are not drawn yet costs about what stroking every block would (~1.4x). After a
paint, this draws the episode's missing images at the painted zoom, nearest to the painted
step first, a few at a time between events (each tick ~1 ms), so scrubbing and playback find
them ready. A zoom or a new episode starts over.
"""

from __future__ import annotations

from PySide6.QtCore import QObject, QTimer
from PySide6.QtWidgets import QWidget

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.render.episode_painter import FrameOptions, prefill_frame
from arena_studio.render.theme import Theme
from arena_studio.render.view import ViewTransform

#: blocks drawn per idle tick (~50 us each at 1280x720)
BLOCKS_PER_TICK = 16


class TrailPrefill(QObject):
    """Idle-time block drawing for the episode layers of one viewport."""

    def __init__(self, viewport: QWidget) -> None:
        super().__init__(viewport)
        self._viewport = viewport
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(0)
        self._timer.timeout.connect(self._tick)
        self._pending: dict[int, tuple] = {}  # layer id -> what to draw
        self._done: dict[int, tuple] = {}  # layer id -> key of the finished job

    def request(
        self,
        layer: object,
        scene: Scene,
        episode: Episode,
        step: int,
        view: ViewTransform,
        theme: Theme,
        options: FrameOptions,
    ) -> None:
        """After ``layer`` painted ``episode`` at ``view``: fill its blocks unless done."""
        key = (id(episode), theme.name, options, view)
        if self._done.get(id(layer)) == key:
            return
        if self._viewport.devicePixelRatioF() != 1.0:
            return  # HiDPI painters draw every shape (no blits), nothing to prepare
        self._pending[id(layer)] = (key, scene, episode, step, view, theme, options)
        if not self._timer.isActive():
            self._timer.start()

    @property
    def busy(self) -> bool:
        """True while blocks remain to be drawn (benchmarks wait for it)."""
        return bool(self._pending)

    def _tick(self) -> None:
        for layer_id, job in list(self._pending.items()):
            key, scene, episode, step, view, theme, options = job
            size = self._viewport.size()
            bounds = (size.width(), size.height())
            more = prefill_frame(
                scene, episode, step, view, theme, options, BLOCKS_PER_TICK, bounds
            )
            if not more:
                del self._pending[layer_id]
                self._done[layer_id] = key
        if self._pending:
            self._timer.start()
