"""The replay canvas's legend: where it goes (full or compact), how it is drawn, and which
agent row is under a point, so a click on a row focuses that agent.

The full legend is painted once per episode, theme, options and size into a pixmap, and its
agent rows are recorded as the painter draws them; the compact legend's rows are the chips of
its layout. Either way a click is looked up in what was drawn, not in numbers of its own.
"""

from __future__ import annotations

from dataclasses import replace
from typing import TYPE_CHECKING

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QPainter, QPixmap

from arena_studio.app.replay import canvas_room
from arena_studio.app.replay.canvas_room import LEGEND_W, LegendPlace
from arena_studio.core.tape.episode import Episode
from arena_studio.render.legend import paint_legend
from arena_studio.render.legend_compact import agent_at as compact_agent_at
from arena_studio.render.legend_compact import paint_compact_legend

if TYPE_CHECKING:
    from arena_studio.app.replay.replay_canvas import ReplayCanvas


class CanvasLegend:
    """The legend of one replay canvas, with its caches."""

    def __init__(self, canvas: ReplayCanvas) -> None:
        self.canvas = canvas
        self._place: tuple[tuple, LegendPlace | None] | None = None  # (key, place)
        self._pixmap: tuple[tuple, QPixmap] | None = None
        #: agent rows of the full legend as last painted, (agent, rect in legend pixels)
        self._hits: list[tuple[int, QRectF]] = []

    def place(self) -> LegendPlace | None:
        """Where the legend goes and how, or None when it is not shown."""
        c = self.canvas
        ep, scene = c.layer_episode.episode, c.scene_value
        w, h = c.viewport().width(), c.viewport().height()
        if ep is None or scene is None or not c.show_legend or w < 160 or h < 120:
            return None
        plain = replace(c.options, focus=None, tag_keep_out=())
        key = (w, h, id(ep), id(scene), plain, bool(c.caption))
        if self._place is not None and self._place[0] == key:
            return self._place[1]
        place = canvas_room.place_legend(
            scene, ep, plain, (float(w), float(h)), c.header_height(), lambda r: c.fit_for(r)[0]
        )
        self._place = (key, place)
        return place

    def paint(self, painter: QPainter, episode: Episode) -> None:
        """Draw the legend in viewport pixels (the painter is reset to them)."""
        place = self.place()
        if place is None:
            return
        if place.compact is not None:
            c = self.canvas
            paint_compact_legend(painter, place.rect.topLeft(), place.compact, c.theme, c.options)
        else:
            pixmap = self._full_pixmap(episode, place.rect.height())
            painter.drawPixmap(place.rect.topLeft().toPoint(), pixmap)

    def agent_rows(self) -> list[tuple[int, QRectF]]:
        """Each agent row as drawn: (agent, rectangle in viewport pixels)."""
        place = self.place()
        ep = self.canvas.layer_episode.episode
        if place is None or ep is None:
            return []
        at = place.rect.topLeft()
        if place.compact is not None:
            chips = place.compact.chips
            return [(int(str(c.arg)), c.rect.translated(at)) for c in chips if c.kind == "agent"]
        self._full_pixmap(ep, place.rect.height())  # the rows are recorded as painted
        return [(a, r.translated(at)) for a, r in self._hits]

    def agent_at(self, pos: QPointF) -> int | None:
        """The agent whose row is under the viewport point ``pos``, or None."""
        place = self.place()
        if place is not None and place.compact is not None:
            return compact_agent_at(place.compact, pos - place.rect.topLeft())
        for agent, rect in self.agent_rows():
            if rect.contains(pos):
                return agent
        return None

    def _full_pixmap(self, ep: Episode, height: float) -> QPixmap:
        """The legend does not change with the step: paint it once per episode/theme/size."""
        c = self.canvas
        dpr = c.devicePixelRatioF()
        plain = replace(c.options, tag_keep_out=())
        key = (ep, c.theme.name, plain, int(height), dpr)  # Episode: eq by identity
        if self._pixmap is not None and self._pixmap[0] == key:
            return self._pixmap[1]
        pm = QPixmap(int(LEGEND_W * dpr), int(height * dpr))
        pm.setDevicePixelRatio(dpr)
        pm.fill(Qt.GlobalColor.transparent)
        p = QPainter(pm)
        hits: list[tuple[int, QRectF]] = []
        assert c.scene_value is not None
        rect = QRectF(0, 0, LEGEND_W, height)
        paint_legend(p, rect, c.scene_value, ep, c.theme, plain, 1.0, hits=hits)
        p.end()
        self._hits = hits
        self._pixmap = (key, pm)
        return pm
