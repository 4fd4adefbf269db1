"""One episode frame over the scene: agents, roles, trails, goal overlays, collisions, clock.

Visual language (our own design):
- identity: each agent's body disc is filled with its identity colour (theme ``identity``),
  drawn at its true radius, with a heading tick from the centre to the rim;
- role (second channel, independent of colour): no ring = moving; thin solid ring = heading to
  a target; double ring = holding a target; hollow body with a dotted ring = idle; a triangle
  badge at the upper right = off the team goal. Tape labels reuse these styles in order;
- beyond 6 agents every body also carries its number (1-based scene order), a non-colour cue;
- team-goal targets: a thick ring at the reach radius (solid while covered, dashed while not),
  a pip per agent that has covered it so far and "n at t s" for the first to reach it;
- pursued goals: a thin line from each agent to each of its pursued targets, solid when the
  target is on the team goal, dashed when it is not, so misalignment shows at a glance;
- trails fade in bands (one path per colour group per band, see :mod:`.fastpath`);
- collisions: an x where a contact began, larger for the last second.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from PySide6.QtCore import QPoint, QPointF, Qt
from PySide6.QtGui import (
    QColor,
    QFontMetricsF,
    QImage,
    QPaintEngine,
    QPainter,
    QPen,
    QStaticText,
    QTransform,
)

from ..core.episode import Episode
from ..core.scene import Scene
from .drawing import font, label
from .episode_cache import EpisodeCache, episode_cache
from .fastpath import (
    WIDE_PIECE_PX,
    chunked_rows_paths,
    line_pieces,
    polylines_path,
    rows_path,
    segments_path,
)
from .legend import paint_banner, paint_clock, paint_legend
from .options import FrameOptions
from .role_style import (
    STYLE_HOLLOW,
    agent_styles,
    ink_for,
    paint_role_mark,
    show_numbers,
)
from .theme import Theme
from .view import ViewTransform

#: above this many trail points in a frame, trails are drawn as 1-pixel lines (speed)
THIN_TRAIL_POINTS = 2400
#: above this many trail points in a frame, trails keep every k-th step
MAX_TRAIL_POINTS = 16000
#: trails keep every k-th step when agents typically move less than this many pixels a step
TRAIL_POINT_SPACING = 4.0
#: above this many agents, raster frames blit pre-drawn body sprites
SPRITES_ABOVE = 8

__all__ = [
    "FrameOptions",
    "paint_banner",
    "paint_clock",
    "paint_episode_frame",
    "paint_legend",
]


@lru_cache(maxsize=4096)
def _static_number(text: str, px: int) -> QStaticText:
    st = QStaticText(text)
    st.prepare(QTransform(), font(px, bold=True))
    return st


def paint_episode_frame(
    painter: QPainter,
    scene: Scene,
    episode: Episode,
    step: int,
    view: ViewTransform,
    theme: Theme,
    options: FrameOptions | None = None,
) -> None:
    """Paint the episode's dynamic layer at ``step`` (clamped) over an already painted scene."""
    opts = options or FrameOptions()
    cache = episode_cache(scene, episode)
    if cache.steps == 0:
        return
    step = int(min(max(step, 0), cache.steps - 1))
    ui = opts.ui_scale or 1.0
    painter.save()
    painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
    if opts.par_paths:
        paint_par_paths(painter, cache, view, theme, ui)
    if opts.team_goal and cache.has_team_goal:
        paint_targets(painter, cache, step, view, theme, ui)
    if opts.trails:
        paint_trails(painter, cache, step, view, theme, opts, ui)
    if opts.pursued:
        paint_pursued(painter, cache, step, view, theme, ui)
    if opts.collisions:
        paint_collisions(painter, cache, step, view, theme, ui, opts)
    paint_agents(painter, cache, step, view, theme, opts, ui)
    painter.restore()


def blits_exactly(painter: QPainter) -> bool:
    """True when pre-drawn sprites can stand in for shapes: a raster device (image, widget
    backing store) with no scaling between painter and pixels. Vector output (SVG keeps text
    as text), printers and HiDPI or zoomed painters draw every shape instead."""
    engine = painter.paintEngine()
    return (
        engine is not None
        and engine.type() == QPaintEngine.Type.Raster
        and painter.deviceTransform().type() == QTransform.TransformationType.TxNone
    )


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
    painter: QPainter, cache: EpisodeCache, step: int, view: ViewTransform, theme: Theme, ui: float
) -> None:
    """Team-goal targets: ring, pips of who reached them, "n at t s" for the first.

    A target changes only when its cover state or its list of visitors changes, so on a raster
    image each state is drawn once into a sprite aligned to the pixel grid and blitted after
    (the dashed wide ring and the label cost ~0.1 ms a target a frame otherwise)."""
    scene = cache.scene
    raster = blits_exactly(painter)
    for l_idx in np.flatnonzero(cache.team):
        lm = scene.landmarks[l_idx]
        c = view.to_px(*lm.position)
        r = max(view.length_px(lm.reach_radius), 6 * ui)
        covered = bool(cache.covered[step, l_idx])
        firsts = cache.covered_first[:, l_idx]
        reached = np.flatnonzero((firsts >= 0) & (firsts <= step))
        order = tuple(int(a) for a in reached[np.argsort(firsts[reached], kind="stable")][:12])
        text = f"{order[0] + 1} at {firsts[order[0]] * cache.episode.dt:.1f} s" if order else ""
        if not raster:
            _draw_target(painter, c, r, covered, order, text, theme, ui)
            continue
        key = (theme.name, round(c.x(), 4), round(c.y(), 4), r, ui, covered, order, text)
        sprite = _TARGET_SPRITES.get(key)
        if sprite is None:
            sprite = _target_sprite(c, r, covered, order, text, theme, ui)
            if len(_TARGET_SPRITES) > 512:
                _TARGET_SPRITES.clear()
            _TARGET_SPRITES[key] = sprite
        painter.drawImage(sprite[0], sprite[1])


_TARGET_SPRITES: dict[tuple, tuple[QPoint, QImage]] = {}


def _target_sprite(
    c: QPointF,
    r: float,
    covered: bool,
    order: tuple[int, ...],
    text: str,
    theme: Theme,
    ui: float,
) -> tuple[QPoint, QImage]:
    """The target drawn into a transparent image at whole-pixel ``origin``: painting uses the
    frame's own (fractional) coordinates, so the blit lands exactly where direct drawing
    would."""
    ring = r + 2 * 4.0 * ui + 4.0 * ui
    half_w, below = ring, ring
    if text:
        metrics = QFontMetricsF(font(11 * ui, bold=True))
        half_w = max(half_w, metrics.horizontalAdvance(text) / 2 + 4.0)
        below = max(below, r + 10 * ui + metrics.height() / 2 + 4.0)
    x0, y0 = math.floor(c.x() - half_w), math.floor(c.y() - ring)
    w, h = math.ceil(c.x() + half_w) - x0 + 1, math.ceil(c.y() + below) - y0 + 1
    img = QImage(w, h, QImage.Format.Format_ARGB32_Premultiplied)
    img.fill(Qt.GlobalColor.transparent)
    p = QPainter(img)
    try:
        p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        p.translate(-x0, -y0)
        _draw_target(p, c, r, covered, order, text, theme, ui)
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
) -> None:
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
    label(
        painter,
        text,
        QPointF(c.x(), c.y() + r + 10 * ui),
        font(11 * ui, bold=True),
        theme.qcolor("text"),
        theme.qcolor("room_fill", alpha=0.8),
        align="center",
    )


def paint_trails(
    painter: QPainter,
    cache: EpisodeCache,
    step: int,
    view: ViewTransform,
    theme: Theme,
    opts: FrameOptions,
    ui: float,
) -> None:
    """Fading trails: the window splits into bands (older = fainter), one path per identity
    colour per band. Wide antialiased pens cost ~100x more than 1-pixel ones on long
    self-crossing paths (64 agents x 200 steps: 110-175 ms vs 1.4 ms), so crowds (or
    ``fast_trails``) get hairlines, and very long windows keep every k-th step. Small teams
    get the wide pen, stroked as pieces about :data:`~.fastpath.WIDE_PIECE_PX` long, which
    Qt strokes several times cheaper per point than one long path."""
    dt = cache.episode.dt
    length = max(1, round(opts.trail_seconds / dt)) if dt > 0 else 1
    first = max(0, step - length)
    if step - first < 1:
        return
    total = (step - first + 1) * cache.agents
    stride = max(1, math.ceil(total / MAX_TRAIL_POINTS))
    step_px = view.length_px(cache.step_length())
    if step_px > 0:
        # keep about one point per TRAIL_POINT_SPACING pixels of typical travel: the dropped
        # points bend the line by well under a pixel, and build and stroke cost halve
        stride = max(stride, round(TRAIL_POINT_SPACING / step_px))
    idx = np.arange(first, step + 1, stride)
    if idx[-1] != step:
        idx = np.append(idx, step)
    n_pts = len(idx)
    bands = max(1, min(opts.trail_bands, n_pts - 1))
    edges = np.linspace(0, n_pts - 1, bands + 1).round().astype(int)
    groups = cache.group_xy(len(theme.identity))
    thin = opts.fast_trails or total > THIN_TRAIL_POINTS
    width = 1.0 if thin else max(1.6 * ui, view.length_px(0.05))
    painter.setBrush(Qt.BrushStyle.NoBrush)
    window_all = slice(first, step + 1) if stride == 1 else idx
    if not thin:
        # wide pens: short pieces that share end points (one build for all colours), each piece
        # in the band of its first point; flat caps so shared points are not blended twice
        spacing = step_px * stride
        piece = min(64, 1 + int(WIDE_PIECE_PX // spacing)) if spacing > 0 else 64
        for g, paths, starts in _wide_pieces(groups, window_all, view, max(2, piece)):
            band_of = np.searchsorted(edges[1:-1], starts, side="right")
            order = np.argsort(band_of, kind="stable").tolist()  # by band, pieces in order
            ends = np.cumsum(np.bincount(band_of, minlength=bands)).tolist()
            begin = 0
            for b, end in enumerate(ends):
                if end == begin:
                    continue
                painter.setPen(_trail_pen(theme, g, b, bands, width))
                for k in order[begin:end]:
                    painter.drawPath(paths[k])
                begin = end
        return
    for b in range(bands):
        i0, i1 = int(edges[b]), int(edges[b + 1])
        if i1 <= i0:
            continue
        alpha = 0.15 + 0.6 * (b + 1) / bands
        window = slice(first + i0, first + i1 + 1) if stride == 1 else idx[i0 : i1 + 1]
        for g, world in enumerate(groups):
            pen = QPen(theme.agent_color(g, alpha=alpha), width)
            pen.setCosmetic(True)
            pen.setCapStyle(Qt.PenCapStyle.RoundCap)
            pen.setJoinStyle(Qt.PenJoinStyle.BevelJoin)
            painter.setPen(pen)
            painter.drawPath(rows_path(world[:, window], view.scale, view.offset_x, view.offset_y))


_TRAIL_PENS: dict[tuple[str, int, int, int, float], QPen] = {}


def _trail_pen(theme: Theme, group: int, band: int, bands: int, width: float) -> QPen:
    """The wide trail pen of one colour group and fade band, made once per theme and width
    (a frame of a small team sets ~10 of them)."""
    key = (theme.name, group, band, bands, width)
    pen = _TRAIL_PENS.get(key)
    if pen is None:
        if len(_TRAIL_PENS) > 512:
            _TRAIL_PENS.clear()
        pen = QPen(theme.agent_color(group, alpha=0.15 + 0.6 * (band + 1) / bands), width)
        pen.setCapStyle(Qt.PenCapStyle.FlatCap)
        pen.setJoinStyle(Qt.PenJoinStyle.BevelJoin)  # ~25 % cheaper than round joins
        _TRAIL_PENS[key] = pen
    return pen


def _wide_pieces(
    groups: list[np.ndarray], window: slice | np.ndarray, view: ViewTransform, piece: int
) -> list[tuple[int, list, np.ndarray]]:
    """Each colour group's trail pieces and their first indices, in the order one
    :func:`chunked_rows_paths` call per group would give them, built from one call for all
    groups (the build's fixed cost is about half of a 2-agent trail's time)."""
    windows = [world[:, window] for world in groups]
    rows = [len(w) for w in windows]
    stacked = np.concatenate(windows) if windows else np.zeros((0, 0, 2))
    if len(groups) < 2 or stacked.shape[1] < 2 or not np.isfinite(stacked.sum()):
        return [
            (g, *chunked_rows_paths(w, view.scale, view.offset_x, view.offset_y, piece))
            for g, w in enumerate(windows)
        ]
    paths, starts = chunked_rows_paths(stacked, view.scale, view.offset_x, view.offset_y, piece)
    total, n = stacked.shape[:2]
    per_row = -(-(n - 1) // (piece - 1))
    # pieces come as every row's full-length pieces, then every row's last piece
    row_of = np.concatenate([np.repeat(np.arange(total), per_row - 1), np.arange(total)])
    group_of = np.repeat(np.arange(len(groups)), rows)[row_of]
    out = []
    for g in range(len(groups)):
        sel = np.flatnonzero(group_of == g)
        out.append((g, [paths[k] for k in sel.tolist()], starts[sel]))
    return out


def paint_pursued(
    painter: QPainter, cache: EpisodeCache, step: int, view: ViewTransform, theme: Theme, ui: float
) -> None:
    """Lines to pursued targets: faint and solid on the team goal, strong and dashed off it.

    A target the agent already covers gets no line (the agent is there), so a settled team
    shows few lines and a misaligned agent's dashed line stands out.
    """
    if not cache.pursued.any() or cache.agents > 32:
        return
    lm, reach = cache.landmark_arrays()
    xy = cache.xy[step]
    here = np.linalg.norm(lm[None] - xy[:, None], axis=-1) <= reach
    wanted = cache.pursued & ~here
    if not wanted.any():
        return
    pos = view.map_array(xy)
    lm_px = view.map_array(lm)
    # a handful of lines: one drawLine each is cheaper than building a path per agent
    for a in np.flatnonzero(wanted.any(axis=1)).tolist():
        start = QPointF(float(pos[a, 0]), float(pos[a, 1]))
        for on_team in (True, False):
            sel = np.flatnonzero(wanted[a] & (cache.team == on_team))
            if len(sel) == 0:
                continue
            if on_team:
                # solid thin line in short pieces: Qt strokes a long steep antialiased line
                # ~10x slower than the same line cut up (see fastpath.line_pieces)
                pen = QPen(theme.agent_color(a, alpha=0.45), 1.0 * ui)
                pen.setCapStyle(Qt.PenCapStyle.FlatCap)
                painter.setPen(pen)
                for x, y in lm_px[sel].tolist():
                    painter.drawLines(line_pieces(start.x(), start.y(), x, y))
                continue
            pen = QPen(theme.agent_color(a, alpha=0.95), 2.0 * ui)
            pen.setStyle(Qt.PenStyle.DashLine)  # the dash pattern already cuts it up
            painter.setPen(pen)
            for x, y in lm_px[sel].tolist():
                painter.drawLine(start, QPointF(x, y))


def paint_collisions(
    painter: QPainter,
    cache: EpisodeCache,
    step: int,
    view: ViewTransform,
    theme: Theme,
    ui: float,
    opts: FrameOptions | None = None,
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
    if len(ev) == 0:
        return
    recent_steps = 1.0 / cache.episode.dt if cache.episode.dt > 0 else 1
    px = view.map_array(ev[:, 1:3])
    recent = (step - ev[:, 0]) <= recent_steps
    if blits_exactly(painter):
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


def paint_agents(
    painter: QPainter,
    cache: EpisodeCache,
    step: int,
    view: ViewTransform,
    theme: Theme,
    opts: FrameOptions,
    ui: float,
) -> None:
    """Bodies, role marks, heading ticks and numbers.

    On a raster device with many agents each (colour, role, size) body is drawn once into a
    small sprite and blitted (an antialiased ellipse costs ~30 us, a blit ~3 us); vector
    output (SVG) and small teams draw every shape.
    """
    pos = view.map_array(cache.xy[step])
    heading = cache.heading[step]
    radii = np.maximum(cache.radius * view.scale, 2.5 * ui)
    styles = agent_styles(cache, step, opts)
    ring_color = theme.qcolor("text")
    numbers = show_numbers(cache.agents, opts)
    sprites = blits_exactly(painter) and cache.agents > SPRITES_ABOVE
    n_colors = len(theme.identity)
    if sprites:
        for a in range(cache.agents):
            img = _sprite(theme, a % n_colors, int(styles[a]), float(radii[a]), ui)
            half = img.width() / 2
            painter.drawImage(QPointF(pos[a, 0] - half, pos[a, 1] - half), img)
    else:
        edge = QPen(theme.qcolor("background"), 1.0 * ui)
        for a in range(cache.agents):
            c = QPointF(float(pos[a, 0]), float(pos[a, 1]))
            _paint_body(painter, c, float(radii[a]), int(styles[a]), a, theme, ui, edge)
    # heading ticks: one path per ink colour
    inks = np.array(
        [
            _ink_index(theme, a % n_colors) if styles[a] != STYLE_HOLLOW else 2
            for a in range(cache.agents)
        ]
    )
    direction = np.stack([np.cos(heading), -np.sin(heading)], axis=1)
    tips = pos + direction * radii[:, None]
    bases = pos + direction * (radii[:, None] * (0.35 if numbers else 0.0))
    width = max(1.5 * ui, float(np.median(radii)) * 0.18)
    ink_colors = (QColor(17, 17, 17), QColor(255, 255, 255), ring_color)
    for k, color in enumerate(ink_colors):
        sel = inks == k
        if sel.any():
            pen = QPen(color, width)
            pen.setCapStyle(Qt.PenCapStyle.FlatCap)
            painter.setPen(pen)
            painter.drawPath(segments_path(bases[sel], tips[sel]))
    if numbers:
        _paint_numbers(painter, pos, radii, inks, ink_colors, theme, ui)


def _paint_body(
    painter: QPainter,
    c: QPointF,
    r: float,
    style: int,
    color_index: int,
    theme: Theme,
    ui: float,
    edge: QPen,
) -> None:
    hollow = style == STYLE_HOLLOW
    painter.setPen(QPen(theme.agent_color(color_index), 2.0 * ui) if hollow else edge)
    painter.setBrush(theme.agent_color(color_index, alpha=0.35 if hollow else None))
    painter.drawEllipse(c, r, r)
    paint_role_mark(painter, c, r, style, theme.qcolor("text"), theme, ui)


_SPRITE_CACHE: dict[tuple[str, int, int, float, float], QImage] = {}


def _sprite(theme: Theme, color_index: int, style: int, r: float, ui: float) -> QImage:
    key = (theme.name, color_index, style, round(r * 4) / 4, round(ui, 3))
    img = _SPRITE_CACHE.get(key)
    if img is None:
        if len(_SPRITE_CACHE) > 1024:
            _SPRITE_CACHE.clear()
        r = key[3]
        extent = r + 2.5 * ui + 3.0 * ui + max(5.0 * ui, r * 0.55) + 2.0
        size = 2 * math.ceil(extent)
        img = QImage(size, size, QImage.Format.Format_ARGB32_Premultiplied)
        img.fill(Qt.GlobalColor.transparent)
        p = QPainter(img)
        try:
            p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
            edge = QPen(theme.qcolor("background"), 1.0 * ui)
            _paint_body(p, QPointF(size / 2, size / 2), r, style, color_index, theme, ui, edge)
        finally:
            p.end()
        _SPRITE_CACHE[key] = img
    return img


@lru_cache(maxsize=256)
def _ink_for_hex(hexcode: str) -> int:
    return 0 if ink_for(QColor(hexcode[:7])).lightness() < 128 else 1


def _ink_index(theme: Theme, color_index: int) -> int:
    """0 for a dark tick/number on this identity colour, 1 for a light one."""
    return _ink_for_hex(theme.agent_hex(color_index))


def _paint_numbers(
    painter: QPainter,
    pos: np.ndarray,
    radii: np.ndarray,
    inks: np.ndarray,
    ink_colors: tuple[QColor, ...],
    theme: Theme,
    ui: float,
) -> None:
    """Each agent's 1-based number: inside its body, or beside it when the body is small."""
    px = round(max(8.0 * ui, min(float(radii.min()) * 1.1, 13 * ui)))
    painter.setFont(font(px, bold=True))
    inside = radii >= 6 * ui
    for k, color in enumerate((*ink_colors, theme.qcolor("text"))):
        sel = np.flatnonzero((inks == k) & inside) if k < 3 else np.flatnonzero(~inside)
        if len(sel) == 0:
            continue
        painter.setPen(color)
        for a in sel:
            st = _static_number(str(a + 1), px)
            size = st.size()
            if k < 3:
                at = QPointF(pos[a, 0] - size.width() / 2, pos[a, 1] - size.height() / 2)
            else:
                at = QPointF(pos[a, 0] + radii[a] + 1, pos[a, 1] - radii[a] - size.height())
            painter.drawStaticText(at, st)
