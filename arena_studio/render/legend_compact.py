"""A compact legend for narrow views (side-by-side compare on a small screen).

The full legend is a 200 px column of titled sections; a compare pane on a 1280 px screen is
under 400 px wide and had no legend at all. The compact legend keeps the same rows (agent
colours, role glyphs, overlay keys) without section titles, in smaller type, as chips that
flow left to right and wrap within the width it is given: a strip under the scene, or a
narrow column beside it. Sections that would make it taller than allowed are dropped, roles
and marks first, so the agents' colours always stay.

:func:`compact_layout` is the one place positions come from: the painter draws what it
returns, and a click on the legend is looked up in the same chips.
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6.QtCore import QPointF, QRectF, QSizeF
from PySide6.QtGui import QFontMetricsF, QPainter, QPen

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.render.drawing import font, label
from arena_studio.render.episode_cache import episode_cache
from arena_studio.render.legend import _sections, paint_agent_row_state, paint_row_glyph
from arena_studio.render.options import FrameOptions
from arena_studio.render.paint_guard import saved
from arena_studio.render.theme import Theme

#: type size of the chips (px at ui 1.0); the full legend uses 11.5
TEXT_PX = 10.5
#: most agent chips before "+ n more"
MAX_AGENT_CHIPS = 12


@dataclass(frozen=True)
class Chip:
    """One legend entry: ``kind`` as in the full legend's rows, ``rect`` relative to the
    legend's top-left corner."""

    kind: str
    arg: object
    text: str
    rect: QRectF


@dataclass(frozen=True)
class CompactLayout:
    chips: tuple[Chip, ...]
    size: QSizeF


def _metrics(ui: float) -> tuple[float, float, float, float, QFontMetricsF]:
    """Row height, glyph radius, inner padding, gap between chips, text metrics."""
    return 17.0 * ui, 5.0 * ui, 6.0 * ui, 10.0 * ui, QFontMetricsF(font(TEXT_PX * ui))


def compact_layout(
    scene: Scene,
    episode: Episode,
    options: FrameOptions,
    width: float,
    max_height: float,
    ui: float = 1.0,
    sections_up_to: int = 3,
) -> CompactLayout:
    """Chips flowing within ``width``; each section starts a new line. At most
    ``sections_up_to`` sections (agents, roles, marks); marks, then roles, are left out
    when the legend would be taller than ``max_height``."""
    cache = episode_cache(scene, episode)
    row, r, pad, gap, fm = _metrics(ui)
    tall = QRectF(0, 0, width, row * (MAX_AGENT_CHIPS + 1) / 0.45)  # room for the agent cap
    sections = [rows for _title, rows in _sections(cache, scene, options, ui, tall, row, False)]
    for keep in range(min(len(sections), max(sections_up_to, 1)), 0, -1):
        chips: list[Chip] = []
        x, y, right = pad, pad, 0.0
        for k, rows in enumerate(sections[:keep]):
            if k:
                x, y = pad, y + row
            for kind, arg, text in rows:
                w = _text_x(kind, r, ui) + fm.horizontalAdvance(text) + 4 * ui
                if x > pad and x + w > width - pad:
                    x, y = pad, y + row
                chips.append(Chip(kind, arg, text, QRectF(x, y, w, row)))
                right = max(right, x + w)
                x += w + gap
        size = QSizeF(min(right + pad, width), y + row + pad)
        if size.height() <= max_height or keep == 1:
            return CompactLayout(tuple(chips), size)
    return CompactLayout((), QSizeF(0, 0))  # no sections at all


def paint_compact_legend(
    painter: QPainter,
    top_left: QPointF,
    layout: CompactLayout,
    theme: Theme,
    options: FrameOptions,
    ui: float = 1.0,
) -> None:
    """Draw ``layout`` with its top-left corner at ``top_left``."""
    if not layout.chips:
        return
    _row, r, _pad, _gap, _fm = _metrics(ui)
    face = font(TEXT_PX * ui)
    text, muted = theme.qcolor("text"), theme.qcolor("text_muted")
    with saved(painter):
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        painter.translate(top_left)
        painter.setPen(QPen(theme.qcolor("grid_major"), 1.0))
        painter.setBrush(theme.qcolor("room_fill"))
        painter.drawRoundedRect(QRectF(QPointF(0, 0), layout.size), 5 * ui, 5 * ui)
        for chip in layout.chips:
            box = chip.rect
            if chip.kind == "agent":
                paint_agent_row_state(painter, box, int(str(chip.arg)), theme, options, ui)
            c = QPointF(box.x() + r + 2 * ui, box.center().y())
            paint_row_glyph(painter, chip.kind, chip.arg, c, r * 0.9, theme, ui)
            color = muted if chip.kind == "more" else text
            at = QPointF(box.x() + _text_x(chip.kind, r, ui), c.y())
            label(painter, chip.text, at, face, color, None)


def _text_x(kind: str, r: float, ui: float) -> float:
    """Where a chip's text starts: role glyphs carry badges outside their ring."""
    return 2 * r + (13.0 if kind == "role" else 6.0) * ui


def agent_at(layout: CompactLayout, point: QPointF) -> int | None:
    """The agent whose chip holds ``point`` (relative to the legend's top-left), or None."""
    for chip in layout.chips:
        if chip.kind == "agent" and chip.rect.contains(point):
            return int(str(chip.arg))
    return None
