"""The scrub bar: a time ruler with the episode's events drawn as small glyphs.

Two lanes: the upper lane holds team-level events (success, diagnosis, collisions), the lower
lane holds per-agent events in the agent's identity colour (target reached: filled wedge up;
target left: open wedge down; role change: short bar). The diagnosis is a flag across both
lanes so the moment the team lost its chance stands out. A message is a small speech bubble
in the speaker's colour in the upper lane (at the start when said before the episode).
Press or drag anywhere to seek.
"""

from __future__ import annotations

import math

from PySide6.QtCore import QPointF, QRect, QRectF, QSize, Qt
from PySide6.QtGui import (
    QColor,
    QMouseEvent,
    QPainter,
    QPainterPath,
    QPaintEvent,
    QPen,
    QPixmap,
)
from PySide6.QtWidgets import QSizePolicy, QToolTip, QWidget

from arena_studio.app.replay.prepared import EventMark
from arena_studio.app.replay.transport import PlaybackClock
from arena_studio.render.paint_guard import guarded_paint_event
from arena_studio.render.theme import Theme, load_theme

MARGIN_X = 14.0
TEAM_KINDS = ("success", "diagnosis", "collision", "message", "other")
#: half size of an event glyph (pixels)
GLYPH_R = 6.5
#: least distance between glyph centres in one lane: a pile-up is spread sideways
GLYPH_GAP = 2 * GLYPH_R + 1.5


def spread(xs: list[float], gap: float, left: float, right: float) -> list[float]:
    """Glyph centres for marks at ``xs`` (sorted) in one lane: each at least ``gap`` from
    its neighbour, as near its own time as that allows, inside [left, right]. A pile at
    the end of an episode spreads leftwards instead of off the bar."""
    out: list[float] = []
    for x in xs:
        out.append(max(x, out[-1] + gap) if out else x)
    for k in range(len(out) - 1, -1, -1):
        limit = right if k == len(out) - 1 else out[k + 1] - gap
        out[k] = min(out[k], limit)
    return [max(v, left) for v in out]
HIT_RADIUS_PX = 6.0
CURSOR_HALF_PX = 8  # half the strip repainted around the cursor when the step changes


def nice_tick(span_s: float, width_px: float, min_gap_px: float = 60.0) -> float:
    """Ruler spacing (1, 2 or 5 x 10^k seconds) that keeps labels ``min_gap_px`` apart."""
    if span_s <= 0 or width_px <= 0:
        return 1.0
    raw = span_s * min_gap_px / width_px
    base = 10 ** math.floor(math.log10(raw))
    for mult in (1, 2, 5, 10):
        if mult * base >= raw:
            return mult * base
    return 10 * base


class TimelineBar(QWidget):
    """Scrub bar bound to a :class:`PlaybackClock`."""

    def __init__(self, clock: PlaybackClock, theme: Theme | None = None, parent=None) -> None:
        super().__init__(parent)
        self._clock = clock
        self._theme = theme or load_theme("light")
        self._events: tuple[EventMark, ...] = ()
        self._agent_count = 0
        self._compared: tuple[EventMark, ...] = ()
        self._static: tuple[tuple, QPixmap] | None = None
        self._cursor_painted_x: float | None = None  # where the last paint put the cursor
        self.setMinimumHeight(64)
        self._glyph_x: dict[int, float] = {}  # id(mark) -> where its glyph was drawn
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Fixed)
        self.setMouseTracking(True)
        self.setFocusPolicy(Qt.FocusPolicy.NoFocus)  # keys go to the window's actions
        self.setToolTip("")
        clock.stepChanged.connect(self._on_step)
        clock.loopChanged.connect(self.update)
        clock.lengthChanged.connect(self.update)

    def sizeHint(self) -> QSize:
        return QSize(600, 58)

    # -- data --------------------------------------------------------------------------
    def set_theme(self, theme: Theme) -> None:
        self._theme = theme
        self.update()

    def set_events(self, events: tuple[EventMark, ...], agent_count: int = 0) -> None:
        self._events = tuple(events)
        self._agent_count = agent_count
        self.update()

    def set_compared_events(self, events: tuple[EventMark, ...]) -> None:
        """The compared episode's events, drawn faint among the shown one's on the shared
        timeline (both episodes' moments on one ruler)."""
        self._compared = tuple(events)
        self.update()

    @property
    def compared_events(self) -> tuple[EventMark, ...]:
        return self._compared

    @property
    def events(self) -> tuple[EventMark, ...]:
        return self._events

    def _on_step(self, step: int) -> None:
        """A new step moves only the cursor: repaint the strips under its old and new place
        (the track under them is a cached blit), nothing while hidden or when it stays put."""
        if not self.isVisible():
            return
        x = self.x_of_step(step)
        if x == self._cursor_painted_x:
            return
        self.update(self._cursor_strip(x))
        if self._cursor_painted_x is not None:
            self.update(self._cursor_strip(self._cursor_painted_x))

    def _cursor_strip(self, x: float) -> QRect:
        """Pixels the cursor (2 px line, 10 px wide head, antialiased) can touch."""
        return QRect(math.floor(x) - CURSOR_HALF_PX, 0, 2 * CURSOR_HALF_PX + 1, self.height())

    # -- geometry ----------------------------------------------------------------------
    def _track(self) -> QRectF:
        return QRectF(MARGIN_X, 4.0, max(self.width() - 2 * MARGIN_X, 1.0), self.height() - 22.0)

    def x_of_step(self, step: float) -> float:
        track = self._track()
        last = max(self._clock.steps - 1, 1)
        return track.left() + track.width() * (step / last)

    def step_at_x(self, x: float) -> int:
        track = self._track()
        last = max(self._clock.steps - 1, 1)
        frac = (x - track.left()) / track.width()
        return round(min(max(frac, 0.0), 1.0) * last)

    def _lane_y(self, kind: str) -> float:
        track = self._track()
        upper = kind in TEAM_KINDS
        return track.top() + track.height() * (0.27 if upper else 0.73)

    def event_at(self, pos: QPointF) -> EventMark | None:
        best, best_d = None, HIT_RADIUS_PX
        for mark in self._events:
            dx = abs(self._glyph_x.get(id(mark), self.x_of_step(mark.step)) - pos.x())
            dy = abs(self._lane_y(mark.kind) - pos.y())
            track = self._track()
            if mark.kind == "diagnosis" and track.top() <= pos.y() <= track.bottom():
                dy = 0.0  # the flag's pole spans both lanes
            d = max(dx, dy)
            if d <= best_d:
                best, best_d = mark, d
        return best

    # -- input -------------------------------------------------------------------------
    def mousePressEvent(self, event: QMouseEvent) -> None:
        if event.button() == Qt.MouseButton.LeftButton:
            self._clock.pause()
            self._clock.seek(self.step_at_x(event.position().x()))

    def mouseMoveEvent(self, event: QMouseEvent) -> None:
        if event.buttons() & Qt.MouseButton.LeftButton:
            self._clock.seek(self.step_at_x(event.position().x()))
            return
        mark = self.event_at(event.position())
        if mark is not None:
            t = mark.step * self._clock.dt
            QToolTip.showText(
                event.globalPosition().toPoint(), f"{t:.2f} s (step {mark.step}): {mark.text}", self
            )
        else:
            QToolTip.hideText()

    # -- drawing -----------------------------------------------------------------------
    @guarded_paint_event("the scrub bar")
    def paintEvent(self, event: QPaintEvent) -> None:
        """Blit the cached track (ruler, loop, event glyphs), then draw the cursor: playback
        repaints every step, and thousands of glyphs must not be redrawn each time."""
        dpr = self.devicePixelRatioF()
        key = (
            self.width(),
            self.height(),
            dpr,
            id(self._events),  # the tuple is held, so its id cannot be reused
            id(self._compared),
            self._theme.name,
            self._clock.steps,
            self._clock.dt,
            self._clock.loop,
        )
        if self._static is None or self._static[0] != key:
            pm = QPixmap(max(int(self.width() * dpr), 1), max(int(self.height() * dpr), 1))
            pm.setDevicePixelRatio(dpr)
            sp = QPainter(pm)
            self._paint_static(sp)
            sp.end()
            self._static = (key, pm)
        p = QPainter(self)
        p.drawPixmap(0, 0, self._static[1])
        p.setRenderHint(QPainter.RenderHint.Antialiasing)
        self._paint_cursor(p, self._track())
        p.end()

    def _paint_static(self, p: QPainter) -> None:
        theme = self._theme
        p.setRenderHint(QPainter.RenderHint.Antialiasing)
        p.fillRect(QRectF(0, 0, self.width(), self.height()), theme.qcolor("room_fill"))
        track = self._track()
        p.setPen(QPen(theme.qcolor("grid_major"), 1.0))
        p.setBrush(theme.qcolor("background"))
        p.drawRoundedRect(track, 4, 4)
        mid = track.top() + track.height() / 2
        p.setPen(QPen(theme.qcolor("grid_minor"), 1.0, Qt.PenStyle.DashLine))
        p.drawLine(QPointF(track.left(), mid), QPointF(track.right(), mid))
        self._paint_loop(p, track)
        self._paint_ruler(p, track)
        p.setOpacity(0.45)  # the compared episode's marks, faint under the shown one's
        for mark in self._compared:
            self._paint_mark(p, mark, track)
        p.setOpacity(1.0)
        self._glyph_x = self._place_glyphs(self._events, track)
        for mark in self._events:
            self._paint_mark(p, mark, track, self._glyph_x.get(id(mark)))

    def _place_glyphs(self, events: tuple[EventMark, ...], track: QRectF) -> dict[int, float]:
        """Per lane, glyph centres spread so none covers another (see :func:`spread`); the
        diagnosis pennant keeps its true place (its pole marks the moment)."""
        placed: dict[int, float] = {}
        for upper in (True, False):
            lane = [
                m for m in events
                if (m.kind in TEAM_KINDS) == upper and m.kind != "diagnosis"
            ]  # fmt: skip
            lane.sort(key=lambda m: m.step)
            xs = spread(
                [self.x_of_step(m.step) for m in lane],
                GLYPH_GAP,
                track.left() + GLYPH_R,
                track.right() - GLYPH_R,
            )
            placed.update({id(m): x for m, x in zip(lane, xs, strict=True)})
        return placed

    def _paint_loop(self, p: QPainter, track: QRectF) -> None:
        loop = self._clock.loop
        if not loop:
            return
        x0, x1 = self.x_of_step(loop[0]), self.x_of_step(loop[1])
        p.setPen(Qt.PenStyle.NoPen)
        p.setBrush(self._theme.qcolor("info", 0.18))
        p.drawRect(QRectF(x0, track.top(), x1 - x0, track.height()))
        p.setPen(QPen(self._theme.qcolor("info"), 2.0))
        for x in (x0, x1):
            p.drawLine(QPointF(x, track.top()), QPointF(x, track.bottom()))

    def _paint_ruler(self, p: QPainter, track: QRectF) -> None:
        dt, steps = self._clock.dt, self._clock.steps
        span = max(steps - 1, 1) * dt
        tick = nice_tick(span, track.width())
        font = p.font()
        font.setPointSizeF(max(font.pointSizeF() * 0.85, 7.0))
        p.setFont(font)
        p.setPen(QPen(self._theme.qcolor("text_muted"), 1.0))
        n = int(span / tick + 1e-9)
        for i in range(n + 1):
            t = i * tick
            x = self.x_of_step(t / dt)
            p.drawLine(QPointF(x, track.bottom()), QPointF(x, track.bottom() + 4))
            label = f"{t:g} s"
            p.drawText(
                QRectF(x - 30, track.bottom() + 4, 60, 14), Qt.AlignmentFlag.AlignCenter, label
            )

    def _mark_color(self, mark: EventMark) -> QColor:
        theme = self._theme
        if mark.kind in ("diagnosis", "mismatch"):
            return theme.qcolor("error")
        if mark.kind == "success":
            return theme.qcolor("target_highlight")
        if mark.kind == "collision":
            return theme.qcolor("warning")
        if mark.agent is not None and mark.kind in ("reached", "left", "role", "message"):
            return theme.agent_color(mark.agent)
        return theme.qcolor("text_muted")

    def _paint_mark(
        self, p: QPainter, mark: EventMark, track: QRectF, x: float | None = None
    ) -> None:
        true_x = self.x_of_step(mark.step)
        x = true_x if x is None else x
        y = self._lane_y(mark.kind)
        color = self._mark_color(mark)
        r = GLYPH_R
        if abs(x - true_x) > 0.5 and mark.kind != "diagnosis":  # spread: a tick at its time
            p.setPen(QPen(color, 1.0))
            lane_edge = track.top() + 1 if mark.kind in TEAM_KINDS else track.bottom() - 1
            p.drawLine(QPointF(true_x, lane_edge), QPointF(x, y))
        edge = QPen(self._theme.qcolor("text"), 0.8)
        if mark.kind == "reached":  # filled wedge pointing up: arrived at a target
            path = QPainterPath(QPointF(x, y - r))
            path.lineTo(x + r, y + r * 0.8)
            path.lineTo(x - r, y + r * 0.8)
            path.closeSubpath()
            p.setPen(edge)
            p.setBrush(color)
            p.drawPath(path)
        elif mark.kind == "left":  # open wedge pointing down: walked off a target
            path = QPainterPath(QPointF(x, y + r))
            path.lineTo(x + r, y - r * 0.8)
            path.lineTo(x - r, y - r * 0.8)
            path.closeSubpath()
            p.setPen(QPen(color, 1.8))
            p.setBrush(Qt.BrushStyle.NoBrush)
            p.drawPath(path)
        elif mark.kind == "role":  # short upright bar
            p.setPen(QPen(color, 2.5, Qt.PenStyle.SolidLine, Qt.PenCapStyle.RoundCap))
            p.drawLine(QPointF(x, y - r), QPointF(x, y + r))
        elif mark.kind == "success":  # gold lozenge
            path = QPainterPath(QPointF(x, y - r - 1))
            path.lineTo(x + r + 1, y)
            path.lineTo(x, y + r + 1)
            path.lineTo(x - r - 1, y)
            path.closeSubpath()
            p.setPen(edge)
            p.setBrush(color)
            p.drawPath(path)
        elif mark.kind == "collision":  # a small cross
            p.setPen(QPen(color, 2.2, Qt.PenStyle.SolidLine, Qt.PenCapStyle.RoundCap))
            p.drawLine(QPointF(x - r, y - r), QPointF(x + r, y + r))
            p.drawLine(QPointF(x - r, y + r), QPointF(x + r, y - r))
        elif mark.kind == "diagnosis":  # a pennant on a pole through both lanes
            p.setPen(QPen(color, 2.0))
            p.drawLine(QPointF(x, track.top() + 1), QPointF(x, track.bottom() - 1))
            side = -1.0 if x + 13 > track.right() else 1.0  # at the end: the flag points in
            flag = QPainterPath(QPointF(x, track.top() + 2))
            flag.lineTo(x + side * 13, track.top() + 7.5)
            flag.lineTo(x, track.top() + 13)
            flag.closeSubpath()
            p.setPen(Qt.PenStyle.NoPen)
            p.setBrush(color)
            p.drawPath(flag)
        elif mark.kind == "message":  # a speech bubble with its tail down-left
            bubble = QPainterPath()
            bubble.addRoundedRect(QRectF(x - r, y - r, 2 * r + 2, 2 * r - 2), 2.5, 2.5)
            tail = QPainterPath(QPointF(x - r + 2, y + r - 3))
            tail.lineTo(x - r, y + r + 1)
            tail.lineTo(x - r + 5, y + r - 3)
            tail.closeSubpath()
            p.setPen(edge)
            p.setBrush(color)
            p.drawPath(bubble.united(tail))
        elif mark.kind == "mismatch":  # hollow square: the recording breaks the scene's rules
            p.setPen(QPen(color, 1.8))
            p.setBrush(Qt.BrushStyle.NoBrush)
            p.drawRect(QRectF(x - r + 0.5, y - r + 0.5, 2 * r - 1, 2 * r - 1))
        else:
            p.setPen(Qt.PenStyle.NoPen)
            p.setBrush(color)
            p.drawEllipse(QPointF(x, y), 2.5, 2.5)

    def _paint_cursor(self, p: QPainter, track: QRectF) -> None:
        x = self.x_of_step(self._clock.step)
        self._cursor_painted_x = x
        color = self._theme.qcolor("selection")
        p.setPen(QPen(color, 2.0))
        p.drawLine(QPointF(x, track.top() - 2), QPointF(x, track.bottom() + 2))
        head = QPainterPath(QPointF(x - 5, track.top() - 4))
        head.lineTo(x + 5, track.top() - 4)
        head.lineTo(x, track.top() + 3)
        head.closeSubpath()
        p.setPen(Qt.PenStyle.NoPen)
        p.setBrush(color)
        p.drawPath(head)
