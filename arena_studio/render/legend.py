"""Frame decorations: the legend (identity, roles, marks), the clock, title and caption lines."""

from __future__ import annotations

from typing import cast

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QFont, QFontMetricsF, QPainter, QPainterPath, QPen

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.render.drawing import font, label
from arena_studio.render.episode_cache import EpisodeCache, episode_cache
from arena_studio.render.options import FrameOptions
from arena_studio.render.paint_guard import saved
from arena_studio.render.role_style import (
    STYLE_HOLLOW,
    paint_role_mark,
    role_legend,
    role_source,
    show_numbers,
)
from arena_studio.render.theme import Theme


def paint_clock(
    painter: QPainter, rect: QRectF, episode: Episode, step: int, theme: Theme, ui: float
) -> None:
    """Elapsed / total seconds and the step, top left of ``rect``."""
    step = int(min(max(step, 0), max(episode.steps - 1, 0)))
    text = f"{step * episode.dt:6.2f} s / {episode.duration:.2f} s"
    sub = f"step {step} of {max(episode.steps - 1, 0)}  ·  episode {episode.index}"
    box = label(
        painter,
        text,
        QPointF(rect.x() + 10 * ui, rect.y() + 16 * ui),
        font(15 * ui, True),
        theme.qcolor("text"),
        theme.qcolor("background", alpha=0.85),
    )
    label(
        painter,
        sub,
        QPointF(rect.x() + 10 * ui, box.bottom() + 9 * ui),
        font(11 * ui),
        theme.qcolor("text_muted"),
        theme.qcolor("background", alpha=0.85),
    )


def paint_banner(
    painter: QPainter, rect: QRectF, text: str, theme: Theme, px: float, bold: bool
) -> None:
    """A strip of text centred in ``rect`` (title line or caption line)."""
    with saved(painter):
        painter.setFont(font(px, bold))
        painter.setPen(theme.qcolor("text"))
        painter.drawText(rect, Qt.AlignmentFlag.AlignCenter | Qt.TextFlag.TextSingleLine, text)


def paint_legend(
    painter: QPainter,
    rect: QRectF,
    scene: Scene,
    episode: Episode,
    theme: Theme,
    options: FrameOptions,
    ui: float,
    columns: bool = False,
    hits: list[tuple[int, QRectF]] | None = None,
) -> None:
    """Identity colours, role glyphs and overlay keys inside ``rect``.

    Sections stack top-down, or sit side by side when ``columns`` (a strip under the scene).
    Rows that do not fit are left out; agents beyond the room say how many more there are.
    The focused agent's row (``options.focus``) is highlighted. ``hits`` receives each agent
    row as drawn, (agent, rectangle), so a click on the legend can find the row under it.
    """
    cache = episode_cache(scene, episode)
    with saved(painter):
        painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        row = 20 * ui
        sections = _sections(cache, scene, options, ui, rect, row, columns)
        if columns:
            used = max(len(rows) + 1 for _t, rows in sections) * row
        else:
            used = sum((len(rows) + 1) * row for _t, rows in sections) + 0.4 * row * (
                len(sections) - 1
            )
        box = QRectF(rect.x(), rect.y(), rect.width(), min(rect.height(), used + 12 * ui))
        painter.setPen(QPen(theme.qcolor("grid_major"), 1.0))
        painter.setBrush(theme.qcolor("room_fill"))
        painter.drawRoundedRect(box, 6 * ui, 6 * ui)
        x0, y = rect.x() + 12 * ui, rect.y() + 18 * ui
        text, muted = theme.qcolor("text"), theme.qcolor("text_muted")
        r = 6.0 * ui
        bottom = rect.bottom() - row * 0.6
        head, body = font(12 * ui, bold=True), font(11.5 * ui)
        lefts = [x0] * len(sections)
        if columns:
            # columns as wide as their longest text; smaller type when they would not fit
            widths = _column_widths(sections, head, body, r, ui)
            fit = (rect.width() - 24 * ui) / max(sum(widths), 1.0)
            if fit < 1.0:
                head, body = font(12 * ui * max(fit, 0.6), True), font(11.5 * ui * max(fit, 0.6))
                widths = _column_widths(sections, head, body, r, ui)
            lefts = [x0 + sum(widths[:k]) for k in range(len(sections))]
        for k, (title, rows) in enumerate(sections):
            x = lefts[k]
            if columns:
                y = rect.y() + 18 * ui
            elif k:
                y += row * 0.4
            if y > bottom - row:
                break
            label(painter, title, QPointF(x, y), head, muted, None)
            y += row
            for kind, arg, name in rows:
                if y > bottom:
                    break
                c = QPointF(x + r + 2 * ui, y)
                if kind == "agent":
                    hit = QRectF(x - 6 * ui, y - row / 2, rect.right() - x, row)
                    paint_agent_row_state(painter, hit, int(cast(int, arg)), theme, options, ui)
                    if hits is not None:
                        hits.append((int(cast(int, arg)), hit))
                paint_row_glyph(painter, kind, arg, c, r, theme, ui)
                color = muted if kind == "more" else text
                label(painter, name, QPointF(x + 2 * r + 12 * ui, y), body, color, None)
                y += row


def paint_row_glyph(
    painter: QPainter, kind: str, arg: object, c: QPointF, r: float, theme: Theme, ui: float
) -> None:
    """The glyph at the start of a legend row: an agent's colour, a role mark, an overlay key."""
    if kind == "agent":
        painter.setPen(QPen(theme.qcolor("background"), 1.0))
        painter.setBrush(theme.agent_color(int(cast(int, arg))))
        painter.drawEllipse(c, r, r)
    elif kind == "role":
        hollow = arg == STYLE_HOLLOW
        painter.setPen(
            QPen(theme.qcolor("text_muted"), 2.0 * ui)
            if hollow
            else QPen(theme.qcolor("background"), 1.0)
        )
        painter.setBrush(theme.qcolor("text_muted", alpha=0.35 if hollow else 1.0))
        painter.drawEllipse(c, r, r)
        paint_role_mark(painter, c, r, int(cast(int, arg)), theme.qcolor("text"), theme, ui)
    elif kind == "mark":
        _paint_key(painter, str(arg), c, r, theme, ui)


def paint_agent_row_state(
    painter: QPainter, box: QRectF, agent: int, theme: Theme, options: FrameOptions, ui: float
) -> None:
    """The focused agent's legend row: a band in the selection colour with an outline."""
    if options.focus != agent:
        return
    with saved(painter):
        painter.setPen(QPen(theme.qcolor("selection"), 1.5 * ui))
        painter.setBrush(theme.qcolor("selection", alpha=0.22))
        painter.drawRoundedRect(box.adjusted(1, 1, -1, -1), 4 * ui, 4 * ui)


Row = tuple[str, object, str]


def _column_widths(
    sections: list[tuple[str, list[Row]]], head: QFont, body: QFont, r: float, ui: float
) -> list[float]:
    hm, bm = QFontMetricsF(head), QFontMetricsF(body)
    out = []
    for title, rows in sections:
        texts = [bm.horizontalAdvance(name) + 2 * r + 12 * ui for _k, _a, name in rows]
        out.append(max([hm.horizontalAdvance(title), *texts]) + 18 * ui)
    return out


def _sections(
    cache: EpisodeCache,
    scene: Scene,
    options: FrameOptions,
    ui: float,
    rect: QRectF,
    row: float,
    columns: bool,
) -> list[tuple[str, list[Row]]]:
    numbers = show_numbers(cache.agents, options)
    room = (rect.height() - 2 * row) if columns else rect.height() * 0.45
    max_rows = max(1, int(room // row))
    agents: list[Row] = []
    for a in range(cache.agents):
        if a >= max_rows - 1 and cache.agents > max_rows:
            agents.append(("more", None, f"+ {cache.agents - a} more, numbered"))
            break
        name = scene.agents[a].id if a < len(scene.agents) else f"agent {a + 1}"
        agents.append(("agent", a, f"{a + 1}  {name}" if numbers or cache.agents > 1 else name))
    out: list[tuple[str, list[Row]]] = [("Agents", agents)]
    roles = role_legend(cache, options)
    if roles:
        title = "Roles (tape)" if role_source(cache, options) == "tape" else "Roles"
        out.append((title, [("role", style, name) for style, name in roles]))
    keys = _overlay_keys(cache, options)
    if keys:
        out.append(("Marks", [("mark", kind, name) for kind, name in keys]))
    return out


def _overlay_keys(cache: EpisodeCache, options: FrameOptions) -> list[tuple[str, str]]:
    keys: list[tuple[str, str]] = []
    if options.team_goal and cache.has_team_goal:
        keys.append(("target", "team-goal target"))
    if options.pursued and cache.pursued.any():
        keys.append(("pursued", "pursued, on team goal"))
        keys.append(("pursued_off", "pursued, not on goal"))
    if options.collisions and len(cache.collisions):
        keys.append(("collision", "contact began"))
    if options.par_paths and cache.par_time_paths():
        keys.append(("par", "par-time path"))
    return keys


def _paint_key(painter: QPainter, kind: str, c: QPointF, r: float, theme: Theme, ui: float) -> None:
    painter.setBrush(Qt.BrushStyle.NoBrush)
    if kind == "target":
        painter.setBrush(theme.qcolor("target_highlight", alpha=0.2))
        painter.setPen(QPen(theme.qcolor("target_highlight"), 2.5 * ui))
        painter.drawEllipse(c, r, r)
        return
    if kind == "collision":
        painter.setPen(QPen(theme.qcolor("error"), 2.0 * ui))
        painter.drawLine(QPointF(c.x() - r, c.y() - r), QPointF(c.x() + r, c.y() + r))
        painter.drawLine(QPointF(c.x() - r, c.y() + r), QPointF(c.x() + r, c.y() - r))
        return
    pen = QPen(theme.qcolor("text"), 1.6 * ui)
    if kind == "pursued_off":
        pen.setStyle(Qt.PenStyle.DashLine)
    if kind == "par":
        pen = QPen(theme.qcolor("path"), 1.6 * ui)
        pen.setStyle(Qt.PenStyle.DashDotLine)
    painter.setPen(pen)
    path = QPainterPath(QPointF(c.x() - r * 1.2, c.y()))
    path.lineTo(QPointF(c.x() + r * 1.6, c.y()))
    painter.drawPath(path)
