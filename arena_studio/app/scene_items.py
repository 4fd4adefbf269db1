"""Painting a scene on the canvas: floor, walls, obstacles, landmarks, starts and overlays.

Everything is drawn in world units (metres, y up) with cosmetic pens, so line widths stay in
pixels at any zoom. Sizes of glyphs are given in pixels and converted with the painter's
current scale. Every colour comes from the active theme.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QFontMetricsF, QPainter, QPainterPath, QPen, QPolygonF
from PySide6.QtWidgets import QGraphicsItem, QStyleOptionGraphicsItem, QWidget
from shapely.geometry import MultiPolygon, Polygon

from arena_studio.core.scene.model import Scene
from arena_studio.editing.edits import ObjKey, outline_of
from arena_studio.editing.tools import Preview
from arena_studio.render.paint_guard import guarded, saved
from arena_studio.render.scene_painter import SceneOptions, paint_scene
from arena_studio.render.theme import Theme
from arena_studio.render.view import ViewTransform

Point = tuple[float, float]
WORLD = QRectF(-5000.0, -5000.0, 10000.0, 10000.0)
SEVERITY_ROLE = {"error": "error", "warning": "warning", "info": "info"}


def pen(color: QColor, width: float = 1.0, style: Qt.PenStyle = Qt.PenStyle.SolidLine) -> QPen:
    p = QPen(color, width, style)
    p.setCosmetic(True)
    p.setJoinStyle(Qt.PenJoinStyle.RoundJoin)
    p.setCapStyle(Qt.PenCapStyle.RoundCap)
    return p


def metres_per_pixel(painter: QPainter) -> float:
    t = painter.worldTransform()
    scale = math.hypot(t.m11(), t.m12())
    return 1.0 / scale if scale > 0 else 1.0


def qpoly(points: Sequence[Point]) -> QPolygonF:
    return QPolygonF([QPointF(float(x), float(y)) for x, y in points])


def geometry_path(geom: object) -> QPainterPath:
    """Shapely (multi)polygon to a path with holes (odd-even fill)."""
    path = QPainterPath()
    path.setFillRule(Qt.FillRule.OddEvenFill)
    polys = getattr(geom, "geoms", [geom])
    for g in polys:
        if isinstance(g, MultiPolygon):
            path.addPath(geometry_path(g))
        elif isinstance(g, Polygon) and not g.is_empty:
            for ring in (g.exterior, *g.interiors):
                path.addPolygon(qpoly(list(ring.coords)))
                path.closeSubpath()
    return path


def draw_label(
    painter: QPainter,
    at: Point,
    text: str,
    color: QColor,
    dx: float = 9,
    dy: float = -7,
    backdrop: QColor | None = None,
) -> None:
    """Upright text offset ``(dx, dy)`` pixels (baseline) from a world point.

    A translucent ``backdrop`` keeps the text readable where it crosses a wall or another
    label.
    """
    mpp = metres_per_pixel(painter)
    with saved(painter):
        painter.translate(at[0], at[1])
        painter.scale(mpp, -mpp)
        if backdrop is not None:
            box = QFontMetricsF(painter.font()).boundingRect(text).translated(dx, dy)
            painter.setPen(Qt.PenStyle.NoPen)
            painter.setBrush(backdrop)
            painter.drawRoundedRect(box.adjusted(-2, -1, 2, 1), 3, 3)
        painter.setPen(color)
        painter.drawText(QPointF(dx, dy), text)


class SceneLayer(QGraphicsItem):
    """One item that paints the scene plus the editor's overlays (selection, handles, ...)."""

    def __init__(self, theme: Theme) -> None:
        super().__init__()
        self.theme = theme
        self.scene_value = Scene()
        self.selection: tuple[ObjKey, ...] = ()
        self.handles_for: ObjKey | None = None
        self.active_vertex: int | None = None
        self.findings: list[object] = []
        self.preview: Preview | None = None
        self.highlight: tuple[int, ...] = ()  # landmark indices of a goal being shown
        self.picked: tuple[int, ...] = ()  # landmark indices picked for a new goal
        # The static scene is drawn by the same painter as stills and clips.
        self.options = SceneOptions(grid=True, scale_bar=False, fill_background=False)
        self.show_agent_ids = True  # the replay viewer may label agents its own way
        self.setZValue(10)

    def boundingRect(self) -> QRectF:
        return WORLD

    def paint(
        self, painter: QPainter, option: QStyleOptionGraphicsItem, widget: QWidget | None = None
    ) -> None:
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        t = painter.worldTransform()
        view = ViewTransform(math.hypot(t.m11(), t.m12()), t.dx(), t.dy())
        size = (float(widget.width()), float(widget.height())) if widget else (1600.0, 1000.0)
        with saved(painter):
            painter.resetTransform()
            paint_scene(painter, self.scene_value, view, self.theme, self.options, size)
        # the editor's marks, each on its own: one that fails leaves a placeholder
        if self.show_agent_ids:
            with guarded(painter, "the agent names", theme=self.theme):
                self._paint_agent_ids(painter)
        with guarded(painter, "the goal highlight", theme=self.theme):
            self._paint_highlight(painter)
        with guarded(painter, "the picked landmarks", theme=self.theme):
            self._paint_picked(painter)
        with guarded(painter, "the selection", theme=self.theme):
            self._paint_selection(painter)
        with guarded(painter, "the finding marks", theme=self.theme):
            self._paint_findings(painter)
        with guarded(painter, "the outline being drawn", theme=self.theme):
            self._paint_preview(painter)

    def _paint_agent_ids(self, painter: QPainter) -> None:
        mpp = metres_per_pixel(painter)
        color = self.theme.qcolor("start")
        backdrop = self.theme.qcolor("room_fill", alpha=0.8)
        for agent in self.scene_value.agents:
            start = agent.start
            if start.pose is not None:
                at = (start.pose[0], start.pose[1])
                # above right of the marker: wall landmarks label towards the room, so
                # a start near a wall keeps its name away from theirs
                dx, dy = agent.radius / mpp + 4, -(agent.radius / mpp + 4)
            elif start.region:  # inside the region's top left corner, clear of the walls
                at = (min(p[0] for p in start.region), max(p[1] for p in start.region))
                dx, dy = 4, 14
            else:
                continue
            draw_label(painter, at, agent.id, color, dx=dx, dy=dy, backdrop=backdrop)

    def _paint_highlight(self, painter: QPainter) -> None:
        mpp = metres_per_pixel(painter)
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.setPen(pen(self.theme.qcolor("target_highlight"), 3.0))
        for i in self.highlight:
            if i < len(self.scene_value.landmarks):
                x, y = self.scene_value.landmarks[i].position
                painter.drawEllipse(QPointF(x, y), 11 * mpp, 11 * mpp)

    def _paint_picked(self, painter: QPainter) -> None:
        """Landmarks in the pending goal: a double ring with a plus, unlike a shown goal."""
        mpp = metres_per_pixel(painter)
        color = self.theme.qcolor("target_highlight")
        painter.setBrush(Qt.BrushStyle.NoBrush)
        for i in self.picked:
            if i >= len(self.scene_value.landmarks):
                continue
            x, y = self.scene_value.landmarks[i].position
            painter.setPen(pen(color, 2.5))
            painter.drawEllipse(QPointF(x, y), 12 * mpp, 12 * mpp)
            painter.drawEllipse(QPointF(x, y), 17 * mpp, 17 * mpp)
            cx, cy, r = x + 17 * mpp, y + 17 * mpp, 7 * mpp  # a "+" badge up and right
            painter.setBrush(color)
            painter.setPen(pen(self.theme.qcolor("background"), 1.5))
            painter.drawEllipse(QPointF(cx, cy), r, r)
            painter.drawLine(QPointF(cx - 0.6 * r, cy), QPointF(cx + 0.6 * r, cy))
            painter.drawLine(QPointF(cx, cy - 0.6 * r), QPointF(cx, cy + 0.6 * r))
            painter.setBrush(Qt.BrushStyle.NoBrush)

    def _paint_selection(self, painter: QPainter) -> None:
        mpp = metres_per_pixel(painter)
        sel = self.theme.qcolor("selection")
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.setPen(pen(sel, 2.5))
        from arena_studio.editing.edits import find

        for key in self.selection:
            obj = find(self.scene_value, key)
            if obj is None:
                continue
            pts = outline_of(obj)
            if pts:
                painter.drawPolygon(qpoly(pts))
            elif key[0] == "obstacles":
                c = obj.circle
                painter.drawEllipse(QPointF(*c.center), c.radius, c.radius)
            elif key[0] == "landmarks":
                painter.drawEllipse(QPointF(*obj.position), 9 * mpp, 9 * mpp)
            elif key[0] == "agents" and obj.start.pose is not None:
                x, y, _ = obj.start.pose
                r = max(obj.radius, 5 * mpp) + 3 * mpp
                painter.drawEllipse(QPointF(x, y), r, r)
        if self.handles_for is not None:
            obj = find(self.scene_value, self.handles_for)
            pts = outline_of(obj) if obj is not None else None
            s = 4.5 * mpp
            for i, (x, y) in enumerate(pts or ()):
                active = i == self.active_vertex
                painter.setBrush(sel if active else self.theme.qcolor("handle"))
                painter.setPen(pen(sel, 1.5))
                painter.drawRect(QRectF(x - s, y - s, 2 * s, 2 * s))

    def _paint_findings(self, painter: QPainter) -> None:
        mpp = metres_per_pixel(painter)
        for f in self.findings:
            point = getattr(f, "point", None)
            if point is None:
                continue
            color = self.theme.qcolor(SEVERITY_ROLE.get(getattr(f, "severity", "info"), "info"))
            painter.setBrush(Qt.BrushStyle.NoBrush)
            painter.setPen(pen(color, 2.0))
            x, y = point
            r = 8 * mpp
            painter.drawEllipse(QPointF(x, y), r, r)
            painter.drawLine(QPointF(x, y + r * 0.5), QPointF(x, y - r * 0.1))
            painter.drawPoint(QPointF(x, y - r * 0.45))

    def _paint_preview(self, painter: QPainter) -> None:
        p = self.preview
        if p is None:
            return
        mpp = metres_per_pixel(painter)
        color = self.theme.qcolor("selection")
        painter.setPen(pen(color, 1.5, Qt.PenStyle.DashLine))
        fill = QColor(color)
        fill.setAlphaF(0.10)
        painter.setBrush(QBrush(fill))
        if p.rect is not None:
            (x0, y0), (x1, y1) = p.rect
            painter.drawRect(QRectF(QPointF(x0, y0), QPointF(x1, y1)).normalized())
        if p.circle is not None:
            (cx, cy), r = p.circle
            painter.drawEllipse(QPointF(cx, cy), r, r)
        if len(p.polyline) >= 2:
            if p.closed:  # where the outline will close, faintly
                painter.setPen(Qt.PenStyle.NoPen)
                painter.drawPolygon(qpoly(p.polyline))
                faint = QColor(color)
                faint.setAlphaF(0.45)
                painter.setPen(pen(faint, 1.0, Qt.PenStyle.DotLine))
                painter.drawLine(QPointF(*p.polyline[-1]), QPointF(*p.polyline[0]))
                painter.setPen(pen(color, 1.5, Qt.PenStyle.DashLine))
            painter.setBrush(Qt.BrushStyle.NoBrush)
            painter.drawPolyline(qpoly(p.polyline))
        if p.arrow is not None:
            (ax, ay), (bx, by) = p.arrow
            painter.drawLine(QPointF(ax, ay), QPointF(bx, by))
        painter.setPen(pen(color, 1.5))
        painter.setBrush(self.theme.qcolor("handle"))
        for x, y in p.polyline[:-1] if p.marker else p.polyline:
            painter.drawEllipse(QPointF(x, y), 3.5 * mpp, 3.5 * mpp)
        if p.marker is not None:
            painter.setBrush(color)
            painter.drawEllipse(QPointF(*p.marker), 4 * mpp, 4 * mpp)
