"""The role channel: how a role changes an agent's look, independent of its identity colour.

no ring = moving; thin solid ring = heading to a target; double ring = holding a target;
hollow body with a dotted ring = idle; triangle badge = off the team goal. Rings alone are
hard to tell apart at body size, so each role also carries a glyph badge outside the body,
at its lower right: an arrowhead (heading), a filled square (holding), two pause bars
(idle). A tape label that says one of those things in plain words ("heads to …", "holds …",
"waits at …", "waits") gets that look, so the glyph means the same as in derived roles; any
other label takes a look of its own in :data:`TAPE_STYLES` order (a plus badge and a dashed
ring first), never one a meaning above already took in that episode.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QPainter, QPen, QPolygonF

from arena_studio.core.analysis.roles import HEADING, HOLDING, IDLE, MOVING, OFF_GOAL, ROLE_NAMES
from arena_studio.core.wording import LandmarkNames
from arena_studio.render.episode_cache import EpisodeCache
from arena_studio.render.options import FrameOptions
from arena_studio.render.theme import Theme

#: role styles: how each derived role code is drawn
STYLE_PLAIN, STYLE_RING, STYLE_DOUBLE, STYLE_HOLLOW, STYLE_BADGE, STYLE_SQUARE, STYLE_DASH = range(
    7
)
DERIVED_STYLE = {
    MOVING: STYLE_PLAIN,
    HEADING: STYLE_RING,
    HOLDING: STYLE_DOUBLE,
    IDLE: STYLE_HOLLOW,
    OFF_GOAL: STYLE_BADGE,
}
#: other tape labels take these styles in order of first appearance; the looks that say
#: "idle" (hollow body, pause bars) and "off the team goal" (warning triangle) come last
TAPE_STYLES = (STYLE_SQUARE, STYLE_DASH, STYLE_RING, STYLE_DOUBLE, STYLE_BADGE, STYLE_HOLLOW)
#: plain words that give a tape label a derived role's look (lower case; a label matches when
#: it starts with one followed by a space, or is one). Our own rollout writes these.
LABEL_MEANINGS: tuple[tuple[tuple[str, ...], int], ...] = (
    (("heads to", "heading to", "goes to", "going to", "moves to", "moving to"), STYLE_RING),
    (("holds", "holding", "waits at", "waiting at", "stays at", "staying at"), STYLE_DOUBLE),
    (("waits", "waiting", "idle", "stopped", "resting"), STYLE_HOLLOW),
)


def meaning_style(label: str) -> int | None:
    """The derived look a tape label's words ask for, or None for a label of its own."""
    words = " ".join(label.lower().split())
    for prefixes, style in LABEL_MEANINGS:
        for p in prefixes:
            if words == p or words.startswith(p + " "):
                # "waits" alone is idle; "waits at X" is matched by the holding row first
                return style
    return None


def tape_style_table(labels: tuple[str, ...]) -> tuple[int, ...]:
    """One style per tape label: its meaning's look, else the next look no meaning took."""
    meant = [meaning_style(label) for label in labels]
    taken = {m for m in meant if m is not None}
    free = [st for st in TAPE_STYLES if st not in taken] or list(TAPE_STYLES)
    styles, k = [], 0
    for m in meant:
        if m is None:
            m, k = free[k % len(free)], k + 1
        styles.append(m)
    return tuple(styles)
#: above this many agents, bodies carry their number
NUMBER_ABOVE = 6


def role_source(cache: EpisodeCache, options: FrameOptions) -> str:
    if options.roles == "auto":
        return "tape" if cache.tape_labels else "derived"
    return options.roles


def role_legend(cache: EpisodeCache, options: FrameOptions) -> list[tuple[int, str]]:
    """(style, name) rows for the legend, in the order the roles are defined."""
    source = role_source(cache, options)
    if source == "derived":
        return [(DERIVED_STYLE[c], ROLE_NAMES[c]) for c in range(len(ROLE_NAMES))]
    if source == "tape":
        names = LandmarkNames.of(cache.scene)  # "heads to valve-west" -> "heads to West valve"
        styles = tape_style_table(cache.tape_labels)
        return [(st, names.text(name)) for st, name in zip(styles, cache.tape_labels, strict=True)]
    return []


def agent_styles(cache: EpisodeCache, step: int, options: FrameOptions) -> np.ndarray:
    """(A,) style codes at ``step``."""
    source = role_source(cache, options)
    if source == "derived":
        lut = np.array([DERIVED_STYLE[c] for c in range(len(ROLE_NAMES))], dtype=np.int16)
        return lut[cache.roles[step]]
    if source == "tape":
        codes = cache.tape_codes[step]
        lut = _tape_lut(cache)
        if not len(lut):
            return np.full(cache.agents, STYLE_PLAIN, dtype=np.int16)
        return np.where(codes >= 0, lut[np.clip(codes, 0, len(lut) - 1)], STYLE_PLAIN)
    return np.full(cache.agents, STYLE_PLAIN, dtype=np.int16)


def _tape_lut(cache: EpisodeCache) -> np.ndarray:
    """The tape labels' styles as a lookup array, worked out once per episode."""
    key = ("role_style.tape_lut",)
    lut = cache.memo.get(key)
    if lut is None:
        lut = np.array(tape_style_table(cache.tape_labels), dtype=np.int16)
        cache.memo[key] = lut
    return lut


def show_numbers(agents: int, options: FrameOptions) -> bool:
    if options.numbers == "always":
        return True
    if options.numbers == "never":
        return False
    return agents > NUMBER_ABOVE


def ink_for(color: QColor) -> QColor:
    """Black or white, whichever contrasts more with ``color`` (WCAG relative luminance)."""

    def lin(c: float) -> float:
        return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4

    lum = 0.2126 * lin(color.redF()) + 0.7152 * lin(color.greenF()) + 0.0722 * lin(color.blueF())
    return (
        QColor(17, 17, 17) if (lum + 0.05) / 0.05 > 1.05 / (lum + 0.05) else QColor(255, 255, 255)
    )


def paint_role_mark(
    painter: QPainter, c: QPointF, r: float, style: int, color: QColor, theme: Theme, ui: float
) -> None:
    """The role channel around a body of radius ``r`` centred at ``c`` (see module docstring)."""
    if style == STYLE_PLAIN:
        return
    painter.setBrush(Qt.BrushStyle.NoBrush)
    gap = 2.5 * ui
    if style in (STYLE_RING, STYLE_BADGE, STYLE_DASH):
        pen = QPen(color, 1.4 * ui)
        if style == STYLE_DASH:
            pen.setStyle(Qt.PenStyle.DashLine)
        painter.setPen(pen)
        painter.drawEllipse(c, r + gap, r + gap)
    elif style == STYLE_DOUBLE:
        painter.setPen(QPen(color, 1.4 * ui))
        painter.drawEllipse(c, r + gap, r + gap)
        painter.drawEllipse(c, r + gap + 3.0 * ui, r + gap + 3.0 * ui)
    elif style == STYLE_HOLLOW:
        pen = QPen(color, 1.3 * ui)
        pen.setStyle(Qt.PenStyle.DotLine)
        painter.setPen(pen)
        painter.drawEllipse(c, r + gap, r + gap)
    _paint_glyph_badge(painter, c, r, style, color, theme, ui)
    if style == STYLE_BADGE:
        s = max(5.0 * ui, r * 0.55)
        bx, by = c.x() + r * 0.8, c.y() - r * 0.8
        tri = QPolygonF(
            [QPointF(bx, by - s), QPointF(bx + s, by + s * 0.75), QPointF(bx - s, by + s * 0.75)]
        )
        painter.setPen(QPen(color, 1.2 * ui))
        painter.setBrush(theme.qcolor("warning"))
        painter.drawPolygon(tri)
    elif style == STYLE_SQUARE:  # a plus on an info disc, unlike the holding square
        s = max(4.0 * ui, r * 0.45)
        bx, by = c.x() + r * 0.8, c.y() - r * 0.8
        painter.setPen(QPen(color, 1.2 * ui))
        painter.setBrush(theme.qcolor("info"))
        painter.drawEllipse(QPointF(bx, by), s, s)
        painter.setPen(QPen(ink_for(theme.qcolor("info")), 1.6 * ui))  # readable on the disc
        painter.drawLine(QPointF(bx - 0.6 * s, by), QPointF(bx + 0.6 * s, by))
        painter.drawLine(QPointF(bx, by - 0.6 * s), QPointF(bx, by + 0.6 * s))


def _paint_glyph_badge(
    painter: QPainter, c: QPointF, r: float, style: int, color: QColor, theme: Theme, ui: float
) -> None:
    """The role's glyph on a small disc at the body's lower right, outside the rings: an
    arrowhead (heading), a filled square (holding), pause bars (idle)."""
    if style not in (STYLE_RING, STYLE_DOUBLE, STYLE_HOLLOW):
        return
    s = max(4.5 * ui, r * 0.42)
    d = (r + 2.5 * ui) * 0.78 + s * 0.55
    bx, by = c.x() + d, c.y() + d
    painter.setPen(QPen(theme.qcolor("background"), 1.0 * ui))
    painter.setBrush(color)
    painter.drawEllipse(QPointF(bx, by), s, s)
    ink = theme.qcolor("background")
    painter.setPen(Qt.PenStyle.NoPen)
    painter.setBrush(ink)
    g = s * 0.55
    if style == STYLE_RING:
        painter.drawPolygon(
            QPolygonF(
                [QPointF(bx - g * 0.6, by - g), QPointF(bx + g, by), QPointF(bx - g * 0.6, by + g)]
            )
        )
    elif style == STYLE_DOUBLE:
        painter.drawRect(QRectF(bx - g * 0.8, by - g * 0.8, 1.6 * g, 1.6 * g))
    else:
        w = g * 0.5
        painter.drawRect(QRectF(bx - g * 0.8, by - g, w, 2 * g))
        painter.drawRect(QRectF(bx + g * 0.8 - w, by - g, w, 2 * g))
