"""Agent bodies: identity colour, role mark, heading tick and (beyond 6 agents) number.

On a raster device with no scaling every (colour, role, size) body is drawn once into a small
sprite and blitted after: an antialiased ring or badge costs ~6-30 us, a blit ~1-2 us. Qt
puts an image at whole pixels, so each body has 16 sprites, one per quarter-pixel offset in x
and y: a blitted body sits within 1/8 px of where drawing it would put it, and moves as
smoothly. Vector output (SVG) and scaled painters draw every shape.
"""

from __future__ import annotations

import math
import statistics
from functools import lru_cache
from typing import Any

import numpy as np
from PySide6.QtCore import QPoint, QPointF, Qt
from PySide6.QtGui import QColor, QImage, QPainter, QPen, QStaticText, QTransform

from arena_studio.render.drawing import cached_pen, font
from arena_studio.render.episode_cache import EpisodeCache
from arena_studio.render.fastpath import segments_path
from arena_studio.render.options import FrameOptions
from arena_studio.render.role_style import (
    STYLE_HOLLOW,
    agent_styles,
    ink_for,
    paint_role_mark,
    show_numbers,
)
from arena_studio.render.theme import Theme
from arena_studio.render.view import ViewTransform

#: sub-pixel positions per pixel a body sprite comes in, in x and in y
SPRITE_PHASES = 4
#: bodies larger than this (zoomed far in) are drawn, not blitted: 16 sprites each would
#: cost megabytes, and few bodies are on screen then
SPRITE_MAX_RADIUS_PX = 40.0
#: up to this many agents, heading ticks are single lines (a shared path costs ~35 us to build)
TICK_LINES_UP_TO = 8
_INK_COLORS = (QColor(17, 17, 17), QColor(255, 255, 255))


def paint_agents(
    painter: QPainter,
    cache: EpisodeCache,
    step: int,
    view: ViewTransform,
    theme: Theme,
    opts: FrameOptions,
    ui: float,
    raster: bool,
) -> None:
    """Bodies, role marks, heading ticks and numbers of every agent at ``step``.

    ``raster``: the painter blits exactly (``episode_painter.blits_exactly``)."""
    small = raster and cache.agents <= TICK_LINES_UP_TO and not show_numbers(cache.agents, opts)
    if small and _paint_small_team(painter, cache, step, view, theme, opts, ui):
        return
    pos = view.map_array(cache.xy[step])
    heading = cache.heading[step]
    radii = np.maximum(cache.radius * view.scale, 2.5 * ui)
    styles = agent_styles(cache, step, opts).tolist()
    numbers = show_numbers(cache.agents, opts)
    n_colors = len(theme.identity)
    if raster and float(radii.max()) <= SPRITE_MAX_RADIUS_PX:
        _blit_bodies(painter, pos, radii, styles, theme, ui)
    else:
        edge = QPen(theme.qcolor("background"), 1.0 * ui)
        for a in range(cache.agents):
            c = QPointF(float(pos[a, 0]), float(pos[a, 1]))
            paint_body(painter, c, float(radii[a]), styles[a], a, theme, ui, edge)
    # heading ticks, in a dark or light ink that contrasts with the body
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
    ink_colors = (*_INK_COLORS, theme.qcolor("text"))
    if cache.agents <= TICK_LINES_UP_TO:
        for a, (b, t) in enumerate(zip(bases.tolist(), tips.tolist(), strict=True)):
            painter.setPen(_tick_pen(ink_colors[inks[a]], width))
            painter.drawLine(QPointF(*b), QPointF(*t))
    else:
        for k, color in enumerate(ink_colors):
            sel = inks == k
            if sel.any():
                painter.setPen(_tick_pen(color, width))
                painter.drawPath(segments_path(bases[sel], tips[sel]))
    if numbers:
        _paint_numbers(painter, pos, radii, inks, ink_colors, theme, ui)


def _paint_small_team(
    painter: QPainter,
    cache: EpisodeCache,
    step: int,
    view: ViewTransform,
    theme: Theme,
    opts: FrameOptions,
    ui: float,
) -> bool:
    """A raster frame of a few agents without numbers, in plain floats: the same sprites and
    ticks as :func:`paint_agents`, whose numpy calls on arrays of two cost more than the
    drawing (~0.1 ms of a 2-agent frame). False (nothing drawn) when a body is too large
    for sprites or a pose is missing."""
    s, ox, oy = view.scale, view.offset_x, view.offset_y
    radii = [max(r * s, 2.5 * ui) for r in cache.radius.tolist()]
    if max(radii) > SPRITE_MAX_RADIUS_PX:
        return False
    xy, heading = cache.xy[step].tolist(), cache.heading[step].tolist()
    if not all(math.isfinite(v) for pair in xy for v in pair):
        return False
    styles = agent_styles(cache, step, opts).tolist()
    n_colors, name, ui_key = len(theme.identity), theme.name, round(ui, 3)
    for a, ((x, y), r) in enumerate(zip(xy, radii, strict=True)):
        r_key = round(r * 4) / 4
        half = _sprite_size(r_key, ui) / 2
        left, top = ox + s * x - half, oy - s * y - half
        ix, iy = math.floor(left), math.floor(top)
        qx, qy = round((left - ix) * SPRITE_PHASES), round((top - iy) * SPRITE_PHASES)
        if qx == SPRITE_PHASES:
            ix, qx = ix + 1, 0
        if qy == SPRITE_PHASES:
            iy, qy = iy + 1, 0
        color = a % n_colors
        img = _SPRITES.get((name, color, styles[a], r_key, ui_key, qx, qy))
        if img is None:
            img = body_sprite(theme, color, styles[a], r, ui, qx, qy)
        painter.drawImage(QPoint(ix, iy), img)
    width = max(1.5 * ui, statistics.median(radii) * 0.18)
    text = theme.qcolor("text")
    for a, ((x, y), h, r) in enumerate(zip(xy, heading, radii, strict=True)):
        ink = text if styles[a] == STYLE_HOLLOW else _INK_COLORS[_ink_index(theme, a % n_colors)]
        painter.setPen(_tick_pen(ink, width))
        cx, cy = ox + s * x, oy - s * y
        painter.drawLine(QPointF(cx, cy), QPointF(cx + r * math.cos(h), cy - r * math.sin(h)))
    return True


def _tick_pen(color: QColor, width: float) -> QPen:
    def make() -> QPen:
        pen = QPen(color, width)
        pen.setCapStyle(Qt.PenCapStyle.FlatCap)
        return pen

    return cached_pen(("tick", color.rgba(), width), make)


def paint_body(
    painter: QPainter,
    c: QPointF,
    r: float,
    style: int,
    color_index: int,
    theme: Theme,
    ui: float,
    edge: QPen,
) -> None:
    """One body disc of radius ``r`` centred at ``c`` with its role mark (no heading)."""
    hollow = style == STYLE_HOLLOW
    painter.setPen(QPen(theme.agent_color(color_index), 2.0 * ui) if hollow else edge)
    painter.setBrush(theme.agent_color(color_index, alpha=0.35 if hollow else None))
    painter.drawEllipse(c, r, r)
    paint_role_mark(painter, c, r, style, theme.qcolor("text"), theme, ui)


def _blit_bodies(
    painter: QPainter,
    pos: np.ndarray,
    radii: np.ndarray,
    styles: list[int],
    theme: Theme,
    ui: float,
) -> None:
    """Every body from the sprite of the nearest quarter pixel (placement worked out for all
    agents at once: a crowd of 256 spends more in Python than in blitting otherwise)."""
    r_key = np.round(radii * 4) / 4
    extent = r_key + 2.5 * ui + 3.0 * ui + np.maximum(5.0 * ui, r_key * 0.55) + 2.0
    half = (2 * np.ceil(extent) + 1) / 2
    ok = np.isfinite(pos).all(axis=1).tolist()
    corner = np.nan_to_num(pos - half[:, None])  # agents without a pose are skipped below
    whole = np.floor(corner)
    phase = np.round((corner - whole) * SPRITE_PHASES).astype(np.int64)
    carry = phase == SPRITE_PHASES
    whole += carry
    phase[carry] = 0
    rows = zip(whole.astype(np.int64).tolist(), phase.tolist(), r_key.tolist(), ok, strict=True)
    n_colors = len(theme.identity)
    name, ui_key = theme.name, round(ui, 3)
    for a, ((ix, iy), (qx, qy), r, finite) in enumerate(rows):
        if not finite:
            continue
        color = a % n_colors
        img = _SPRITES.get((name, color, styles[a], r, ui_key, qx, qy))
        if img is None:
            img = body_sprite(theme, color, styles[a], r, ui, qx, qy)
        painter.drawImage(QPoint(ix, iy), img)


def _sprite_size(r: float, ui: float) -> int:
    """Room for the body, the outer role ring and the badge (see role_style)."""
    extent = r + 2.5 * ui + 3.0 * ui + max(5.0 * ui, r * 0.55) + 2.0
    return 2 * math.ceil(extent) + 1  # +1: room for the sub-pixel shift


_SPRITES: dict[tuple[Any, ...], QImage] = {}


def body_sprite(
    theme: Theme, color_index: int, style: int, r: float, ui: float, qx: int = 0, qy: int = 0
) -> QImage:
    """The body drawn into a transparent image, centred ``(qx, qy)`` quarter pixels right of
    and below the image's centre. Made once per theme, colour, role, radius (in quarter
    pixels), ui scale and offset."""
    key = (theme.name, color_index, style, round(r * 4) / 4, round(ui, 3), qx, qy)
    img = _SPRITES.get(key)
    if img is None:
        if len(_SPRITES) > 4096:
            _SPRITES.clear()
        r = key[3]
        size = _sprite_size(r, ui)
        img = QImage(size, size, QImage.Format.Format_ARGB32_Premultiplied)
        img.fill(Qt.GlobalColor.transparent)
        p = QPainter(img)
        try:
            p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
            edge = QPen(theme.qcolor("background"), 1.0 * ui)
            c = QPointF(size / 2 + qx / SPRITE_PHASES, size / 2 + qy / SPRITE_PHASES)
            paint_body(p, c, r, style, color_index, theme, ui, edge)
        finally:
            p.end()
        _SPRITES[key] = img
    return img


def prefill_sprites(
    cache: EpisodeCache,
    view: ViewTransform,
    theme: Theme,
    opts: FrameOptions,
    ui: float,
    max_new: int,
) -> bool:
    """Draw up to ``max_new`` missing body sprites this episode can show at this zoom (every
    agent's colour, radius and roles, at every sub-pixel offset; a long episode's roles from
    about 5,000 spread steps, a shorter role gets its sprite when first shown). True while
    more remain."""
    key = ("agent_painter.combos", opts.roles)
    combos = cache.memo.get(key)
    if combos is None:
        steps = np.arange(0, cache.steps, max(1, cache.steps // 5000))
        every = np.atleast_2d(agent_styles(cache, steps, opts))  # type: ignore[arg-type]
        combos = [(a, sorted(set(every[:, a].tolist()))) for a in range(cache.agents)]
        cache.memo[key] = combos
    radii = np.maximum(cache.radius * view.scale, 2.5 * ui)
    if float(radii.max()) > SPRITE_MAX_RADIUS_PX:
        return False
    n_colors = len(theme.identity)
    name, ui_key = theme.name, round(ui, 3)
    made = 0
    for a, styles in combos:
        r = round(float(radii[a]) * 4) / 4
        for style in styles:
            for qx in range(SPRITE_PHASES):
                for qy in range(SPRITE_PHASES):
                    if (name, a % n_colors, style, r, ui_key, qx, qy) in _SPRITES:
                        continue
                    if made >= max_new:
                        return True
                    body_sprite(theme, a % n_colors, style, r, ui, qx, qy)
                    made += 1
    return False


@lru_cache(maxsize=256)
def _ink_for_hex(hexcode: str) -> int:
    return 0 if ink_for(QColor(hexcode[:7])).lightness() < 128 else 1


def _ink_index(theme: Theme, color_index: int) -> int:
    """0 for a dark tick/number on this identity colour, 1 for a light one."""
    return _ink_for_hex(theme.agent_hex(color_index))


@lru_cache(maxsize=4096)
def _static_number(text: str, px: int) -> QStaticText:
    st = QStaticText(text)
    st.prepare(QTransform(), font(px, bold=True))
    return st


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
