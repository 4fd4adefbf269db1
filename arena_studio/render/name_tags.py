"""Name tags that follow the bodies: who is who, at the body itself.

A start marker's name stays where the agent began; a moving body needs its own name beside
it. Each tag is a small box with the agent's colour swatch and its id, put at one of eight
spots around the body, the first that covers no other tag, no landmark label, no target's
arrival text and no other body (greedy, agents in scene order; a tag keeps last frame's spot
while that spot stays clear, so tags do not flicker). Bodies that sit on one another (centres
closer than the larger radius) share one tag naming all of them and carry a count badge, so a
stacked agent never disappears.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QFontMetricsF, QPainter, QPen

from arena_studio.render.drawing import font
from arena_studio.render.episode_cache import EpisodeCache
from arena_studio.render.options import FrameOptions
from arena_studio.render.role_style import show_numbers
from arena_studio.render.theme import Theme
from arena_studio.render.view import ViewTransform

Box = tuple[float, float, float, float]  # x0, y0, x1, y1 in pixels, y down
#: most agents that get name tags (beyond, bodies carry numbers and tags would crowd)
TAGS_UP_TO = 12
#: spots around a body, as (dx, dy) unit directions; upper right first (reading order)
SPOTS = ((1, -1), (-1, -1), (1, 1), (-1, 1), (1, 0), (-1, 0), (0, -1), (0, 1))
_SWATCH = 8.0
_PAD = 3.0


def stacks(pos: np.ndarray, radii: np.ndarray) -> list[list[int]]:
    """Groups of agents whose bodies sit on one another (centre distance below the larger
    radius), each group in scene order; agents without a pose are left out."""
    n = len(pos)
    parent = list(range(n))

    def root(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    ok = np.isfinite(pos).all(axis=1)
    for i in range(n):
        for j in range(i + 1, n):
            if ok[i] and ok[j]:
                d = float(np.hypot(*(pos[i] - pos[j])))
                if d < max(float(radii[i]), float(radii[j])):
                    parent[root(j)] = root(i)
    groups: dict[int, list[int]] = {}
    for i in range(n):
        if ok[i]:
            groups.setdefault(root(i), []).append(i)
    return sorted(groups.values(), key=lambda g: g[0])


def _overlap(a: Box, b: Box) -> float:
    w = min(a[2], b[2]) - max(a[0], b[0])
    h = min(a[3], b[3]) - max(a[1], b[1])
    return w * h if w > 0 and h > 0 else 0.0


def _spot_box(cx: float, cy: float, r: float, w: float, h: float, spot: int, gap: float) -> Box:
    dx, dy = SPOTS[spot]
    d = r + gap
    x = cx + dx * d * (0.72 if dy else 1.0)
    y = cy + dy * d * (0.72 if dx else 1.0)
    x0 = x if dx > 0 else (x - w if dx < 0 else x - w / 2)
    y0 = y - h if dy < 0 else (y if dy > 0 else y - h / 2)
    return (x0, y0, x0 + w, y0 + h)


def place_tags(
    centres: list[tuple[float, float]],
    radii: list[float],
    sizes: list[tuple[float, float]],
    blocked: list[Box],
    frame: Box | None = None,
    previous: list[int] | None = None,
    gap: float = 4.0,
) -> list[tuple[Box, int]]:
    """Per tag (one per body or stack, in order): its box and spot index. A spot is scored by
    how much it covers of ``blocked`` boxes, tags placed before it and other bodies, and how
    far it leaves ``frame``; the least covered wins, last frame's spot on a tie."""
    bodies = [(x - r, y - r, x + r, y + r) for (x, y), r in zip(centres, radii, strict=True)]
    placed: list[tuple[Box, int]] = []
    for i, ((cx, cy), r, (w, h)) in enumerate(zip(centres, radii, sizes, strict=True)):
        order = list(range(len(SPOTS)))
        if previous is not None and i < len(previous) and 0 <= previous[i] < len(SPOTS):
            order.remove(previous[i])
            order.insert(0, previous[i])
        best: tuple[float, Box, int] | None = None
        for spot in order:
            box = _spot_box(cx, cy, r, w, h, spot, gap)
            cost = sum(_overlap(box, b) for b in blocked)
            cost += 2.0 * sum(_overlap(box, b) for b, _s in placed)
            cost += sum(_overlap(box, b) for k, b in enumerate(bodies) if k != i)
            if frame is not None:
                inside = _overlap(box, frame)
                cost += 4.0 * (w * h - inside)
            if best is None or cost < best[0] - 1e-9:
                best = (cost, box, spot)
            if cost == 0.0:
                break
        assert best is not None
        placed.append((best[1], best[2]))
    return placed


def tag_names(cache: EpisodeCache) -> list[str]:
    agents = cache.scene.agents
    return [agents[a].id if a < len(agents) else f"agent {a + 1}" for a in range(cache.agents)]


def wants_tags(cache: EpisodeCache, opts: FrameOptions) -> bool:
    return opts.name_tags and cache.agents <= TAGS_UP_TO and not show_numbers(cache.agents, opts)


def paint_name_tags(
    painter: QPainter,
    cache: EpisodeCache,
    step: int,
    view: ViewTransform,
    theme: Theme,
    opts: FrameOptions,
    ui: float,
    blocked: list[Box],
) -> list[tuple[list[int], Box]]:
    """Tags (and count badges of stacks) at ``step``; returns each tag's agents and box, for
    tests and hit-testing. ``blocked``: pixel boxes of landmark labels and target texts."""
    if not wants_tags(cache, opts):
        return []
    pos = view.map_array(cache.xy[step])
    radii = np.maximum(cache.radius * view.scale, 2.5 * ui)
    groups = stacks(pos, radii)
    if not groups:
        return []
    names = tag_names(cache)
    qfont = font(11 * ui, bold=True)
    metrics = QFontMetricsF(qfont)
    texts = [" + ".join(names[a] for a in g) for g in groups]
    swatch = _SWATCH * ui
    sizes = [
        (
            metrics.horizontalAdvance(t) + len(g) * (swatch + 2 * ui) + 3 * _PAD * ui,
            metrics.height() + 2 * _PAD * ui * 0.6,
        )
        for t, g in zip(texts, groups, strict=True)
    ]
    centres = [(float(pos[g[0], 0]), float(pos[g[0], 1])) for g in groups]
    rads = [float(radii[g].max()) + 5.5 * ui for g in groups]  # outside the role rings
    device = painter.device()
    frame = (0.0, 0.0, float(device.width()), float(device.height())) if device else None
    memo_key = ("name_tags.spots", view, ui)
    previous_by_first = cache.memo.get(memo_key, {})
    previous = [previous_by_first.get(g[0], -1) for g in groups]
    placed = place_tags(centres, rads, sizes, blocked, frame, previous, gap=3.0 * ui)
    cache.memo[memo_key] = {g[0]: spot for g, (_b, spot) in zip(groups, placed, strict=True)}
    out: list[tuple[list[int], Box]] = []
    painter.setFont(qfont)
    for g, text, (box, _spot) in zip(groups, texts, placed, strict=True):
        _draw_tag(painter, g, text, box, theme, ui, metrics)
        if len(g) > 1:
            _draw_count(painter, centres[groups.index(g)], float(radii[g].max()), len(g), theme, ui)
        out.append((g, box))
    return out


def _draw_tag(
    painter: QPainter,
    agents: list[int],
    text: str,
    box: Box,
    theme: Theme,
    ui: float,
    metrics: QFontMetricsF,
) -> None:
    x0, y0, x1, y1 = box
    rect = QRectF(x0, y0, x1 - x0, y1 - y0)
    painter.setPen(QPen(theme.qcolor("text", alpha=0.35), 1.0 * ui))
    painter.setBrush(theme.qcolor("room_fill", alpha=0.88))
    painter.drawRoundedRect(rect, 3 * ui, 3 * ui)
    swatch = _SWATCH * ui
    x = x0 + _PAD * ui
    cy = (y0 + y1) / 2
    painter.setPen(QPen(theme.qcolor("text"), 0.8 * ui))
    for a in agents:
        painter.setBrush(theme.agent_color(a))
        painter.drawEllipse(QPointF(x + swatch / 2, cy), swatch / 2, swatch / 2)
        x += swatch + 2 * ui
    painter.setPen(theme.qcolor("text"))
    painter.setBrush(Qt.BrushStyle.NoBrush)
    base = cy + (metrics.ascent() - metrics.descent()) / 2
    painter.drawText(QPointF(x + _PAD * ui * 0.5, base), text)


def _draw_count(
    painter: QPainter, c: tuple[float, float], r: float, n: int, theme: Theme, ui: float
) -> None:
    """A round badge with the number of stacked bodies, at the stack's lower left."""
    s = 7.5 * ui
    at = QPointF(c[0] - r * 0.85, c[1] + r * 0.85)
    painter.setPen(QPen(theme.qcolor("background"), 1.2 * ui))
    painter.setBrush(theme.qcolor("text"))
    painter.drawEllipse(at, s, s)
    painter.setPen(theme.qcolor("background"))
    painter.setFont(font(10 * ui, bold=True))
    painter.drawText(
        QRectF(at.x() - s, at.y() - s, 2 * s, 2 * s), Qt.AlignmentFlag.AlignCenter, str(n)
    )
