"""The static scene layer with a QPainter: rooms, doorways, walls, obstacles, landmarks, starts.

Used by stills, clip export and as the model of the editor canvas look. Everything here is a
pure function of (scene, view, theme, options), so clip export paints it once per output size
and blits the cached image under every frame.

Glyphs (our own design): a wall-mounted landmark is a half disc whose flat side sits on the
wall line, bulging into the room; a free-standing landmark is a diamond. Both show their reach
radius as a faint dotted circle and their label as text. A start is an arrow at the start pose;
a start region is a dashed outline, with an arrow at its centre when the heading is fixed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from PySide6.QtCore import QLineF, QPointF, QRectF, Qt
from PySide6.QtGui import QBrush, QFontMetricsF, QPainter, QPainterPath, QPen, QPolygonF
from shapely.geometry import Polygon
from shapely.ops import unary_union

from arena_studio.core.export.label_place import LabelPlacement, place_labels, start_marks
from arena_studio.core.geometry.regions import (
    bounds,
    inward_normals,
    obstacle_geometry,
    walkable_area,
)
from arena_studio.core.scene.model import Landmark, Scene
from arena_studio.core.wording import LandmarkNames
from arena_studio.render.drawing import font, geometry_path, label, nice_step
from arena_studio.render.paint_guard import guarded, saved
from arena_studio.render.theme import Theme
from arena_studio.render.view import ViewTransform


@dataclass(frozen=True)
class SceneOptions:
    """What the scene layer shows; sizes in pixels scale with ``ui_scale``."""

    grid: bool = False
    scale_bar: bool = True
    landmark_labels: bool = True
    reach_rings: bool = True
    starts: bool = True
    #: start markers drawn faint (a replay: the bodies and their tags carry identity)
    faint_starts: bool = False
    fill_background: bool = True
    ui_scale: float = 1.0
    #: pixel rectangles (x0, y0, x1, y1) no landmark label may cover, e.g. a viewer's legend
    label_keep_out: tuple[tuple[float, float, float, float], ...] = ()


def paint_scene(
    painter: QPainter,
    scene: Scene,
    view: ViewTransform,
    theme: Theme,
    options: SceneOptions | None = None,
    size: tuple[float, float] | None = None,
) -> None:
    """Paint the whole static scene. ``size`` (pixels) bounds the grid and the scale bar;
    it defaults to the painter's device size."""
    opts = options or SceneOptions()
    w, h = size if size is not None else _device_size(painter)
    with saved(painter):
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        painter.setRenderHint(QPainter.RenderHint.TextAntialiasing, True)
        if opts.fill_background:
            painter.fillRect(QRectF(0, 0, w, h), theme.qcolor("background"))
        # each part on its own: one that cannot be drawn leaves a placeholder, not a crash
        with guarded(painter, "the rooms", theme=theme):
            paint_rooms(painter, scene, view, theme)
        if opts.grid:
            with guarded(painter, "the grid", theme=theme):
                paint_grid(painter, scene, view, theme, (w, h))
        with guarded(painter, "the doorways", theme=theme):
            paint_doorways(painter, scene, view, theme)
        with guarded(painter, "the obstacles", theme=theme):
            paint_obstacles(painter, scene, view, theme)
        with guarded(painter, "the walls", theme=theme):
            paint_walls(painter, scene, view, theme, opts.ui_scale)
        if opts.starts:
            with guarded(painter, "the starts", theme=theme):
                paint_starts(painter, scene, view, theme, opts.ui_scale, opts.faint_starts)
        with guarded(painter, "the landmarks", theme=theme):
            paint_landmarks(painter, scene, view, theme, opts, (w, h))
        if opts.scale_bar:
            with guarded(painter, "the scale bar", theme=theme):
                # just under the drawn scene (not far below it in a tall frame), in the image
                minx, miny, _, _ = bounds(scene)
                corner = view.to_px(minx, miny)
                y = min(h - 16.0 * opts.ui_scale, corner.y() + 28.0 * opts.ui_scale)
                x = max(16.0 * opts.ui_scale, corner.x())
                paint_scale_bar(painter, view, theme, (w, h), opts.ui_scale, (x, y))


def _device_size(painter: QPainter) -> tuple[float, float]:
    dev = painter.device()
    if dev is None:
        return (640.0, 480.0)
    return (float(dev.width()), float(dev.height()))


# -- rooms, doorways, walls ------------------------------------------------------------------
def paint_rooms(painter: QPainter, scene: Scene, view: ViewTransform, theme: Theme) -> None:
    painter.setPen(Qt.PenStyle.NoPen)
    painter.setBrush(theme.qcolor("room_fill"))
    painter.drawPath(geometry_path(walkable_area(scene), view))


@lru_cache(maxsize=64)
def doorways(scene: Scene) -> tuple[tuple[Polygon, tuple[Polygon, ...]], ...]:
    """Rooms that bridge two or more larger rooms: (doorway polygon, the rooms it joins).

    A doorway in our scenes is a small room overlapping the rooms it connects (README), so a
    room counts as one when it meets at least two other rooms that are each larger.
    """
    polys = [Polygon(r.outline).buffer(0) for r in scene.rooms]
    out = []
    for i, p in enumerate(polys):
        others = tuple(
            q for j, q in enumerate(polys) if j != i and q.area > p.area and p.intersects(q)
        )
        if len(others) >= 2:
            out.append((p, others))
    return tuple(out)


def paint_doorways(painter: QPainter, scene: Scene, view: ViewTransform, theme: Theme) -> None:
    """Tint each doorway's opening and mark its thresholds (where the joined walls break)."""
    color = theme.qcolor("doorway")
    for door, joined in doorways(scene):
        opening = door.difference(unary_union(joined))
        tint = theme.qcolor("doorway", alpha=0.35)
        painter.setPen(Qt.PenStyle.NoPen)
        painter.setBrush(tint)
        painter.drawPath(geometry_path(opening if not opening.is_empty else door, view))
        pen = QPen(color, max(1.5, view.length_px(0.04)))
        pen.setCapStyle(Qt.PenCapStyle.FlatCap)
        painter.setPen(pen)
        painter.setBrush(Qt.BrushStyle.NoBrush)
        for room in joined:
            threshold = room.exterior.intersection(door)
            for line in getattr(threshold, "geoms", [threshold]):
                coords = np.asarray(getattr(line, "coords", []))
                if len(coords) >= 2:
                    px = view.map_array(coords)
                    painter.drawPolyline(QPolygonF([QPointF(*p) for p in px]))


def paint_walls(
    painter: QPainter, scene: Scene, view: ViewTransform, theme: Theme, ui_scale: float = 1.0
) -> None:
    """Walls are the walkable area's boundary, so a doorway is a visible gap in them."""
    pen = QPen(theme.qcolor("wall"), max(2.0 * ui_scale, view.length_px(0.07)))
    pen.setJoinStyle(Qt.PenJoinStyle.MiterJoin)
    painter.setPen(pen)
    painter.setBrush(Qt.BrushStyle.NoBrush)
    painter.drawPath(geometry_path(walkable_area(scene), view))


def paint_obstacles(painter: QPainter, scene: Scene, view: ViewTransform, theme: Theme) -> None:
    painter.setPen(QPen(theme.qcolor("obstacle_edge"), 1.2))
    painter.setBrush(theme.qcolor("obstacle_fill"))
    for obstacle in scene.obstacles:
        if obstacle.circle is not None:
            c = obstacle.circle
            r = view.length_px(c.radius)
            painter.drawEllipse(view.to_px(*c.center), r, r)
        else:
            painter.drawPath(geometry_path(obstacle_geometry(obstacle), view))


# -- grid and scale bar ----------------------------------------------------------------------
def paint_grid(
    painter: QPainter, scene: Scene, view: ViewTransform, theme: Theme, size: tuple[float, float]
) -> None:
    """Metric grid over the whole image: minor lines every 1-2-5 step >= 12 px, major x5."""
    minor = nice_step(max(12.0 / view.scale, 1e-6) * 2.5)
    while view.length_px(minor) < 12.0:
        minor *= 2
    x0, y0, x1, y1 = view.world_rect(*size)
    for step, role, width in ((minor, "grid_minor", 1.0), (minor * 5, "grid_major", 1.0)):
        painter.setPen(QPen(theme.qcolor(role), width))
        for gx in np.arange(math.floor(x0 / step) * step, x1 + step, step):
            painter.drawLine(view.to_px(gx, y0), view.to_px(gx, y1))
        for gy in np.arange(math.floor(y0 / step) * step, y1 + step, step):
            painter.drawLine(view.to_px(x0, gy), view.to_px(x1, gy))


def paint_scale_bar(
    painter: QPainter,
    view: ViewTransform,
    theme: Theme,
    size: tuple[float, float],
    ui_scale: float = 1.0,
    at: tuple[float, float] | None = None,
) -> None:
    """A 1-2-5 metre bar about a sixth of the image wide; its left end at ``at`` (pixels),
    by default the bottom left corner."""
    w, h = size
    metres = nice_step(w / 6 / view.scale)
    length = view.length_px(metres)
    x, y = at if at is not None else (16.0 * ui_scale, h - 16.0 * ui_scale)
    pen = QPen(theme.qcolor("scale_bar"), 2.0 * ui_scale)
    pen.setCapStyle(Qt.PenCapStyle.FlatCap)
    painter.setPen(pen)
    tick = 5.0 * ui_scale
    painter.drawLine(QLineF(x, y, x + length, y))
    painter.drawLine(QLineF(x, y - tick, x, y + 1))
    painter.drawLine(QLineF(x + length, y - tick, x + length, y + 1))
    text = f"{metres:g} m"
    # beside the bar's right end: clear of the bar and of the walls just above it
    label(
        painter,
        text,
        QPointF(x + length + 6 * ui_scale, y - tick / 2),
        font(11 * ui_scale),
        theme.qcolor("scale_bar"),
        None,
        align="left",
    )


# -- landmarks and starts --------------------------------------------------------------------
def landmark_glyph(
    view: ViewTransform, lm: Landmark, normal: tuple[float, float], size_px: float
) -> QPainterPath:
    """Half disc on the wall (wall-mounted) or diamond (free-standing), centred on the point."""
    c = view.to_px(*lm.position)
    path = QPainterPath()
    if lm.mount == "wall":
        # screen-space angle of the inward normal (y flips)
        ang = math.degrees(math.atan2(-normal[1], normal[0]))
        rect = QRectF(c.x() - size_px, c.y() - size_px, 2 * size_px, 2 * size_px)
        path.moveTo(c)
        path.arcTo(rect, -ang - 90.0, 180.0)
        path.closeSubpath()
    else:
        s = size_px
        path.addPolygon(
            QPolygonF(
                [
                    QPointF(c.x(), c.y() - s),
                    QPointF(c.x() + s, c.y()),
                    QPointF(c.x(), c.y() + s),
                    QPointF(c.x() - s, c.y()),
                ]
            )
        )
        path.closeSubpath()
    return path


def glyph_size(view: ViewTransform, ui_scale: float) -> float:
    return max(6.0 * ui_scale, min(view.length_px(0.28), 14.0 * ui_scale))


def paint_landmarks(
    painter: QPainter,
    scene: Scene,
    view: ViewTransform,
    theme: Theme,
    opts: SceneOptions,
    size: tuple[float, float] | None = None,
) -> None:
    normals = inward_normals(scene)
    glyph = glyph_size(view, opts.ui_scale)
    if opts.reach_rings:
        for lm in scene.landmarks:
            role = "landmark_wall" if lm.mount == "wall" else "landmark_free"
            pen = QPen(theme.qcolor(role, alpha=0.55), 1.0 * opts.ui_scale)
            pen.setStyle(Qt.PenStyle.DotLine)
            painter.setPen(pen)
            painter.setBrush(Qt.BrushStyle.NoBrush)
            r = view.length_px(lm.reach_radius)
            painter.drawEllipse(view.to_px(*lm.position), r, r)
    for lm, normal in zip(scene.landmarks, normals, strict=True):
        role = "landmark_wall" if lm.mount == "wall" else "landmark_free"
        edge = "wall" if lm.mount == "wall" else "room_fill"
        painter.setPen(QPen(theme.qcolor(edge), 1.2 * opts.ui_scale))
        painter.setBrush(QBrush(theme.qcolor(role)))
        painter.drawPath(landmark_glyph(view, lm, normal, glyph))
    if opts.landmark_labels:
        paint_landmark_labels(
            painter, scene, view, theme, opts.ui_scale, size, opts.starts, opts.label_keep_out
        )


def paint_landmark_labels(
    painter: QPainter,
    scene: Scene,
    view: ViewTransform,
    theme: Theme,
    ui_scale: float = 1.0,
    size: tuple[float, float] | None = None,
    starts: bool = False,
    keep_out: tuple[tuple[float, float, float, float], ...] = (),
) -> None:
    """Labels beside their glyphs, placed clear of walls, obstacles, other glyphs and each
    other (core.export.label_place); with ``size`` they also stay inside the image, with
    ``starts`` clear of the start arrows, and clear of the ``keep_out`` pixel rectangles."""
    qfont = font(12 * ui_scale)
    backdrop = theme.qcolor("room_fill", alpha=0.8)
    color = theme.qcolor("landmark_text")
    names = LandmarkNames.of(scene)  # as every sentence names them (duplicates told apart)
    texts = [names.name(lm.id) for lm in scene.landmarks]
    places = label_places(scene, view, ui_scale, size, starts, keep_out)
    for place, text in zip(places, texts, strict=True):
        x0, y0, x1, y1 = place.box
        top_left, bottom_right = view.to_px(x0, y1), view.to_px(x1, y0)
        mid_y = (top_left.y() + bottom_right.y()) / 2
        if place.align == "left":
            anchor = QPointF(top_left.x() + LABEL_PAD, mid_y)
        elif place.align == "right":
            anchor = QPointF(bottom_right.x() - LABEL_PAD, mid_y)
        else:
            anchor = QPointF((top_left.x() + bottom_right.x()) / 2, mid_y)
        label(painter, text, anchor, qfont, color, backdrop, place.align, LABEL_PAD)


#: padding around a label's text inside its backdrop (pixels; drawing.label's default)
LABEL_PAD = 2.0


@lru_cache(maxsize=16)  # repaints that keep the view (hover, selection) reuse the layout
def label_places(
    scene: Scene,
    view: ViewTransform,
    ui_scale: float = 1.0,
    size: tuple[float, float] | None = None,
    starts: bool = False,
    keep_out: tuple[tuple[float, float, float, float], ...] = (),
) -> tuple[LabelPlacement, ...]:
    """Where each landmark's label box goes in world metres, text measured in our font;
    ``keep_out``: pixel rectangles (x0, y0, x1, y1) to keep clear of."""
    metrics = QFontMetricsF(font(12 * ui_scale))
    px = 1.0 / view.scale  # metres per pixel
    names = LandmarkNames.of(scene)
    sizes = [
        (
            (metrics.horizontalAdvance(names.name(lm.id)) + 2 * LABEL_PAD) * px,
            (metrics.height() + 2 * LABEL_PAD) * px,
        )
        for lm in scene.landmarks
    ]
    frame = None
    if size is not None:  # keep 4 px inside the image
        x0, y0, x1, y1 = view.world_rect(*size)
        frame = (x0 + 4 * px, y0 + 4 * px, x1 - 4 * px, y1 - 4 * px)
    wall_half = max(2.0 * ui_scale, view.length_px(0.07)) / 2
    # a start's heading arrow: 14 px at least, else 2.2 agent radii long (paint_starts)
    avoid = start_marks(scene, 14.0 * ui_scale * px, 2.2) if starts else []
    covered = []
    for x0, y0, x1, y1 in keep_out:  # pixels (y down) -> world box (y up)
        (wx0, wy1), (wx1, wy0) = view.to_world(x0, y0), view.to_world(x1, y1)
        covered.append((wx0, wy0, wx1, wy1))
    return place_labels(
        scene,
        sizes,
        glyph_size(view, ui_scale) * px,
        6.0 * ui_scale * px,
        clearance=wall_half * px,
        frame=frame,
        avoid=avoid,
        covered=covered,
    )


def arrow_path(tip_base: QPointF, heading: float, length: float) -> QPainterPath:
    """Arrow from ``tip_base`` along a world heading (radians CCW from +x), screen space."""
    dx, dy = math.cos(heading), -math.sin(heading)
    tip = QPointF(tip_base.x() + dx * length, tip_base.y() + dy * length)
    head = length * 0.4
    left = QPointF(tip.x() - dx * head - dy * head * 0.6, tip.y() - dy * head + dx * head * 0.6)
    right = QPointF(tip.x() - dx * head + dy * head * 0.6, tip.y() - dy * head - dx * head * 0.6)
    path = QPainterPath(tip_base)
    path.lineTo(tip)
    path.moveTo(left)
    path.lineTo(tip)
    path.lineTo(right)
    return path


def paint_starts(
    painter: QPainter,
    scene: Scene,
    view: ViewTransform,
    theme: Theme,
    ui_scale: float = 1.0,
    faint: bool = False,
) -> None:
    color = theme.qcolor("start", alpha=0.3 if faint else None)
    for agent in scene.agents:
        start = agent.start
        length = max(14.0 * ui_scale, view.length_px(agent.radius * 2.2))
        if start.pose is not None:
            x, y, heading = start.pose
            c = view.to_px(x, y)
            r = view.length_px(agent.radius)
            pen = QPen(color, 1.2 * ui_scale)
            pen.setStyle(Qt.PenStyle.DashLine)
            painter.setPen(pen)
            painter.setBrush(Qt.BrushStyle.NoBrush)
            painter.drawEllipse(c, r, r)
            pen = QPen(color, 1.8 * ui_scale)
            pen.setStyle(Qt.PenStyle.SolidLine)
            painter.setPen(pen)
            painter.drawPath(arrow_path(c, heading, length))
        elif start.region is not None:
            region = Polygon(start.region)
            pen = QPen(color, 1.4 * ui_scale)
            pen.setStyle(Qt.PenStyle.DashLine)
            painter.setPen(pen)
            painter.setBrush(theme.qcolor("start_region"))
            painter.drawPath(geometry_path(region, view))
            if start.heading is not None:
                c = view.to_px(region.centroid.x, region.centroid.y)
                pen.setStyle(Qt.PenStyle.SolidLine)
                painter.setPen(pen)
                painter.drawPath(arrow_path(c, start.heading, length))
