"""Wide trails cut into blocks at fixed steps of the episode, so raster frames stroke each
block once and blit it after.

A small team's trail is drawn with a wide antialiased pen, and stroking it costs most of a
frame (2 agents with 200-step trails at 1280x720: ~0.6 ms of a 1.5 ms budget, measured here).
Blocks begin at multiples of a fixed number of steps (not at the window's first step), so a
block looks the same in every frame that shows it. On a raster device a block is stroked at
full strength into a transparent work image aligned to the pixel grid and blitted with the
opacity of its age; from its second showing the image is kept, and later frames only blit
it. A frame therefore has the same pixels whether its blocks were kept or not. The two
ragged ends of the window are stroked every frame with a translucent pen. Vector output
(SVG) and scaled painters stroke every span that way.

Opacity falls with the age of a block's middle step, from :data:`NEWEST_ALPHA` to
:data:`OLDEST_ALPHA` across the window: the fade moves smoothly as time runs.
"""

from __future__ import annotations

import math
import threading
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from PySide6.QtCore import QPoint, QRect, Qt
from PySide6.QtGui import QImage, QPainter, QPainterPath, QPen

from arena_studio.render.drawing import cached_pen
from arena_studio.render.episode_cache import EpisodeCache
from arena_studio.render.fastpath import WIDE_PIECE_PX
from arena_studio.render.theme import Theme
from arena_studio.render.view import ViewTransform

#: a block is about this many pixels of typical travel long
BLOCK_PX = 48.0
#: at most this many blocks are kept in one frame (the rest of a cold frame, after a zoom or
#: a jump, are kept by later frames or the viewer's idle-time prefill)
NEW_BLOCKS_PER_FRAME = 8
#: spans wider or taller than this (zoomed far in) are stroked directly, not blitted
MAX_SCRATCH_PX = 1024
#: blocks wider or taller than this are drawn through the work image each frame, not kept
#: (zoomed in, few are on screen and keeping them would cost megabytes each)
MAX_KEEP_PX = 256
#: block images kept per episode and view, in pixels (4 bytes each), before caching stops
MAX_STORE_PIXELS = 8_000_000
#: views (zoom levels, themes, pen widths) kept per episode
STORES_PER_EPISODE = 2
NEWEST_ALPHA, OLDEST_ALPHA = 0.75, 0.2


def block_spans(first: int, step: int, block_steps: int) -> list[tuple[int, int, bool]]:
    """The window ``[first, step]`` cut at multiples of ``block_steps``: ``(start, end, whole)``
    per piece, oldest first. Neighbours share their end step; ``whole`` marks a piece that is
    a complete block (the same in every frame that shows it)."""
    if step <= first:
        return []
    size = max(1, int(block_steps))
    lo, hi = -(-first // size), step // size  # first and last block boundary in the window
    if lo > hi:
        return [(first, step, False)]
    spans = []
    if first < lo * size:
        spans.append((first, lo * size, False))
    spans.extend((j * size, (j + 1) * size, True) for j in range(lo, hi))
    if step > hi * size:
        spans.append((hi * size, step, False))
    return spans


def span_samples(start: int, end: int, stride: int) -> np.ndarray:
    """Steps drawn for a span: its ends and the multiples of ``stride`` between them (the same
    steps whichever window the span belongs to)."""
    k0 = start // stride + 1
    inner = np.arange(k0 * stride, end, stride, dtype=np.int64)
    return np.concatenate(([start], inner, [end])).astype(np.int64)


def span_alpha(step: int, start: int, end: int, length: int) -> float:
    """Opacity of a span in the window ending at ``step``: by the age of its middle step."""
    age = (step - 0.5 * (start + end)) / max(length, 1)
    age = min(max(age, 0.0), 1.0)
    return NEWEST_ALPHA + (OLDEST_ALPHA - NEWEST_ALPHA) * age


@dataclass
class _Store:
    """Block images of one episode at one view: ``(agent, start step) -> (x0, y0, image)``
    with ``x0, y0`` relative to the whole-pixel part of the view's offset."""

    images: dict[tuple[int, int], tuple[int, int, QImage]] = field(default_factory=dict)
    skip: set[tuple[int, int]] = field(default_factory=set)  # blocks with nothing to keep
    seen: set[tuple[int, int]] = field(default_factory=set)  # shown once, not kept yet
    pixels: int = 0
    job: tuple[tuple[Any, ...], Iterator[tuple[int, int]]] | None = None  # an unfinished prefill

    def add(self, key: tuple[int, int], entry: tuple[int, int, QImage] | None) -> None:
        if entry is None:
            self.skip.add(key)
            return
        self.images[key] = entry
        self.pixels += entry[2].width() * entry[2].height()


def _store(cache: EpisodeCache, key: tuple[Any, ...]) -> _Store:
    stores = cache.trail_blocks
    store = stores.get(key)
    if store is None:
        while len(stores) >= STORES_PER_EPISODE:
            stores.pop(next(iter(stores)))
        store = stores[key] = _Store()
    return store


def trail_pen(theme: Theme, color_index: int, alpha: float, width: float) -> QPen:
    """Flat caps so neighbouring pieces abut without blending twice; bevel joins (~25 %
    cheaper than round ones). Opacity in 1/255 steps, as Qt stores it."""
    level = round(alpha * 255)

    def make() -> QPen:
        pen = QPen(theme.agent_color(color_index, alpha=level / 255), width)
        pen.setCapStyle(Qt.PenCapStyle.FlatCap)
        pen.setJoinStyle(Qt.PenJoinStyle.BevelJoin)
        return pen

    return cached_pen(("trail", theme.name, color_index, level, width), make)


def paint_wide_trails(
    painter: QPainter,
    cache: EpisodeCache,
    first: int,
    step: int,
    stride: int,
    view: ViewTransform,
    theme: Theme,
    width: float,
    raster: bool,
) -> None:
    """Every agent's trail over ``[first, step]`` (every ``stride``-th step) with a wide pen.

    ``raster``: the painter blits exactly (see ``episode_painter.blits_exactly``). Then a
    whole block is stroked at full strength into a transparent work image, blitted with its
    opacity and kept for later frames, so a frame has the same pixels whether its blocks were
    kept or not (stills and clips are byte for byte reproducible); the ragged ends are
    stroked with a translucent pen. Spans are the same for every agent, so their steps,
    opacities and (for the ragged ends) pixel positions are worked out once for all agents:
    at two agents the Python around the drawing costs as much as the drawing."""
    length = step - first
    segments, piece = block_layout(cache, view, stride)
    spans = [
        (start, end, whole, span_alpha(step, start, end, length))
        for start, end, whole in block_spans(first, step, segments * stride)
    ]
    n_colors = len(theme.identity)
    store, ix, iy, local = _store_at(cache, view, theme, width, stride, segments, raster)
    if store is None:
        _stroke_spans(painter, cache, spans, stride, view, theme, width, piece)
        return
    live = {}  # span start -> per agent pixel lists of the ragged ends, stroked every frame
    for start, end, whole, _alpha in spans:
        if not whole:
            live[start] = _pixels(cache.xy[span_samples(start, end, stride)], view)
    missing: dict[
        int, tuple[list[Any], list[Any]]
    ] = {}  # span start -> pixels and boxes, per agent
    budget = NEW_BLOCKS_PER_FRAME
    base = painter.opacity()  # e.g. a ghosted episode's layer opacity
    device = painter.device()
    visible = (-ix, -iy, device.width() - ix, device.height() - iy)  # in the local frame
    scratch = _scratch()
    try:
        for a in range(cache.agents):
            color = a % n_colors
            for start, end, whole, alpha in spans:
                if not whole:
                    # the same every frame: a translucent pen straight onto the frame
                    painter.setOpacity(base)
                    painter.setPen(trail_pen(theme, color, alpha, width))
                    for path in _pieces(live[start][a], piece):
                        painter.drawPath(path)
                    continue
                painter.setOpacity(base * alpha)
                entry = store.images.get((a, start))
                if entry is not None:
                    painter.drawImage(QPoint(entry[0] + ix, entry[1] + iy), entry[2])
                    continue
                if start not in missing:  # the span's pixels and boxes for every agent
                    missing[start] = _span_geometry(cache, start, end, stride, local, width)
                pts, box = missing[start][0][a], missing[start][1][a]
                if box is None or not _overlaps(box, visible):
                    continue  # nothing to draw, or off screen (zoomed in)
                if box[2] > MAX_SCRATCH_PX or box[3] > MAX_SCRATCH_PX:
                    # zoomed far in: a span wider than any work image is stroked directly
                    painter.setOpacity(base)
                    painter.setPen(trail_pen(theme, color, alpha, width))
                    for path in _pieces(_pixels(_world(cache, start, end, stride, a), view), piece):
                        painter.drawPath(path)
                    continue
                rect = scratch.stroke(pts, box, trail_pen(theme, color, 1.0, width), piece)
                painter.drawImage(QPoint(box[0] + ix, box[1] + iy), scratch.image, rect)
                if (a, start) not in store.seen:
                    # kept from its second showing: a one-off jump copies nothing
                    store.seen.add((a, start))
                    continue
                small = box[2] <= MAX_KEEP_PX and box[3] <= MAX_KEEP_PX
                if small and budget > 0 and store.pixels < MAX_STORE_PIXELS:
                    budget -= 1
                    store.add((a, start), (box[0], box[1], scratch.image.copy(rect)))
    finally:
        scratch.end()
        painter.setOpacity(base)


def _stroke_spans(
    painter: QPainter,
    cache: EpisodeCache,
    spans: list[tuple[int, int, bool, float]],
    stride: int,
    view: ViewTransform,
    theme: Theme,
    width: float,
    piece: int,
) -> None:
    """Vector output (SVG) and scaled painters: every span stroked with a translucent pen."""
    n_colors = len(theme.identity)
    painter.setBrush(Qt.BrushStyle.NoBrush)
    per_span = [_pixels(cache.xy[span_samples(s0, s1, stride)], view) for s0, s1, _w, _a in spans]
    for a in range(cache.agents):  # agent by agent, as raster frames draw them
        for (_start, _end, _whole, alpha), per_agent in zip(spans, per_span, strict=True):
            painter.setPen(trail_pen(theme, a % n_colors, alpha, width))
            for path in _pieces(per_agent[a], piece):
                painter.drawPath(path)


class _Scratch:
    """A transparent work image, reused for every span of a frame (a new image and painter
    per span cost more than the stroke)."""

    def __init__(self) -> None:
        self.image = QImage(128, 128, QImage.Format.Format_ARGB32_Premultiplied)
        self._painter: QPainter | None = None

    def stroke(
        self, pts: list[Any], box: tuple[int, int, int, int], pen: QPen, piece: int
    ) -> QRect:
        """Stroke the polyline ``pts`` (pixels) at full strength into the image's corner, for
        ``box`` (from :func:`_span_box`): the returned rect of the image belongs at whole
        pixel ``box[:2]``."""
        x0, y0, w, h = box
        p = self._begin(w, h)
        rect = QRect(0, 0, w, h)
        p.setCompositionMode(QPainter.CompositionMode.CompositionMode_Source)
        p.fillRect(rect, Qt.GlobalColor.transparent)
        p.setCompositionMode(QPainter.CompositionMode.CompositionMode_SourceOver)
        p.setPen(pen)
        p.translate(-x0, -y0)
        for path in _pieces(pts, piece):
            p.drawPath(path)
        p.resetTransform()
        return rect

    def _begin(self, w: int, h: int) -> QPainter:
        if w > self.image.width() or h > self.image.height():
            self.end()
            side = max(w, h, self.image.width(), self.image.height())
            self.image = QImage(side, side, QImage.Format.Format_ARGB32_Premultiplied)
        if self._painter is None:
            self._painter = QPainter(self.image)
            self._painter.setRenderHint(QPainter.RenderHint.Antialiasing, True)
            self._painter.setBrush(Qt.BrushStyle.NoBrush)
        return self._painter

    def end(self) -> None:
        if self._painter is not None:
            self._painter.end()
            self._painter = None


def _span_box(pts: list[Any], width: float) -> tuple[int, int, int, int] | None:
    """Whole-pixel box ``(x0, y0, w, h)`` around a polyline and its pen, or None when it has
    fewer than two finite points."""
    finite = [p for p in pts if math.isfinite(p[0]) and math.isfinite(p[1])]
    if len(finite) < 2:
        return None
    xs, ys = [p[0] for p in finite], [p[1] for p in finite]
    pad = width / 2 + 2.0
    x0, y0 = math.floor(min(xs) - pad), math.floor(min(ys) - pad)
    return x0, y0, math.ceil(max(xs) + pad) - x0, math.ceil(max(ys) + pad) - y0


def _span_geometry(
    cache: EpisodeCache, start: int, end: int, stride: int, view: ViewTransform, width: float
) -> tuple[list[Any], list[Any]]:
    """Every agent's pixels of one span (one numpy pass) and their :func:`_span_box` (plain
    floats: a dozen points an agent, where numpy's per-call cost would dominate)."""
    per_agent = _pixels(cache.xy[span_samples(start, end, stride)], view)
    return per_agent, [_span_box(pts, width) for pts in per_agent]


def _world(cache: EpisodeCache, start: int, end: int, stride: int, agent: int) -> np.ndarray:
    return cache.xy[span_samples(start, end, stride), agent]


_LOCAL = threading.local()


def _scratch() -> _Scratch:
    """This thread's work image (clip export may paint off the GUI thread)."""
    scratch = getattr(_LOCAL, "scratch", None)
    if scratch is None:
        scratch = _LOCAL.scratch = _Scratch()
    return scratch


def block_layout(cache: EpisodeCache, view: ViewTransform, stride: int) -> tuple[int, int]:
    """(steps' strides per block, points per stroked piece) for this episode at this zoom:
    pieces about :data:`~.fastpath.WIDE_PIECE_PX` long, a block split into equal pieces (no
    one-segment remainder to stroke on its own)."""
    step_px = view.length_px(cache.step_length()) * stride
    if step_px <= 0:
        return 16, 64
    segments = max(1, round(BLOCK_PX / step_px))
    per_piece = max(1, int(WIDE_PIECE_PX // step_px))
    pieces = -(-segments // per_piece)
    return segments, 1 + -(-segments // pieces)


def _store_at(
    cache: EpisodeCache,
    view: ViewTransform,
    theme: Theme,
    width: float,
    stride: int,
    segments: int,
    raster: bool,
) -> tuple[_Store | None, int, int, ViewTransform]:
    """The block store for this view (None off raster devices), the whole-pixel part of the
    view's offset and the view less that part, which block images are drawn in (so an
    integer pan keeps them)."""
    ix, iy = math.floor(view.offset_x), math.floor(view.offset_y)
    local = ViewTransform(view.scale, view.offset_x - ix, view.offset_y - iy)
    if not raster:
        return None, ix, iy, local
    key = (theme.name, round(view.scale, 9), round(local.offset_x, 6),
           round(local.offset_y, 6), width, stride, segments)  # fmt: skip
    return _store(cache, key), ix, iy, local


def prefill_blocks(
    cache: EpisodeCache,
    step: int,
    stride: int,
    view: ViewTransform,
    theme: Theme,
    width: float,
    max_new: int,
    bounds: tuple[int, int] | None = None,
    seconds: float = 0.002,
    clock: Callable[[], float] = time.perf_counter,
) -> bool:
    """Draw up to ``max_new`` missing block images of the episode (for at most ``seconds``
    by ``clock``), nearest to ``step`` first, so scrubbing finds them drawn. A viewer calls
    this while idle; ``bounds`` (width, height in pixels) limits it to blocks on screen. True
    while it has more to do; a later call with the same step and bounds carries on where this
    one stopped. Tests pass a clock of their own, so the budget never depends on machine load."""
    segments, piece = block_layout(cache, view, stride)
    store, ix, iy, local = _store_at(cache, view, theme, width, stride, segments, True)
    assert store is not None
    size = segments * stride
    last = (cache.steps - 1) // size  # blocks 0 .. last - 1 are whole
    here = min(max(step // size, 0), max(last - 1, 0))
    job_key = (here, bounds, theme.name)
    if store.job is None or store.job[0] != job_key:
        order: Iterator[tuple[int, int]] = (
            (a, j) for j in _nearest_first(here, last) for a in range(cache.agents)
        )
        store.job = (job_key, order)
    order = store.job[1]
    visible = None
    if bounds is not None:  # the view's pixels, in the block images' (local) frame
        visible = (-ix, -iy, bounds[0] - ix, bounds[1] - iy)
    n_colors = len(theme.identity)
    deadline = clock() + seconds
    made = 0
    for a, j in order:
        key = (a, j * size)
        if key in store.images or key in store.skip:
            continue
        if store.pixels >= MAX_STORE_PIXELS:
            return False
        pts = _pixels(_world(cache, j * size, (j + 1) * size, stride, a), local)
        box = _span_box(pts, width)
        if box is None or box[2] > MAX_KEEP_PX or box[3] > MAX_KEEP_PX:
            store.skip.add(key)  # nothing to draw, or drawn through the work image each frame
            continue
        if visible is not None and not _overlaps(box, visible):
            continue
        store.add(key, _block_image(pts, box, piece, theme, a % n_colors, width))
        made += 1
        if made >= max_new or clock() > deadline:
            return True
    store.job = None
    return False


def _overlaps(box: tuple[int, int, int, int], rect: tuple[int, int, int, int]) -> bool:
    x0, y0, w, h = box
    return x0 < rect[2] and x0 + w > rect[0] and y0 < rect[3] and y0 + h > rect[1]


def _nearest_first(here: int, count: int) -> Iterator[int]:
    """Block numbers ``0 .. count - 1`` by distance from ``here``, the one behind before the
    one ahead at each distance (a trail lies behind its step)."""
    if 0 <= here < count:
        yield here
    for d in range(1, count + 1):
        for j in (here - d, here + d):
            if 0 <= j < count:
                yield j


def _pixels(world: np.ndarray, view: ViewTransform) -> list[Any]:
    """(S, [A,] 2) metres -> nested lists of pixels, agent-major when there are agents."""
    px = world * np.array([view.scale, -view.scale]) + np.array([view.offset_x, view.offset_y])
    return (px.swapaxes(0, 1) if px.ndim == 3 else px).tolist()


def _pieces(pts: list[Any], piece: int) -> list[QPainterPath]:
    """A polyline (list of pixel pairs) as paths of ``piece`` points sharing their ends: Qt
    strokes short wide pieces several times cheaper per point than one long path (see
    :data:`~.fastpath.WIDE_PIECE_PX`). A non-finite point breaks the line."""
    runs: list[list[Any]] = [[]]
    for xy in pts:
        if math.isfinite(xy[0]) and math.isfinite(xy[1]):
            runs[-1].append(xy)
        elif runs[-1]:
            runs.append([])
    paths = []
    for run in runs:
        for k in range(0, len(run) - 1, piece - 1):
            path = QPainterPath()
            path.moveTo(*run[k])
            for x, y in run[k + 1 : k + piece]:
                path.lineTo(x, y)
            paths.append(path)
    return paths


def _block_image(
    pts: list[Any],
    box: tuple[int, int, int, int],
    piece: int,
    theme: Theme,
    color: int,
    width: float,
) -> tuple[int, int, QImage]:
    """One block (pixel polyline ``pts`` in ``box``) stroked at full strength into a
    transparent image on the pixel grid, exactly as :func:`paint_wide_trails` strokes it."""
    scratch = _scratch()
    try:
        rect = scratch.stroke(pts, box, trail_pen(theme, color, 1.0, width), piece)
        return box[0], box[1], scratch.image.copy(rect)
    finally:
        scratch.end()
