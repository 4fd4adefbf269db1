"""Stills of two episodes side by side: the figure that sets a failure beside a success.

The PNG is one frame of the side-by-side clip (:class:`arena_studio.render.clip.ClipPainter`);
the SVG paints the same two halves, each the one-episode frame of
:mod:`arena_studio.render.frame` at half the width, titled with its episode and drawn at the
ui scale of the whole frame.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace
from pathlib import Path

from PySide6.QtCore import QRectF
from PySide6.QtGui import QImage, QPainter

from arena_studio.core.atomic import write_bytes_atomic
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.render.clip import ClipPainter, ClipSpec, Shot, halves, side_title
from arena_studio.render.episode_painter import FrameOptions
from arena_studio.render.frame import (
    STILL_MARK,
    paint_still,
    png_bytes,
    scaled,
    svg_document,
    ui_scale_for,
)
from arena_studio.render.paint_guard import saved
from arena_studio.render.theme import load_theme


def _whole_frame_ui(
    episodes: Sequence[Episode],
    steps: Sequence[int],
    options: FrameOptions | None,
    size: tuple[int, int],
) -> FrameOptions:
    """The options with the whole frame's ui scale fixed (both halves share it)."""
    if len(episodes) != 2 or len(steps) != 2:
        raise ValueError("a side-by-side still shows exactly two episodes")
    opts = options or FrameOptions()
    return opts if opts.ui_scale is not None else replace(opts, ui_scale=ui_scale_for(size, opts))


def render_compare(
    scene: Scene,
    episodes: Sequence[Episode],
    steps: Sequence[int],
    options: FrameOptions | None = None,
    size: tuple[int, int] = (1280, 720),
) -> QImage:
    """Both episodes, each at its own step, as one new QImage (RGB32)."""
    opts = _whole_frame_ui(episodes, steps, options, size)
    painter = ClipPainter(scene, episodes, ClipSpec(size=size, compare=True, frame=opts), size)
    return painter.render(Shot(tuple(steps), 0)).copy()


def save_compare_png(
    path: str | Path,
    scene: Scene,
    episodes: Sequence[Episode],
    steps: Sequence[int],
    options: FrameOptions | None = None,
    size: tuple[int, int] = (1280, 720),
    scale: float = 1.0,
    dpi: float | None = None,
) -> Path:
    """A PNG of ``size`` x ``scale`` pixels, written atomically."""
    pixels, opts = scaled(size, options or FrameOptions(), scale)
    image = render_compare(scene, episodes, steps, opts, pixels)
    target = Path(path)
    write_bytes_atomic(target, png_bytes(image, dpi, STILL_MARK))
    return target


def compare_svg_bytes(
    scene: Scene,
    episodes: Sequence[Episode],
    steps: Sequence[int],
    options: FrameOptions | None = None,
    size: tuple[int, int] = (1280, 720),
) -> bytes:
    """Both halves as one SVG: vector shapes, text kept as text."""
    opts = _whole_frame_ui(episodes, steps, options, size)
    theme = load_theme(opts.theme)
    w, h = size

    def paint(painter: QPainter) -> None:
        painter.fillRect(QRectF(0, 0, w, h), theme.qcolor("background"))
        for (x, width), ep, step in zip(halves(w), episodes, steps, strict=True):
            with saved(painter):
                painter.translate(x, 0)
                painter.setClipRect(QRectF(0, 0, width, h))
                half = replace(opts, title=side_title(opts, ep))
                paint_still(painter, scene, ep, step, (width, h), theme, half)
        painter.setPen(theme.qcolor("grid_major"))
        painter.drawLine(w // 2, 0, w // 2, h)

    shown = ", ".join(f"episode {e.index} step {s}" for e, s in zip(episodes, steps, strict=True))
    described = f"{STILL_MARK}: {scene.name}, {shown}"
    return svg_document(size, "arena_studio frames side by side", described, paint)


def save_compare_svg(
    path: str | Path,
    scene: Scene,
    episodes: Sequence[Episode],
    steps: Sequence[int],
    options: FrameOptions | None = None,
    size: tuple[int, int] = (1280, 720),
) -> Path:
    target = Path(path)
    write_bytes_atomic(target, compare_svg_bytes(scene, episodes, steps, options, size))
    return target
