"""Where the replay canvas's overlays go, and the room the scene keeps beside them.

The clock (and, in compare, the pane's caption under it) takes a band at the top left; the
legend goes top right as a 200 px column when the view is wide, else as a compact legend
(:mod:`arena_studio.render.legend_compact`): a strip under the scene or a narrow column
beside it, whichever leaves the scene drawn larger. The scene is then fitted into what is
left, with its landmark labels, so no overlay covers it at the fitted view.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from PySide6.QtCore import QRectF

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.render.legend_compact import CompactLayout, compact_layout
from arena_studio.render.options import FrameOptions
from arena_studio.render.view import ViewTransform

LEGEND_W = 200.0
#: views at least this wide get the full legend; narrower ones the compact one
FULL_LEGEND_FROM_PX = 520
#: ...as long as it leaves the scene this share of the scale the compact legend would
FULL_LEGEND_KEEPS = 0.8
#: the clock's two lines (render.legend.paint_clock at ui 1.0), and a caption line under it
CLOCK_H = 50.0
CAPTION_H = 24.0
#: the view width from which the caption sits top centre instead of under the clock
CAPTION_CENTRED_FROM_PX = 760
#: the scale bar and its text under the scene (render.scene_painter puts it 28 px below)
SCALE_BAR_PX = 36.0
#: how much scene scale one more legend section (roles, marks) is worth, as a share
SECTION_WORTH = 0.06
#: the compact legend may take this share of the view's height (strip) or width (column)
STRIP_SHARE, COLUMN_SHARE = 0.3, 0.34


@dataclass(frozen=True)
class Room:
    """Pixels the overlays take: ``top`` (clock, caption), ``right`` and ``bottom`` (legend)."""

    top: float
    right: float = 0.0
    bottom: float = 0.0


@dataclass(frozen=True)
class LegendPlace:
    kind: str  # "full" or "compact"
    rect: QRectF  # in viewport pixels
    compact: CompactLayout | None
    room: Room


def scale_bar_room(width: float) -> float:
    """Pixels the scale bar takes at the bottom left: its bar (render.scene_painter makes
    it at most a sixth of the view) from 16 px in, and its "10 m" label."""
    return 16.0 + width / 6 + 44.0


def header_height(width: float, caption: bool) -> float:
    """The band the clock and the caption take at the top left."""
    below = caption and width < CAPTION_CENTRED_FROM_PX
    return CLOCK_H + (CAPTION_H if below else 0.0)


def place_legend(
    scene: Scene,
    episode: Episode,
    options: FrameOptions,
    size: tuple[float, float],
    top: float,
    scale_for: Callable[[Room], float],
) -> LegendPlace:
    """The legend's place in a ``size`` view; ``scale_for(room)`` says how large the scene
    would be drawn with that room taken (the compact legend goes where it is larger)."""
    w, h = size
    compact = _best_compact(scene, episode, options, size, top, scale_for)
    if w >= FULL_LEGEND_FROM_PX:
        # the full legend unless it shrinks the scene much more than the compact one would
        # (a wide but short compare pane on a large screen)
        height = min(h - 20.0, 150.0 + 20.0 * (episode.agent_count + 9))
        rect = QRectF(int(w - LEGEND_W - 10), 10, LEGEND_W, height)
        full = LegendPlace("full", rect, None, Room(top, LEGEND_W + 60.0))
        if scale_for(full.room) >= FULL_LEGEND_KEEPS * scale_for(compact.room):
            return full
    return compact


def _best_compact(
    scene: Scene,
    episode: Episode,
    options: FrameOptions,
    size: tuple[float, float],
    top: float,
    scale_for: Callable[[Room], float],
) -> LegendPlace:
    w, h = size
    # a strip bottom right, beside the scale bar (bottom left, at most w/6 long), or a
    # column top right; with every section, or fewer when they cost the scene much room
    best: tuple[float, LegendPlace] | None = None
    strip_w = w - 20.0 - scale_bar_room(w)
    for keep in (3, 2, 1):
        strip = compact_layout(scene, episode, options, strip_w, h * STRIP_SHARE, 1.0, keep)
        column = compact_layout(scene, episode, options, w * COLUMN_SHARE, h - 20.0, 1.0, keep)
        sw, sh = strip.size.width(), strip.size.height()
        cw, ch = column.size.width(), column.size.height()
        for layout, rect, room in (
            (strip, QRectF(int(w - sw - 10), int(h - sh - 8), sw, sh), Room(top, 0.0, sh + 8)),
            (column, QRectF(int(w - cw - 8), 10, cw, ch), Room(top, cw + 16.0, 0.0)),
        ):
            # each section beyond the agents is worth SECTION_WORTH of the scene's scale
            shown = len({c.kind for c in layout.chips} - {"more"})
            score = scale_for(room) * (1.0 + SECTION_WORTH * (shown - 1))
            if best is None or score > best[0]:
                best = (score, LegendPlace("compact", rect, layout, room))
    assert best is not None
    return best[1]


def margin_for(size: tuple[float, float]) -> float:
    """Pixels kept round the fitted scene (labels are already inside it): 36 on a wide view,
    less on a narrow or short one, where every pixel goes to the scene."""
    return max(14.0, min(36.0, 0.045 * min(size)))


def with_labels(
    scene: Scene, box: tuple[float, float, float, float], scale: float
) -> tuple[float, float, float, float]:
    """``box`` grown to hold the landmark labels as drawn at ``scale`` px/m."""
    from arena_studio.render.scene_painter import label_places

    minx, miny, maxx, maxy = box
    view = ViewTransform(scale, 0.0, 0.0)
    for place in label_places(scene, view, 1.0, None, False):
        x0, y0, x1, y1 = place.box
        minx, miny, maxx, maxy = min(minx, x0), min(miny, y0), max(maxx, x1), max(maxy, y1)
    return minx, miny, maxx, maxy


def fit(
    scene: Scene,
    size: tuple[float, float],
    room: Room,
    margin: float,
    limits: tuple[float, float],
    texts: tuple[tuple[float, float, float], ...] = (),
) -> tuple[float, float, float]:
    """Scale (px/m) and the world point to centre the view on, so the scene and its labels
    fill what ``room`` leaves of a ``size`` view, ``margin`` px inside it. ``texts``: (x, y,
    half width in px) of texts centred on world points, kept in view too."""
    from arena_studio.core.geometry.regions import bounds

    w, h = size
    top = max(room.top + 6.0, margin)
    vw = max(w - room.right - 2 * margin, 40.0)
    # the scale bar hangs 28 px under the scene: room for it, unless a legend strip is there
    # (the bar then sits beside the strip)
    below = room.bottom + margin if room.bottom else max(margin, SCALE_BAR_PX)
    vh = max(h - top - below, 40.0)
    minx, miny, maxx, maxy = bounds(scene)
    s = 1.0
    for _ in range(3):  # landmark labels are sized in pixels: refit with them in view
        bw, bh = max(maxx - minx, 1.0), max(maxy - miny, 1.0)
        s = min(max(min(vw / bw, vh / bh), limits[0]), limits[1])
        minx, miny, maxx, maxy = with_labels(scene, bounds(scene), s)
        for x, _y, half in texts:
            minx, maxx = min(minx, x - half / s), max(maxx, x + half / s)
    # the free area's centre in pixels -> the world point at the view's centre (y up)
    px = margin + vw / 2
    py = top + vh / 2
    cx = (minx + maxx) / 2 + (w / 2 - px) / s
    cy = (miny + maxy) / 2 - (h / 2 - py) / s
    return s, cx, cy
