"""The replay canvas: the editor's read-only SceneCanvas with an episode layer on top.

The episode layer is one QGraphicsItem whose ``paint`` hands the painter, in pixels, to
:func:`arena_studio.render.episode_painter.paint_episode_frame`, the same function clip
export uses, so the screen and a clip show the same frame. A second, translucent layer can
show another episode as a ghost (compare mode). The corner overlays (clock, legend, the
diagnosis line once it has happened) are painted in screen pixels by the same render module.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
from PySide6.QtCore import QPoint, QPointF, QRectF, Qt, Signal
from PySide6.QtGui import QMouseEvent, QPainter, QPen
from PySide6.QtWidgets import (
    QGraphicsScene,
    QGraphicsView,
    QStyleOptionGraphicsItem,
    QToolTip,
    QWidget,
)

from arena_studio.app.canvas import SceneCanvas
from arena_studio.app.replay import canvas_room
from arena_studio.app.replay.canvas_legend import CanvasLegend
from arena_studio.app.replay.canvas_room import LegendPlace, Room
from arena_studio.app.replay.clock_overlay import ClockOverlay
from arena_studio.app.replay.episode_layer import EpisodeLayer
from arena_studio.app.replay.prepared import PreparedEpisode
from arena_studio.app.replay.trail_prefill import TrailPrefill
from arena_studio.core.analysis.roles import ROLE_NAMES
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.core.wording import LandmarkNames
from arena_studio.render.episode_cache import episode_cache
from arena_studio.render.episode_painter import FrameOptions
from arena_studio.render.paint_guard import guarded
from arena_studio.render.theme import Theme

HOVER_SLACK_PX = 6.0
#: room the hover card takes (pixels), for keeping it inside the canvas
CARD_W, CARD_H = 300, 120


class ReplayCanvas(SceneCanvas):
    """Read-only canvas for one episode (plus an optional ghost) at the clock's step."""

    agentHovered = Signal(object)  # agent index or None
    agentClicked = Signal(object)  # agent index, or None for a click beside every agent

    def __init__(self, theme: Theme, parent: QWidget | None = None) -> None:
        super().__init__(theme, parent)
        self.layer_episode = EpisodeLayer(theme)
        self.layer_ghost = EpisodeLayer(theme, ghost=True)
        self.scene().addItem(self.layer_ghost)
        self.scene().addItem(self.layer_episode)
        self.trail_prefill = TrailPrefill(self.viewport())
        self.layer_episode.prefill = self.layer_ghost.prefill = self.trail_prefill
        self.prepared: PreparedEpisode | None = None
        self._caption: str | None = None
        self.caption_box: QRectF | None = None  # where the caption was last drawn (pixels)
        self._show_legend = True
        self.legend = CanvasLegend(self)
        self.show_clock = True
        #: in compare mode: the shared timeline's length in steps, so both panes read the
        #: same "t / total" as the transport (None: this episode's own length)
        self.shared_steps: int | None = None
        self._hover_agent: int | None = None
        self._hover_pos = None
        self._clock = ClockOverlay()  # render.legend.paint_clock with fonts made once
        self.auto_fit = True  # keep the scene fitted on resize until the user zooms or pans
        # the scene never changes during a replay: keep the background (floor, grid) and the
        # static scene layer as pixmaps, so a new step repaints only the episode layer's work
        # (the static scene layer is painted into the cached background: one opaque blit)
        self.setCacheMode(QGraphicsView.CacheModeFlag.CacheBackground)
        self.layer.setVisible(False)
        # identity rides on the moving bodies (name tags): start names would sit beside
        # another agent's body, so the starts stay as faint marks without names
        self.layer.show_agent_ids = False
        self.layer.options = replace(self.layer.options, faint_starts=True)
        # the cached background covers every viewport pixel, so Qt need not fill the widget
        # first (a whole-view fill, ~0.15 ms a frame at 1280x720); every paint() and overlay
        # here saves and restores the painter itself, so the view need not do it per item
        self.viewport().setAttribute(Qt.WidgetAttribute.WA_OpaquePaintEvent, True)
        self.setOptimizationFlag(QGraphicsView.OptimizationFlag.DontSavePainterState, True)
        # every repaint is a full one (FullViewportUpdate) of three items: no exposed-rect
        # margins to work out and no spatial index to keep
        self.setOptimizationFlag(QGraphicsView.OptimizationFlag.DontAdjustForAntialiasing, True)
        self.scene().setItemIndexMethod(QGraphicsScene.ItemIndexMethod.NoIndex)
        self.layer_ghost.setVisible(False)  # shown only while it has an episode
        self.set_options(self.layer_episode.options)  # the ghost's reduced overlays from the start

    # -- content -----------------------------------------------------------------------
    def set_episode(self, scene: Scene, prepared: PreparedEpisode | None) -> None:
        if scene is not self.scene_value:
            self.show_scene(scene)
            self.resetCachedContent()
        self.prepared = prepared
        self.layer_episode.set_content(scene, None if prepared is None else prepared.episode)
        self._relayout()

    def set_ghost(self, episode: Episode | None) -> None:
        self.layer_ghost.set_content(self.scene_value if episode else None, episode)
        self.layer_ghost.setVisible(episode is not None)
        self.viewport().update()

    def set_step(self, step: int) -> None:
        self.layer_episode.set_step(step)
        self.layer_ghost.set_step(step)
        self.viewport().update()
        if self._hover_agent is not None:
            self._recheck_hover()

    def set_options(self, options: FrameOptions) -> None:
        self.layer_episode.options = options  # the overlays' places depend on the options
        options = replace(options, tag_keep_out=self._overlay_boxes())
        self.layer_episode.options = options
        self.layer_ghost.options = FrameOptions(
            theme=options.theme,
            trails=options.trails,
            trail_seconds=options.trail_seconds,
            roles="none",
            team_goal=False,
            pursued=False,
            collisions=False,
            legend=False,
        )
        self.layer_episode.update()
        self.layer_ghost.update()
        self._keep_labels_off_the_legend()  # the legend may have been switched on or off

    @property
    def caption(self) -> str | None:
        """Which episode this pane shows (compare mode), e.g. "compared: episode 3"."""
        return self._caption

    @caption.setter
    def caption(self, text: str | None) -> None:
        if text != self._caption:
            self._caption = text
            self._relayout()

    @property
    def show_legend(self) -> bool:
        return self._show_legend

    @show_legend.setter
    def show_legend(self, shown: bool) -> None:
        if shown != self._show_legend:
            self._show_legend = shown
            self._relayout()

    def _relayout(self) -> None:
        """The overlays' places changed (episode, caption, legend, size): refit the scene
        while it follows the view, and keep labels and tags clear of the overlays."""
        if self.auto_fit and self.scene_value is not None and self.viewport().width() > 50:
            self.fit_scene()
        self.set_options(self.layer_episode.options)
        self.viewport().update()

    @property
    def options(self) -> FrameOptions:
        return self.layer_episode.options

    def set_theme(self, theme: Theme) -> None:
        super().set_theme(theme)
        self.resetCachedContent()
        self.layer_episode.theme = theme
        self.layer_ghost.theme = theme

    @property
    def step(self) -> int:
        return self.layer_episode.step

    def agent_positions(self) -> np.ndarray | None:
        """(A, 2) world positions the episode layer draws at the current step."""
        ep = self.layer_episode.episode
        if ep is None or self.scene_value is None:
            return None
        cache = episode_cache(self.scene_value, ep)
        step = min(max(self.step, 0), cache.steps - 1)
        return cache.xy[step].copy()

    def drawBackground(self, painter: QPainter, rect: QRectF) -> None:
        super().drawBackground(painter, rect)
        with guarded(painter, "the scene", theme=self.theme):
            self.layer.paint(painter, QStyleOptionGraphicsItem(), None)

    # -- fitting -----------------------------------------------------------------------
    def header_height(self) -> float:
        """Pixels the clock (and the caption under it) take at the top."""
        return canvas_room.header_height(self.viewport().width(), bool(self.caption))

    def room(self) -> Room:
        """Pixels the overlays take on each side of the scene."""
        place = self.legend_place()
        return place.room if place is not None else Room(self.header_height())

    def legend_room(self) -> float:
        """Pixels kept free on the right for the legend."""
        return self.room().right

    def fit_scene(self, margin_px: float | None = None) -> None:
        """Fit the scene into the part of the view the overlays leave free."""
        from PySide6.QtGui import QTransform

        if self.scene_value is None:
            return
        s, cx, cy = self.fit_for(self.room(), margin_px)
        self.setTransform(QTransform.fromScale(s, -s))
        self.centerOn(QPointF(cx, cy))
        self.zoomChanged.emit(s)

    def fit_for(self, room: Room, margin_px: float | None = None) -> tuple[float, float, float]:
        """Scale and centre that fit the scene into what ``room`` leaves of the view."""
        from arena_studio.app.canvas import MAX_PPM, MIN_PPM

        assert self.scene_value is not None
        size = (float(self.viewport().width()), float(self.viewport().height()))
        margin = canvas_room.margin_for(size) if margin_px is None else margin_px
        texts = self._arrival_texts()
        return canvas_room.fit(self.scene_value, size, room, margin, (MIN_PPM, MAX_PPM), texts)

    def _arrival_texts(self) -> tuple[tuple[float, float, float], ...]:
        """Team-goal targets and half the width of their "rover-2 8.2 s" texts (pixels),
        which are centred under them and may reach past the scene's edge."""
        ep, scene = self.layer_episode.episode, self.scene_value
        if ep is None or scene is None or not self.options.team_goal:
            return ()
        from PySide6.QtGui import QFontMetricsF

        from arena_studio.render.drawing import font

        cache = episode_cache(scene, ep)
        metrics = QFontMetricsF(font(11, bold=True))
        names = [a.id for a in scene.agents] or ["agent 99"]
        half = max(metrics.horizontalAdvance(f"{n} 99.9 s") for n in names) / 2 + 4.0
        out = []
        for i in cache.team_indices():
            x, y = scene.landmarks[i].position
            out.append((float(x), float(y), half))
        return tuple(out)

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        self._relayout()

    def zoom_by(self, factor: float) -> None:
        self.auto_fit = False
        super().zoom_by(factor)

    def mousePressEvent(self, event: QMouseEvent) -> None:
        if self._starts_pan(event):
            self.auto_fit = False
        elif event.button() == Qt.MouseButton.LeftButton and self.prepared is not None:
            legend = self.legend_rect()
            if legend is not None and legend.contains(event.position()):
                agent = self.legend_agent_at(event.position())
                if agent is not None:  # a click on a title or a key row changes nothing
                    self.agentClicked.emit(agent)
                event.accept()
                return
            self.agentClicked.emit(self.agent_at(event.position()))
        super().mousePressEvent(event)

    # -- overlays in screen pixels -----------------------------------------------------
    def drawForeground(self, painter: QPainter, rect: QRectF) -> None:
        super().drawForeground(painter, rect)
        ep = self.layer_episode.episode
        if ep is None or self.scene_value is None:
            return
        with guarded(painter, "the clock, legend and caption", theme=self.theme):
            painter.resetTransform()
            w = self.viewport().width()
            ui = 1.0
            if self.show_clock:
                self._clock.paint(
                    painter, QRectF(0, 0, 320, 60), ep, self.step, self.theme, ui,
                    self.shared_steps,
                )  # fmt: skip
            self.legend.paint(painter, ep)
            if self.caption:
                self._paint_caption(painter, w)
            self._paint_mismatches(painter)

    def _paint_mismatches(self, painter: QPainter) -> None:
        """Recording-vs-scene findings reached by now: a hollow square where each happened
        (the timeline's glyph), in the error colour."""
        findings = [] if self.prepared is None else self.prepared.extra.get("findings", [])
        shown = [f for f in findings if f.point is not None and (f.step or 0) <= self.step]
        if not shown:
            return
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        painter.setPen(QPen(self.theme.qcolor("error"), 2.0))
        painter.setBrush(Qt.BrushStyle.NoBrush)
        for f in shown[:200]:
            at = self.mapFromScene(QPointF(*f.point))
            painter.drawRect(QRectF(at.x() - 7, at.y() - 7, 14, 14))

    def legend_place(self) -> LegendPlace | None:
        """Where the legend goes and how (full or compact), or None when it is not shown."""
        return self.legend.place()

    def legend_rect(self) -> QRectF | None:
        """Where the legend goes in the viewport, or None when it is not shown."""
        place = self.legend.place()
        return None if place is None else place.rect

    def legend_agent_rows(self) -> list[tuple[int, QRectF]]:
        """Each agent row of the legend as drawn: (agent, rectangle in viewport pixels)."""
        return self.legend.agent_rows()

    def legend_agent_at(self, pos: QPointF) -> int | None:
        """The agent whose legend row is under the viewport point ``pos``, or None."""
        return self.legend.agent_at(pos)

    def _overlay_boxes(self) -> tuple[tuple[float, float, float, float], ...]:
        """Pixel boxes the overlays cover (clock and caption, legend): name tags and
        landmark labels keep clear of them."""
        w = float(self.viewport().width())
        boxes = []
        if self.layer_episode.episode is not None:
            head_w = w if self.caption and w >= canvas_room.CAPTION_CENTRED_FROM_PX else 240.0
            boxes.append((0.0, 0.0, min(head_w, w), self.header_height()))
        legend = self.legend_rect()
        if legend is not None:
            boxes.append((legend.left() - 4, legend.top() - 4, legend.right() + 10,
                          legend.bottom() + 4))  # fmt: skip
        return tuple(boxes)

    def _keep_labels_off_the_legend(self) -> None:
        """Landmark labels are placed clear of the legend and the clock: their rectangles go
        to the scene layer, whose cached background is redrawn when they change."""
        keep = self.layer_episode.options.tag_keep_out
        if keep != self.layer.options.label_keep_out:
            self.layer.options = replace(self.layer.options, label_keep_out=keep)
            self.resetCachedContent()
            self.viewport().update()

    def _paint_caption(self, painter: QPainter, width: int) -> None:
        """Which episode this view shows (compare mode): top centre, or under the clock
        when the view is too narrow for both."""
        from arena_studio.render.drawing import font, label

        wide = width >= canvas_room.CAPTION_CENTRED_FROM_PX
        below = canvas_room.CLOCK_H + canvas_room.CAPTION_H / 2 - 2
        anchor = QPointF(width / 2, 18) if wide else QPointF(10, below)
        self.caption_box = label(
            painter,
            self.caption or "",
            anchor,
            font(12, True),
            self.theme.qcolor("text"),
            self.theme.qcolor("background", alpha=0.85),
            "center" if wide else "left",
            4,
        )

    # -- hover -------------------------------------------------------------------------
    def agent_at(self, pos: QPointF) -> int | None:
        """Agent under the viewport point ``pos`` (within its radius plus a few pixels)."""
        xy = self.agent_positions()
        if xy is None or len(xy) == 0:
            return None
        wx, wy = self.world_at(pos)
        d = np.hypot(xy[:, 0] - wx, xy[:, 1] - wy)
        radius = np.array(
            [a.radius for a in self.scene_value.agents][: len(xy)]
            + [0.25] * max(0, len(xy) - len(self.scene_value.agents))
        )
        slack = HOVER_SLACK_PX / self.pixels_per_metre()
        inside = d <= radius + slack
        if not inside.any():
            return None
        return int(np.argmin(np.where(inside, d, np.inf)))

    def canvas_move(self, event: QMouseEvent) -> None:
        agent = self.agent_at(event.position())
        if agent != self._hover_agent:
            self._hover_agent = agent
            self.agentHovered.emit(agent)
        if agent is None:
            self._hover_pos = None
            QToolTip.hideText()
        else:
            self._show_tooltip(agent, event.globalPosition().toPoint())
        event.ignore()

    def leaveEvent(self, event: object) -> None:
        self._hover_agent = None
        super().leaveEvent(event)

    def _recheck_hover(self) -> None:
        """After a time change the card stays only while the pointer is still on the same
        agent: a card that followed an agent away from the pointer covered other things."""
        if self._hover_pos is None:
            return
        local = QPointF(self.viewport().mapFromGlobal(self._hover_pos))
        agent = self.agent_at(local)
        if agent != self._hover_agent:
            self._hover_agent = agent
            self.agentHovered.emit(agent)
        if agent is None:
            QToolTip.hideText()
        else:
            self._show_tooltip(agent, None)

    def card_anchor(self, agent: int) -> QPoint | None:
        """Viewport point for the hover card: beside the agent's body, up and right, kept
        inside the canvas (never down over the explanation line under it)."""
        xy = self.agent_positions()
        if xy is None or agent >= len(xy) or not np.isfinite(xy[agent]).all():
            return None
        at = self.mapFromScene(QPointF(float(xy[agent, 0]), float(xy[agent, 1])))
        vp = self.viewport().rect()
        x = min(max(at.x() + 18, 4), max(vp.width() - CARD_W, 4))
        y = min(max(at.y() - CARD_H // 2, 4), max(vp.height() - CARD_H, 4))
        return QPoint(int(x), int(y))

    def _show_tooltip(self, agent: int, global_pos) -> None:
        """Show (or refresh, while playing) the hover card at once, beside the body."""
        if global_pos is not None:
            self._hover_pos = global_pos
        if self._hover_pos is None:
            return
        text = self.agent_tooltip(agent)
        anchor = self.card_anchor(agent)
        if text is not None and anchor is not None:
            QToolTip.showText(self.viewport().mapToGlobal(anchor), text, self.viewport())

    def agent_tooltip(self, agent: int) -> str | None:
        """Pose, speed, role and reward so far of ``agent`` at the current step."""
        prep, scene = self.prepared, self.scene_value
        if prep is None or scene is None:
            return None
        ep = prep.episode
        step = min(max(self.step, 0), ep.steps - 1)
        x, y, heading = (float(v) for v in ep.poses[step, agent])
        name = scene.agents[agent].id if agent < len(scene.agents) else f"agent {agent + 1}"
        names = LandmarkNames.of(scene)
        role = ep.role_at(agent, step)
        if role is not None:
            role = names.text(role)  # a tape's own label may name landmarks by id
        else:
            cache = episode_cache(scene, ep)
            role = f"{ROLE_NAMES[int(cache.roles[step, agent])]} (derived)"
        lines = [
            f"<b>{name}</b> at {step * ep.dt:.2f} s",
            f"pose x {x:.2f} m, y {y:.2f} m, heading {math.degrees(heading):.0f}°",
            f"speed {prep.speeds[step, agent]:.2f} m/s",
            f"role {role}",
        ]
        if prep.reward_so_far is not None:
            lines.append(f"reward so far {prep.reward_so_far[step, agent]:.3g}")
        targets = prep.targets[agent] if agent < len(prep.targets) else ()
        if targets:
            lms = scene.landmarks
            lines.append(f"pursues {names.goal([lms[i].id for i in targets if i < len(lms)])}")
        return "<br>".join(lines)
