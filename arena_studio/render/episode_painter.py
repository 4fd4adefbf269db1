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
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QPainter, QPainterPath, QPen, QPolygonF, QStaticText

from ..core.episode import Episode
from ..core.roles import HEADING, HOLDING, IDLE, MOVING, OFF_GOAL, ROLE_NAMES
from ..core.scene import Scene
from .drawing import font, label
from .episode_cache import EpisodeCache, episode_cache
from .fastpath import polylines_path, segments_path
from .theme import Theme
from .view import ViewTransform

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
#: tape labels take these styles in order of first appearance
TAPE_STYLES = (STYLE_RING, STYLE_DOUBLE, STYLE_HOLLOW, STYLE_BADGE, STYLE_SQUARE, STYLE_DASH)
#: above this many agents, bodies carry their number
NUMBER_ABOVE = 6


@dataclass(frozen=True)
class FrameOptions:
    """What an episode frame shows. Sizes in pixels are multiplied by ``ui_scale``."""

    theme: str = "light"
    trails: bool = True
    trail_seconds: float = 4.0
    trail_bands: int = 4
    roles: str = "auto"  # "auto" (tape labels when present), "derived", "tape", "none"
    team_goal: bool = True
    pursued: bool = True
    par_paths: bool = False
    collisions: bool = True
    numbers: str = "auto"  # "auto" (beyond 6 agents), "always", "never"
    legend: bool = True
    clock: bool = True
    title: str | None = None
    caption: str | None = None
    grid: bool = False
    scale_bar: bool = True
    landmark_labels: bool = True
    ui_scale: float | None = None  # None: from the output height (720 px = 1.0)


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
        return [
            (TAPE_STYLES[i % len(TAPE_STYLES)], name) for i, name in enumerate(cache.tape_labels)
        ]
    return []


def agent_styles(cache: EpisodeCache, step: int, options: FrameOptions) -> np.ndarray:
    """(A,) style codes at ``step``."""
    source = role_source(cache, options)
    if source == "derived":
        lut = np.array([DERIVED_STYLE[c] for c in range(len(ROLE_NAMES))], dtype=np.int16)
        return lut[cache.roles[step]]
    if source == "tape":
        codes = cache.tape_codes[step]
        lut = np.array(TAPE_STYLES, dtype=np.int16)
        return np.where(codes >= 0, lut[np.maximum(codes, 0) % len(TAPE_STYLES)], STYLE_PLAIN)
    return np.full(cache.agents, STYLE_PLAIN, dtype=np.int16)


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


@lru_cache(maxsize=4096)
def _static_number(text: str, px: int) -> QStaticText:
    st = QStaticText(text)
    st.prepare()
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
        paint_collisions(painter, cache, step, view, theme, ui)
    paint_agents(painter, cache, step, view, theme, opts, ui)
    painter.restore()


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
    scene = cache.scene
    hi = theme.qcolor("target_highlight")
    qfont = font(11 * ui, bold=True)
    for l_idx in np.flatnonzero(cache.team):
        lm = scene.landmarks[l_idx]
        c = view.to_px(*lm.position)
        r = max(view.length_px(lm.reach_radius), 6 * ui)
        covered = bool(cache.covered[step, l_idx])
        painter.setBrush(theme.qcolor("target_highlight", alpha=0.22 if covered else 0.1))
        pen = QPen(hi, (3.0 if covered else 2.2) * ui)
        pen.setStyle(Qt.PenStyle.SolidLine if covered else Qt.PenStyle.DashLine)
        painter.setPen(pen)
        painter.drawEllipse(c, r, r)
        firsts = cache.covered_first[:, l_idx]
        reached = np.flatnonzero((firsts >= 0) & (firsts <= step))
        if len(reached) == 0:
            continue
        order = reached[np.argsort(firsts[reached], kind="stable")]
        pip = 4.0 * ui
        for k, a in enumerate(order[:12]):
            ang = math.pi / 2 - k * (pip * 2.6) / (r + pip)  # clockwise from the top
            p = QPointF(
                c.x() + (r + pip + 1) * math.cos(ang), c.y() - (r + pip + 1) * math.sin(ang)
            )
            painter.setPen(QPen(theme.qcolor("text"), 1.0 * ui))
            painter.setBrush(theme.agent_color(int(a)))
            painter.drawEllipse(p, pip, pip)
        first = int(order[0])
        text = f"{first + 1} at {firsts[first] * cache.episode.dt:.1f} s"
        label(
            painter,
            text,
            QPointF(c.x(), c.y() + r + 10 * ui),
            qfont,
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
    dt = cache.episode.dt
    length = max(1, round(opts.trail_seconds / dt)) if dt > 0 else 1
    first = max(0, step - length)
    if step - first < 1:
        return
    bands = max(1, min(opts.trail_bands, step - first))
    edges = np.linspace(first, step, bands + 1).round().astype(int)
    n_colors = len(theme.identity)
    groups = [np.arange(g, cache.agents, n_colors) for g in range(min(n_colors, cache.agents))]
    width = max(1.6 * ui, view.length_px(0.05))
    painter.setBrush(Qt.BrushStyle.NoBrush)
    for b in range(bands):
        s0, s1 = int(edges[b]), int(edges[b + 1])
        if s1 <= s0:
            continue
        alpha = 0.15 + 0.6 * (b + 1) / bands
        block = view.map_array(cache.xy[s0 : s1 + 1])  # (n, A, 2)
        n = block.shape[0]
        starts = np.zeros(n, dtype=bool)
        starts[0] = True
        for g, members in enumerate(groups):
            pts = block[:, members].transpose(1, 0, 2).reshape(-1, 2)
            pen = QPen(theme.agent_color(g, alpha=alpha), width)
            pen.setCapStyle(Qt.PenCapStyle.RoundCap)
            pen.setJoinStyle(Qt.PenJoinStyle.RoundJoin)
            painter.setPen(pen)
            painter.drawPath(polylines_path(pts, np.tile(starts, len(members))))


def paint_pursued(
    painter: QPainter, cache: EpisodeCache, step: int, view: ViewTransform, theme: Theme, ui: float
) -> None:
    """Lines to pursued targets: faint and solid on the team goal, strong and dashed off it.

    A target the agent already covers gets no line (the agent is there), so a settled team
    shows few lines and a misaligned agent's dashed line stands out.
    """
    if not cache.pursued.any() or cache.agents > 32:
        return
    lm = np.array([m.position for m in cache.scene.landmarks], dtype=np.float64)
    pos = view.map_array(cache.xy[step])
    lm_px = view.map_array(lm)
    here = np.linalg.norm(lm[None] - cache.xy[step][:, None], axis=-1) <= np.array(
        [m.reach_radius for m in cache.scene.landmarks]
    )
    for a in range(cache.agents):
        targets = np.flatnonzero(cache.pursued[a] & ~here[a])
        for on_team in (True, False):
            sel = targets[cache.team[targets] == on_team]
            if len(sel) == 0:
                continue
            if on_team:
                pen = QPen(theme.agent_color(a, alpha=0.45), 1.0 * ui)
            else:
                pen = QPen(theme.agent_color(a, alpha=0.95), 2.0 * ui)
                pen.setStyle(Qt.PenStyle.DashLine)
            painter.setPen(pen)
            painter.drawPath(segments_path(np.repeat(pos[a : a + 1], len(sel), 0), lm_px[sel]))


def paint_collisions(
    painter: QPainter, cache: EpisodeCache, step: int, view: ViewTransform, theme: Theme, ui: float
) -> None:
    ev = cache.collisions
    if len(ev) == 0:
        return
    upto = int(np.searchsorted(ev[:, 0], step, side="right"))
    ev = ev[max(0, upto - 200) : upto]
    if len(ev) == 0:
        return
    recent_steps = 1.0 / cache.episode.dt if cache.episode.dt > 0 else 1
    px = view.map_array(ev[:, 1:3])
    recent = (step - ev[:, 0]) <= recent_steps
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


def paint_agents(
    painter: QPainter,
    cache: EpisodeCache,
    step: int,
    view: ViewTransform,
    theme: Theme,
    opts: FrameOptions,
    ui: float,
) -> None:
    pos = view.map_array(cache.xy[step])
    heading = cache.heading[step]
    radii = np.maximum(cache.radius * view.scale, 2.5 * ui)
    styles = agent_styles(cache, step, opts)
    ring_color = theme.qcolor("text")
    edge = QPen(theme.qcolor("background"), 1.0 * ui)
    numbers = show_numbers(cache.agents, opts)
    num_font = font(max(8.0 * ui, min(radii.min() * 1.1, 13 * ui)), bold=True)
    painter.setFont(num_font)
    for a in range(cache.agents):
        c = QPointF(float(pos[a, 0]), float(pos[a, 1]))
        r = float(radii[a])
        style = int(styles[a])
        fill = theme.agent_color(a, alpha=0.35 if style == STYLE_HOLLOW else None)
        painter.setPen(edge if style != STYLE_HOLLOW else QPen(theme.agent_color(a), 2.0 * ui))
        painter.setBrush(fill)
        painter.drawEllipse(c, r, r)
        ink = ink_for(theme.agent_color(a)) if style != STYLE_HOLLOW else ring_color
        h = float(heading[a])
        tip = QPointF(c.x() + r * math.cos(h), c.y() - r * math.sin(h))
        painter.setPen(QPen(ink, max(1.5 * ui, r * 0.18)))
        start = QPointF(c.x() + 0.35 * r * math.cos(h), c.y() - 0.35 * r * math.sin(h))
        painter.drawLine(start if numbers else c, tip)
        paint_role_mark(painter, c, r, style, ring_color, theme, ui)
        if numbers and r >= 6 * ui:
            text = str(a + 1)
            painter.setPen(ink)
            box = QRectF(c.x() - r, c.y() - r, 2 * r, 2 * r)
            painter.drawText(box, Qt.AlignmentFlag.AlignCenter, text)
        elif numbers:
            painter.setPen(theme.qcolor("text"))
            painter.drawStaticText(
                QPointF(c.x() + r + 1, c.y() - r - 10 * ui),
                _static_number(str(a + 1), num_font.pixelSize()),
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
    if style == STYLE_BADGE:
        s = max(5.0 * ui, r * 0.55)
        bx, by = c.x() + r * 0.8, c.y() - r * 0.8
        tri = QPolygonF(
            [QPointF(bx, by - s), QPointF(bx + s, by + s * 0.75), QPointF(bx - s, by + s * 0.75)]
        )
        painter.setPen(QPen(color, 1.2 * ui))
        painter.setBrush(theme.qcolor("warning"))
        painter.drawPolygon(tri)
    elif style == STYLE_SQUARE:
        s = max(4.0 * ui, r * 0.45)
        painter.setPen(QPen(color, 1.2 * ui))
        painter.setBrush(theme.qcolor("info"))
        painter.drawRect(QRectF(c.x() + r * 0.8 - s, c.y() - r * 0.8 - s, 2 * s, 2 * s))


# -- frame decorations: legend, clock, title, caption ---------------------------------------
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
    painter.save()
    painter.setFont(font(px, bold))
    painter.setPen(theme.qcolor("text"))
    painter.drawText(rect, Qt.AlignmentFlag.AlignCenter | Qt.TextFlag.TextSingleLine, text)
    painter.restore()


def paint_legend(
    painter: QPainter,
    rect: QRectF,
    scene: Scene,
    episode: Episode,
    theme: Theme,
    options: FrameOptions,
    ui: float,
) -> None:
    """Identity colours, role glyphs and overlay keys, top-down inside ``rect``."""
    cache = episode_cache(scene, episode)
    painter.save()
    painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
    painter.setPen(QPen(theme.qcolor("grid_major"), 1.0))
    painter.setBrush(theme.qcolor("room_fill"))
    painter.drawRoundedRect(rect, 6 * ui, 6 * ui)
    x = rect.x() + 12 * ui
    y = rect.y() + 18 * ui
    row = 20 * ui
    head, body = font(12 * ui, bold=True), font(11.5 * ui)
    text, muted = theme.qcolor("text"), theme.qcolor("text_muted")
    r = 6.0 * ui
    bottom = rect.bottom() - row

    def heading(t: str) -> None:
        nonlocal y
        label(painter, t, QPointF(x, y), head, muted, None)
        y += row

    heading("Agents")
    numbers = show_numbers(cache.agents, options)
    max_rows = max(1, int((rect.height() * 0.45) // row))
    for a in range(cache.agents):
        if a >= max_rows and cache.agents > max_rows + 1:
            label(
                painter,
                f"+ {cache.agents - a} more (colours repeat, numbered)",
                QPointF(x, y),
                body,
                muted,
                None,
            )
            y += row
            break
        c = QPointF(x + r, y)
        painter.setPen(QPen(theme.qcolor("background"), 1.0))
        painter.setBrush(theme.agent_color(a))
        painter.drawEllipse(c, r, r)
        name = scene.agents[a].id if a < len(scene.agents) else f"agent {a + 1}"
        label(
            painter,
            f"{a + 1}  {name}" if numbers or cache.agents > 1 else name,
            QPointF(x + 2 * r + 8 * ui, y),
            body,
            text,
            None,
        )
        y += row
    rows = role_legend(cache, options)
    if rows and y < bottom - row:
        y += row * 0.4
        heading("Roles" + (" (tape)" if role_source(cache, options) == "tape" else ""))
        for style, name in rows:
            if y > bottom:
                break
            c = QPointF(x + r + 2 * ui, y)
            hollow = style == STYLE_HOLLOW
            painter.setPen(
                QPen(theme.qcolor("background"), 1.0)
                if not hollow
                else QPen(theme.qcolor("text_muted"), 2.0 * ui)
            )
            painter.setBrush(theme.qcolor("text_muted", alpha=0.35 if hollow else 1.0))
            painter.drawEllipse(c, r, r)
            paint_role_mark(painter, c, r, style, text, theme, ui)
            label(painter, name, QPointF(x + 2 * r + 12 * ui, y), body, text, None)
            y += row
    keys = _overlay_keys(cache, options)
    if keys and y < bottom - row:
        y += row * 0.4
        heading("Marks")
        for kind, name in keys:
            if y > bottom:
                break
            _paint_key(painter, kind, QPointF(x + r, y), r, theme, ui)
            label(painter, name, QPointF(x + 2 * r + 12 * ui, y), body, text, None)
            y += row
    painter.restore()


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
