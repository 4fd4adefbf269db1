"""One episode frame over the scene: agents, roles, trails, goal overlays, collisions, clock.

Visual language (our own design):
- identity: each agent's body disc is filled with its identity colour (theme ``identity``),
  drawn at its true radius, with a heading tick from the centre to the rim;
- role (second channel, independent of colour): no ring = moving; thin solid ring = heading to
  a target; double ring = holding a target; hollow body with a dotted ring = idle; a triangle
  badge at the upper right = off the team goal. Tape labels reuse these styles in order;
- beyond 6 agents every body also carries its number (1-based scene order), a non-colour cue;
- team-goal targets: a thick ring at the reach radius (solid while covered, dashed while not),
  a pip per agent that has covered it so far and "rover-2 8.2 s" for the first to reach it;
- pursued goals: a line from each agent to the target it is heading to, solid when the
  target is on the team goal, dashed when it is not, so misalignment shows at a glance; its
  other pursued targets get a faint dotted line;
- name tags: each body's id in a small box beside it, clear of labels and other tags;
  stacked bodies share one tag and a count badge (:mod:`.name_tags`);
- trails fade with age: a small team's wide trails block by block (:mod:`.trail_blocks`),
  a crowd's 1 px trails in bands (one path per colour group per band, :mod:`.fastpath`);
- collisions: an x where a contact began, larger for the last second.
"""

from __future__ import annotations

import bisect
import functools
import math
import time
from collections.abc import Callable
from typing import Any

import numpy as np
from PySide6.QtCore import QPoint, QPointF, QRectF, Qt
from PySide6.QtGui import (
    QFontMetricsF,
    QImage,
    QPainter,
    QPen,
    QPolygonF,
)

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.render.agent_painter import paint_agents, prefill_sprites
from arena_studio.render.drawing import cached_pen, font, label
from arena_studio.render.episode_cache import EpisodeCache, episode_cache
from arena_studio.render.fastpath import (
    grouped_rows_paths,
    line_pieces,
    polylines_path,
    segments_path,
)
from arena_studio.render.legend import paint_banner, paint_clock, paint_legend
from arena_studio.render.name_tags import paint_name_tags, tag_names, wants_tags
from arena_studio.render.options import FrameOptions
from arena_studio.render.paint_guard import guarded, saved
from arena_studio.render.raster import blits_exactly
from arena_studio.render.scene_painter import label_places
from arena_studio.render.theme import Theme
from arena_studio.render.trail_blocks import paint_wide_trails, prefill_blocks
from arena_studio.render.view import ViewTransform

#: above this many trail points in a frame, trails are drawn as 1-pixel lines (speed)
THIN_TRAIL_POINTS = 2400
#: above this many trail points in a frame, trails keep every k-th step
MAX_TRAIL_POINTS = 16000
#: trails keep every k-th step when agents typically move less than this many pixels a step
TRAIL_POINT_SPACING = 4.0

#: Largest pixel coordinate drawn; beyond it positions are damage, not drawing.
PIXEL_LIMIT = 1e7

__all__ = [
    "FrameOptions",
    "paint_banner",
    "paint_clock",
    "paint_episode_frame",
    "paint_legend",
]


def paint_episode_frame(
    painter: QPainter,
    scene: Scene,
    episode: Episode,
    step: int,
    view: ViewTransform,
    theme: Theme,
    options: FrameOptions | None = None,
) -> None:
    """Paint the episode's dynamic layer at ``step`` (clamped) over an already painted scene.

    Never raises: a layer that cannot be drawn becomes a placeholder and one report."""
    with guarded(painter, "the episode", theme=theme):
        _paint_episode_frame(painter, scene, episode, step, view, theme, options)


def _paint_episode_frame(
    painter: QPainter,
    scene: Scene,
    episode: Episode,
    step: int,
    view: ViewTransform,
    theme: Theme,
    options: FrameOptions | None,
) -> None:
    opts = options or FrameOptions()
    cache = episode_cache(scene, episode)
    if cache.steps == 0:
        return
    step = int(min(max(step, 0), cache.steps - 1))
    ui = opts.ui_scale or 1.0
    raster = blits_exactly(painter)  # once a frame: asking Qt costs ~10 us
    with saved(painter):
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        # each layer on its own: one that cannot be drawn leaves a placeholder, not a crash
        if opts.par_paths:
            with guarded(painter, "the par-time paths", theme=theme):
                paint_par_paths(painter, cache, view, theme, ui)
        if opts.team_goal and cache.has_team_goal:
            with guarded(painter, "the team-goal targets", theme=theme):
                paint_targets(painter, cache, step, view, theme, ui, raster)
        if opts.trails:
            with guarded(painter, "the trails", theme=theme):
                paint_trails(painter, cache, step, view, theme, opts, ui, raster)
        if opts.pursued:
            with guarded(painter, "the pursued-goal lines", theme=theme):
                paint_pursued(painter, cache, step, view, theme, ui)
        if opts.collisions:
            with guarded(painter, "the contact marks", theme=theme):
                paint_collisions(painter, cache, step, view, theme, ui, opts, raster)
        with guarded(painter, "the agents", theme=theme):
            paint_agents(painter, cache, step, view, theme, opts, ui, raster)
        if opts.focus is not None and 0 <= opts.focus < cache.agents:
            with guarded(painter, "the focused agent", theme=theme):
                paint_focus(painter, cache, step, view, theme, opts, ui)
        if wants_tags(cache, opts):
            with guarded(painter, "the name tags", theme=theme):
                dev = painter.device()
                size = (float(dev.width()), float(dev.height()))
                blocked = text_boxes(cache, view, ui, opts, size) + list(opts.tag_keep_out)
                paint_name_tags(painter, cache, step, view, theme, opts, ui, blocked)


def paint_focus(
    painter: QPainter,
    cache: EpisodeCache,
    step: int,
    view: ViewTransform,
    theme: Theme,
    opts: FrameOptions,
    ui: float,
) -> None:
    """One agent strong, the rest dimmed: a veil in the background colour over the frame so
    far, then that agent's trail, its line to the target it heads to, and its body again."""
    a = int(opts.focus or 0)
    dev = painter.device()
    veil = theme.qcolor("background", alpha=0.6)
    painter.fillRect(QRectF(0, 0, float(dev.width()), float(dev.height())), veil)
    first = max(0, step - round(max(opts.trail_seconds, 1.0) / max(cache.episode.dt, 1e-6)))
    pts = view.map_array(cache.xy[first : step + 1, a])
    pts = pts[np.isfinite(pts).all(axis=1)]
    if len(pts) >= 2:
        painter.setPen(QPen(theme.agent_color(a), 3.0 * ui))
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.drawPolyline(QPolygonF([QPointF(float(x), float(y)) for x, y in pts]))
    head = int(heading_targets(cache, step)[a])
    here = view.map_array(cache.xy[step, a : a + 1])[0]
    if head >= 0 and np.isfinite(here).all():
        lm, _reach = cache.landmark_arrays()
        to = view.to_px(float(lm[head, 0]), float(lm[head, 1]))
        painter.setPen(QPen(theme.agent_color(a), 2.2 * ui))
        painter.drawLine(QPointF(float(here[0]), float(here[1])), to)
    if np.isfinite(here).all():
        r = max(float(cache.radius[a] * view.scale), 2.5 * ui)
        painter.setPen(QPen(theme.qcolor("text"), 2.0 * ui))
        painter.setBrush(theme.agent_color(a))
        painter.drawEllipse(QPointF(float(here[0]), float(here[1])), r, r)
        painter.setBrush(Qt.BrushStyle.NoBrush)
        painter.setPen(QPen(theme.qcolor("selection"), 2.0 * ui))
        painter.drawEllipse(QPointF(float(here[0]), float(here[1])), r + 5 * ui, r + 5 * ui)


def text_boxes(
    cache: EpisodeCache,
    view: ViewTransform,
    ui: float,
    opts: FrameOptions,
    size: tuple[float, float],
) -> list[tuple[float, float, float, float]]:
    """Pixel boxes name tags keep clear of: landmark labels and targets' arrival texts
    (worked out once per view)."""
    key = ("episode_painter.text_boxes", view, ui, opts.landmark_labels, opts.team_goal, size)
    got = cache.memo.get(key)
    if got is not None:
        return got
    boxes: list[tuple[float, float, float, float]] = []
    if opts.landmark_labels:
        for place in label_places(cache.scene, view, ui, None, False):
            x0, y0, x1, y1 = place.box
            tl, br = view.to_px(x0, y1), view.to_px(x1, y0)
            boxes.append((tl.x(), tl.y(), br.x(), br.y()))
    if opts.team_goal and cache.has_team_goal:
        metrics = QFontMetricsF(font(11 * ui, bold=True))
        half_w = metrics.horizontalAdvance(_WIDEST_ARRIVAL) / 2 + 2.0
        half_h = metrics.height() / 2 + 2.0
        above = _arrival_above(cache, view, ui, size)
        for l_idx in cache.team_indices():
            lm = cache.scene.landmarks[l_idx]
            c = view.to_px(*lm.position)
            r = max(view.length_px(lm.reach_radius), 6 * ui)
            off = _arrival_offset(r, ui, above[l_idx])
            cy = c.y() - off if above[l_idx] else c.y() + off
            boxes.append((c.x() - half_w, cy - half_h, c.x() + half_w, cy + half_h))
    cache.memo[key] = boxes
    return boxes


# -- overlays ----------------------------------------------------------------------------------
def paint_par_paths(
    painter: QPainter, cache: EpisodeCache, view: ViewTransform, theme: Theme, ui: float
) -> None:
    paths = cache.par_time_paths()
    if not paths:
        return
    pen = QPen(theme.qcolor("path", alpha=0.8), 1.5 * ui)
    pen.setStyle(Qt.PenStyle.DashDotLine)
    painter.setPen(pen)
    painter.setBrush(Qt.BrushStyle.NoBrush)
    for pts in paths:
        if len(pts) >= 2:
            painter.drawPath(polylines_path(view.map_array(pts), np.zeros(len(pts), bool)))


def paint_targets(
    painter: QPainter,
    cache: EpisodeCache,
    step: int,
    view: ViewTransform,
    theme: Theme,
    ui: float,
    raster: bool | None = None,
) -> None:
    """Team-goal targets: ring, pips of who reached them, "n at t s" for the first.

    A target changes only when its cover state or its list of visitors changes, so on a raster
    image each state is drawn once into a sprite aligned to the pixel grid and blitted after
    (the dashed wide ring and the label cost ~0.1 ms a target a frame otherwise)."""
    scene = cache.scene
    raster = blits_exactly(painter) if raster is None else raster
    covered_now = cache.covered[step].tolist()
    device = painter.device()
    above = _arrival_above(cache, view, ui, (float(device.width()), float(device.height())))
    names = tag_names(cache)
    for l_idx in cache.team_indices():
        lm = scene.landmarks[l_idx]
        c = view.to_px(*lm.position)
        r = max(view.length_px(lm.reach_radius), 6 * ui)
        covered = covered_now[l_idx]
        agents, firsts = cache.arrivals(l_idx)
        order = agents[: min(bisect.bisect_right(firsts, step), 12)]
        text = f"{names[order[0]]} {firsts[0] * cache.episode.dt:.1f} s" if order else ""
        up = above[l_idx]
        shift = _text_shift(c.x(), text, ui, float(device.width()))
        if not raster:
            _draw_target(painter, c, r, covered, order, text, theme, ui, up, shift)
            continue
        key = (theme.name, round(c.x(), 4), round(c.y(), 4), r, ui, covered, order, text, up,
               round(shift, 4))  # fmt: skip
        sprite = _TARGET_SPRITES.get(key)
        if sprite is None:
            sprite = _target_sprite(c, r, covered, order, text, theme, ui, up, shift)
            if len(_TARGET_SPRITES) > 512:
                _TARGET_SPRITES.clear()
            _TARGET_SPRITES[key] = sprite
        painter.drawImage(sprite[0], sprite[1])


@functools.lru_cache(maxsize=256)
def _arrival_half_width(text: str, ui: float) -> float:
    """Half an arrival text's width plus its backdrop: measured once per text, not per frame."""
    return QFontMetricsF(font(11 * ui, bold=True)).horizontalAdvance(text) / 2 + 4.0


def _text_shift(x: float, text: str, ui: float, width: float) -> float:
    """Pixels to move a target's "n at t s" text sideways so it stays inside the frame (a
    wall landmark's target sits at the frame's edge); 0 when it fits centred."""
    if not text or width <= 0:
        return 0.0
    half = _arrival_half_width(text, ui)
    if 2 * half >= width:
        return 0.0
    return max(half - x, 0.0) - max(x + half - width, 0.0)


_TARGET_SPRITES: dict[tuple[Any, ...], tuple[QPoint, QImage]] = {}
#: the widest "n at t s" text a target shows, for keeping it off the landmark's label
_WIDEST_ARRIVAL = "rover-99 999.9 s"


def _arrival_above(
    cache: EpisodeCache, view: ViewTransform, ui: float, size: tuple[float, float]
) -> list[bool]:
    """Per landmark: True when the "n at t s" text goes above its ring, because the
    landmark's label (placed by the scene painter, render.scene_painter.label_places) sits
    where the text would go below it. Worked out once per view."""
    key = ("episode_painter.arrival_above", view, ui, size)
    got = cache.memo.get(key)
    if got is None:
        if len(cache.memo) > 64:
            cache.memo.clear()
        metrics = QFontMetricsF(font(11 * ui, bold=True))
        half_w = metrics.horizontalAdvance(_WIDEST_ARRIVAL) / 2 + 2.0
        half_h = metrics.height() / 2 + 2.0
        places = label_places(cache.scene, view, ui, size, False)
        got = []
        for lm, place in zip(cache.scene.landmarks, places, strict=True):
            c = view.to_px(*lm.position)
            r = max(view.length_px(lm.reach_radius), 6 * ui)
            cy = c.y() + r + 10 * ui  # the text's middle below the ring
            x0, y0, x1, y1 = place.box
            left, top = view.to_px(x0, y1).x(), view.to_px(x0, y1).y()
            right, bottom = view.to_px(x1, y0).x(), view.to_px(x1, y0).y()
            got.append(
                left < c.x() + half_w
                and right > c.x() - half_w
                and top < cy + half_h
                and bottom > cy - half_h
            )
        cache.memo[key] = got
    return got


def _target_sprite(
    c: QPointF,
    r: float,
    covered: bool,
    order: tuple[int, ...],
    text: str,
    theme: Theme,
    ui: float,
    above: bool = False,
    shift: float = 0.0,
) -> tuple[QPoint, QImage]:
    """The target drawn into a transparent image at whole-pixel ``origin``: painting uses the
    frame's own (fractional) coordinates, so the blit lands exactly where direct drawing
    would."""
    ring = r + 2 * 4.0 * ui + 4.0 * ui
    half_w, below, over = ring, ring, ring
    if text:
        metrics = QFontMetricsF(font(11 * ui, bold=True))
        half_w = max(half_w, metrics.horizontalAdvance(text) / 2 + 4.0 + abs(shift))
        if above:
            over = max(over, _arrival_offset(r, ui, True) + metrics.height() / 2 + 4.0)
        else:
            below = max(below, _arrival_offset(r, ui, False) + metrics.height() / 2 + 4.0)
    x0, y0 = math.floor(c.x() - half_w), math.floor(c.y() - over)
    w, h = math.ceil(c.x() + half_w) - x0 + 1, math.ceil(c.y() + below) - y0 + 1
    img = QImage(w, h, QImage.Format.Format_ARGB32_Premultiplied)
    img.fill(Qt.GlobalColor.transparent)
    p = QPainter(img)
    try:
        p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        p.translate(-x0, -y0)
        _draw_target(p, c, r, covered, order, text, theme, ui, above, shift)
    finally:
        p.end()
    return QPoint(x0, y0), img


def _draw_target(
    painter: QPainter,
    c: QPointF,
    r: float,
    covered: bool,
    order: tuple[int, ...],
    text: str,
    theme: Theme,
    ui: float,
    above: bool = False,
    shift: float = 0.0,
) -> None:
    """Ring, visitor pips and the first arrival's "n at t s", below the ring or ``above``
    it (past the pips) when the landmark's label is below, ``shift`` pixels sideways."""
    hi = theme.qcolor("target_highlight")
    painter.setBrush(theme.qcolor("target_highlight", alpha=0.22 if covered else 0.1))
    pen = QPen(hi, (3.0 if covered else 2.2) * ui)
    pen.setStyle(Qt.PenStyle.SolidLine if covered else Qt.PenStyle.DashLine)
    painter.setPen(pen)
    painter.drawEllipse(c, r, r)
    if not order:
        return
    pip = 4.0 * ui
    for k, a in enumerate(order):
        ang = math.pi / 2 - k * (pip * 2.6) / (r + pip)  # clockwise from the top
        p = QPointF(c.x() + (r + pip + 1) * math.cos(ang), c.y() - (r + pip + 1) * math.sin(ang))
        painter.setPen(QPen(theme.qcolor("text"), 1.0 * ui))
        painter.setBrush(theme.agent_color(a))
        painter.drawEllipse(p, pip, pip)
    offset = _arrival_offset(r, ui, above)
    label(
        painter,
        text,
        QPointF(c.x() + shift, c.y() - offset if above else c.y() + offset),
        font(11 * ui, bold=True),
        theme.qcolor("text"),
        theme.qcolor("room_fill", alpha=0.8),
        align="center",
    )


def _arrival_offset(r: float, ui: float, above: bool) -> float:
    """Pixels from a target's centre to the middle of its "n at t s" text."""
    pip = 4.0 * ui
    return r + 2 * pip + 1 + 9 * ui if above else r + 10 * ui


def paint_trails(
    painter: QPainter,
    cache: EpisodeCache,
    step: int,
    view: ViewTransform,
    theme: Theme,
    opts: FrameOptions,
    ui: float,
    raster: bool | None = None,
) -> None:
    """Fading trails. Wide antialiased pens cost ~100x more than 1-pixel ones on long
    self-crossing paths (64 agents x 200 steps: 110-175 ms vs 1.4 ms), so crowds (or
    ``fast_trails``) get hairlines in fade bands (one path per identity colour per band), and
    very long windows keep every k-th step. Small teams get the wide pen, in blocks that raster
    frames stroke once and blit after (:mod:`.trail_blocks`)."""
    first, stride, thin = _trail_window(cache, step, view, opts)
    if step - first < 1:
        return
    if not thin:
        raster = blits_exactly(painter) if raster is None else raster
        width = _wide_trail_width(view, ui)
        paint_wide_trails(painter, cache, first, step, stride, view, theme, width, raster)
        return
    idx = np.arange(first, step + 1, stride)
    if idx[-1] != step:
        idx = np.append(idx, step)
    n_pts = len(idx)
    bands = max(1, min(opts.trail_bands, n_pts - 1))
    edges = np.linspace(0, n_pts - 1, bands + 1).round().astype(int).tolist()
    groups = cache.group_xy(len(theme.identity))
    kept = [b for b in range(bands) if edges[b + 1] > edges[b]]
    windows = [
        slice(first + edges[b], first + edges[b + 1] + 1)
        if stride == 1
        else idx[edges[b] : edges[b + 1] + 1]
        for b in kept
    ]
    paths = grouped_rows_paths(groups, windows, view.scale, view.offset_x, view.offset_y)
    painter.setBrush(Qt.BrushStyle.NoBrush)
    for b, row in zip(kept, paths, strict=True):
        for g, path in enumerate(row):
            painter.setPen(_hairline_pen(theme, g, b, bands))
            painter.drawPath(path)


def _hairline_pen(theme: Theme, group: int, band: int, bands: int) -> QPen:
    """A crowd's 1-pixel trail pen of one colour group and fade band (older = fainter)."""

    def make() -> QPen:
        pen = QPen(theme.agent_color(group, alpha=0.15 + 0.6 * (band + 1) / bands), 1.0)
        pen.setCosmetic(True)
        pen.setCapStyle(Qt.PenCapStyle.RoundCap)
        pen.setJoinStyle(Qt.PenJoinStyle.BevelJoin)
        return pen

    return cached_pen(("hairline", theme.name, group, band, bands), make)


def _trail_window(
    cache: EpisodeCache, step: int, view: ViewTransform, opts: FrameOptions
) -> tuple[int, int, bool]:
    """(first step, stride, thin) of the trails at ``step``."""
    dt = cache.episode.dt
    length = max(1, round(opts.trail_seconds / dt)) if dt > 0 else 1
    first = max(0, step - length)
    total = (step - first + 1) * cache.agents
    stride = max(1, math.ceil(total / MAX_TRAIL_POINTS))
    step_px = view.length_px(cache.step_length())
    if step_px > 0:
        # keep about one point per TRAIL_POINT_SPACING pixels of typical travel: the dropped
        # points bend the line by well under a pixel, and build and stroke cost halve
        stride = max(stride, round(TRAIL_POINT_SPACING / step_px))
    return first, stride, opts.fast_trails or total > THIN_TRAIL_POINTS


def _wide_trail_width(view: ViewTransform, ui: float) -> float:
    return max(1.6 * ui, view.length_px(0.05))


def prefill_frame(
    scene: Scene,
    episode: Episode,
    step: int,
    view: ViewTransform,
    theme: Theme,
    options: FrameOptions | None = None,
    max_new: int = 24,
    bounds: tuple[int, int] | None = None,
    clock: Callable[[], float] = time.perf_counter,
) -> bool:
    """Pre-draw up to ``max_new`` of the images raster frames of ``episode`` blit at this view
    (wide-trail blocks nearest to ``step`` first, see :mod:`.trail_blocks`, then body
    sprites), in about 2 ms by ``clock`` at most, so later frames find them. ``bounds``: the
    output's (width, height) in pixels, to skip blocks off screen. A viewer calls this while
    idle; True while more remain to draw."""
    opts = options or FrameOptions()
    cache = episode_cache(scene, episode)
    if cache.steps < 2:
        return False
    step = int(min(max(step, 0), cache.steps - 1))
    ui = opts.ui_scale or 1.0
    # a full window: wide trails keep one stride for every step; thin ones need no blocks
    _first, stride, thin = _trail_window(cache, cache.steps - 1, view, opts)
    if opts.trails and not thin:
        width = _wide_trail_width(view, ui)
        if prefill_blocks(cache, step, stride, view, theme, width, max_new, bounds, clock=clock):
            return True
    return prefill_sprites(cache, view, theme, opts, ui, max_new)


#: how far ahead (seconds) an agent's position tells which target it is heading to
HEADING_LOOKAHEAD_S = 3.0


def heading_targets(cache: EpisodeCache, step: int) -> np.ndarray:
    """(A,) the pursued landmark each agent is heading to at ``step`` (-1: none): of its
    pursued targets, the one nearest where it will be a few seconds later (its next arrival
    when it covers one in that time), so a two-target goal gives each agent one line."""
    lm, reach = cache.landmark_arrays()
    if len(lm) == 0:
        return np.full(cache.agents, -1, dtype=np.int64)
    ahead = round(HEADING_LOOKAHEAD_S / max(float(cache.episode.dt), 1e-6))
    later = cache.xy[min(step + max(ahead, 1), cache.steps - 1)]
    d = np.linalg.norm(lm[None] - later[:, None], axis=-1) - reach[None]
    d = np.where(cache.pursued & np.isfinite(d), d, np.inf)
    best = np.argmin(d, axis=1)
    return np.where(np.isfinite(d.min(axis=1)), best, -1)


def paint_pursued(
    painter: QPainter, cache: EpisodeCache, step: int, view: ViewTransform, theme: Theme, ui: float
) -> None:
    """Each agent's line to the target it is heading to (solid on the team goal, dashed off
    it); its other pursued targets get a faint dotted line.

    A target the agent already covers gets no line (the agent is there), so a settled team
    shows few lines and a misaligned agent's dashed line stands out.
    """
    if not cache.pursued.any() or cache.agents > 32:
        return
    lm, reach = cache.landmark_arrays()
    xy = cache.xy[step]
    here = np.linalg.norm(lm[None] - xy[:, None], axis=-1) <= reach
    agents, marks = np.nonzero(cache.pursued & ~here)
    if len(agents) == 0:
        return
    heads = heading_targets(cache, step).tolist()
    pos = view.map_array(xy).tolist()
    lm_px = view.map_array(lm).tolist()
    team = cache.team.tolist()
    # a handful of lines: one drawLine(s) each is cheaper than building a path per agent
    for a, m in zip(agents.tolist(), marks.tolist(), strict=True):
        (x0, y0), (x1, y1) = pos[a], lm_px[m]
        if not all(math.isfinite(v) for v in (x0, y0)):
            continue
        if heads[a] != m:
            painter.setPen(_faint_pen(theme, a, ui))
            painter.drawLine(QPointF(x0, y0), QPointF(x1, y1))
        elif team[m]:
            # solid line, cut where Qt strokes it slowly (see fastpath.line_pieces)
            pen = _pursued_pen(theme, a, True, ui)
            painter.setPen(pen)
            painter.drawLines(line_pieces(x0, y0, x1, y1, pen.widthF()))
        else:
            painter.setPen(_pursued_pen(theme, a, False, ui))
            painter.drawLine(QPointF(x0, y0), QPointF(x1, y1))  # dashes cut it up already


def _faint_pen(theme: Theme, agent: int, ui: float) -> QPen:
    def make() -> QPen:
        pen = QPen(theme.agent_color(agent, alpha=0.22), 1.0 * ui)
        pen.setStyle(Qt.PenStyle.DotLine)
        return pen

    return cached_pen(("pursued-faint", theme.name, agent, ui), make)


def _pursued_pen(theme: Theme, agent: int, on_team: bool, ui: float) -> QPen:
    """Faint thin solid for a target on the team goal, strong dashed for one off it."""

    def make() -> QPen:
        if on_team:
            pen = QPen(theme.agent_color(agent, alpha=0.8), 1.6 * ui)
            pen.setCapStyle(Qt.PenCapStyle.FlatCap)
        else:
            pen = QPen(theme.agent_color(agent, alpha=0.95), 2.0 * ui)
            pen.setStyle(Qt.PenStyle.DashLine)
        return pen

    return cached_pen(("pursued", theme.name, agent, on_team, ui), make)


def paint_collisions(
    painter: QPainter,
    cache: EpisodeCache,
    step: int,
    view: ViewTransform,
    theme: Theme,
    ui: float,
    opts: FrameOptions | None = None,
    raster: bool | None = None,
) -> None:
    ev = cache.collisions
    if len(ev) == 0:
        return
    # contacts stay marked while they are inside the trail window (at least 2 s), so a long
    # crowded episode does not bury the scene in old marks
    opts = opts or FrameOptions()
    steps_per_s = 1.0 / cache.episode.dt if cache.episode.dt > 0 else 1.0
    keep = max(opts.trail_seconds, 2.0) * steps_per_s
    upto = int(np.searchsorted(ev[:, 0], step, side="right"))
    since = int(np.searchsorted(ev[:, 0], step - keep, side="left"))
    ev = ev[max(since, upto - 200) : upto]
    ev = ev[np.isfinite(ev[:, 1:3]).all(axis=1)]  # a missing pose leaves no mark
    if len(ev) == 0:
        return
    recent_steps = 1.0 / cache.episode.dt if cache.episode.dt > 0 else 1
    px = view.map_array(ev[:, 1:3])
    recent = (step - ev[:, 0]) <= recent_steps
    # marks far off the image (damaged poses) are skipped: Qt's int coordinates overflow
    on_canvas = (np.abs(px) < PIXEL_LIMIT).all(axis=1)
    px, recent = px[on_canvas], recent[on_canvas]
    if blits_exactly(painter) if raster is None else raster:
        # crowds leave hundreds of marks: one blit each instead of an ellipse per recent one
        for is_recent in (False, True):
            sel = np.round(px[recent == is_recent]).astype(int)
            if len(sel) == 0:
                continue
            key = (theme.name, round(ui, 3), is_recent)
            img = _MARK_SPRITES.get(key)
            if img is None:
                img = _MARK_SPRITES[key] = _mark_sprite(theme, ui, is_recent)
            half = img.width() // 2
            for x, y in sel.tolist():
                painter.drawImage(QPoint(x - half, y - half), img)
        return
    for is_recent in (False, True):
        sel = px[recent == is_recent]
        if len(sel) == 0:
            continue
        s = (7.0 if is_recent else 4.0) * ui
        pen = QPen(
            theme.qcolor("error", alpha=1.0 if is_recent else 0.6), (2.4 if is_recent else 1.5) * ui
        )
        painter.setPen(pen)
        d1, d2 = np.array([s, s]), np.array([s, -s])
        a = np.concatenate([sel - d1, sel - d2])
        b = np.concatenate([sel + d1, sel + d2])
        painter.drawPath(segments_path(a, b))
        if is_recent:
            painter.setBrush(Qt.BrushStyle.NoBrush)
            for p in sel:
                painter.drawEllipse(QPointF(*p), s * 1.6, s * 1.6)


_MARK_SPRITES: dict[tuple[str, float, bool], QImage] = {}


def _mark_sprite(theme: Theme, ui: float, recent: bool) -> QImage:
    """A contact mark (an x; recent ones larger, with a ring) centred in a square image."""
    s = (7.0 if recent else 4.0) * ui
    width = (2.4 if recent else 1.5) * ui
    half = math.ceil((s * 1.6 if recent else s * 1.42) + width + 1.0)
    img = QImage(2 * half, 2 * half, QImage.Format.Format_ARGB32_Premultiplied)
    img.fill(Qt.GlobalColor.transparent)
    p = QPainter(img)
    try:
        p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        p.setPen(QPen(theme.qcolor("error", alpha=1.0 if recent else 0.6), width))
        p.setBrush(Qt.BrushStyle.NoBrush)
        c = QPointF(half, half)
        p.drawLine(QPointF(half - s, half - s), QPointF(half + s, half + s))
        p.drawLine(QPointF(half - s, half + s), QPointF(half + s, half - s))
        if recent:
            p.drawEllipse(c, s * 1.6, s * 1.6)
    finally:
        p.end()
    return img
