"""Stills of two episodes side by side: the figure that sets a failure beside a success.

Each half is the one-episode frame of :mod:`arena_studio.render.frame` at half the width,
titled with its episode and drawn at the ui scale of the whole frame, exactly as the halves
of a side-by-side clip (:class:`arena_studio.render.clip.ClipPainter`) are.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace
from pathlib import Path

from PySide6.QtCore import QBuffer, QByteArray, QIODevice, QRectF, QSize
from PySide6.QtGui import QImage, QPainter

from arena_studio.core.atomic import write_bytes_atomic
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape.episode_scene import episode_scene
from arena_studio.render.episode_painter import FrameOptions
from arena_studio.render.frame import (
    IMAGE_FORMAT,
    STILL_MARK,
    FrameRenderer,
    frame_layout,
    paint_dynamic,
    paint_static,
    png_bytes,
    ui_scale_for,
)
from arena_studio.render.paint_guard import saved
from arena_studio.render.theme import load_theme


def side_title(options: FrameOptions, episode: Episode) -> str:
    """Each half names its episode (after the frame's title when there is one)."""
    if options.title:
        return f"{options.title}  ·  episode {episode.index}"
    return f"episode {episode.index}"


def halves(width: int) -> tuple[tuple[int, int], tuple[int, int]]:
    """``(x, width)`` of the left and right half; the right one takes an odd pixel."""
    half = width // 2
    return (0, half), (half, width - half)


def _checked(episodes: Sequence[Episode], steps: Sequence[int]) -> None:
    if len(episodes) != 2 or len(steps) != 2:
        raise ValueError("a side-by-side still shows exactly two episodes")


def _half_options(options: FrameOptions, size: tuple[int, int], ep: Episode) -> FrameOptions:
    ui = options.ui_scale if options.ui_scale is not None else ui_scale_for(size, options)
    return replace(options, ui_scale=ui, title=side_title(options, ep))


def render_compare(
    scene: Scene,
    episodes: Sequence[Episode],
    steps: Sequence[int],
    options: FrameOptions | None = None,
    size: tuple[int, int] = (1280, 720),
) -> QImage:
    """Both episodes, each at its own step, as one new QImage (RGB32)."""
    _checked(episodes, steps)
    opts = options or FrameOptions()
    w, h = size
    image = QImage(QSize(w, h), IMAGE_FORMAT)
    painter = QPainter(image)
    try:
        for (x, width), ep, step in zip(halves(w), episodes, steps, strict=True):
            part = FrameRenderer(scene, (width, h), _half_options(opts, size, ep))
            painter.drawImage(x, 0, part.render(ep, step))
        painter.setPen(load_theme(opts.theme).qcolor("grid_major"))
        painter.drawLine(w // 2, 0, w // 2, h)
    finally:
        painter.end()
    return image


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
    opts = options or FrameOptions()
    w, h = round(size[0] * scale), round(size[1] * scale)
    ui = ui_scale_for(size, opts) * scale
    image = render_compare(scene, episodes, steps, replace(opts, ui_scale=ui), (w, h))
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
    """Both halves as one SVG: vector shapes, text kept as text (QSvgGenerator)."""
    from PySide6.QtSvg import QSvgGenerator

    _checked(episodes, steps)
    opts = options or FrameOptions()
    theme = load_theme(opts.theme)
    w, h = size
    data = QByteArray()
    buffer = QBuffer(data)
    buffer.open(QIODevice.OpenModeFlag.WriteOnly)
    gen = QSvgGenerator()
    gen.setOutputDevice(buffer)
    gen.setSize(QSize(w, h))
    gen.setViewBox(QRectF(0, 0, w, h))
    gen.setTitle("arena_studio frames side by side")
    shown = ", ".join(f"episode {e.index} step {s}" for e, s in zip(episodes, steps, strict=True))
    gen.setDescription(f"{STILL_MARK}: {scene.name}, {shown}")
    painter = QPainter(gen)
    try:
        painter.fillRect(QRectF(0, 0, w, h), theme.qcolor("background"))
        for (x, width), ep, step in zip(halves(w), episodes, steps, strict=True):
            half_opts = _half_options(opts, size, ep)
            layout = frame_layout(scene, (width, h), half_opts)
            own = episode_scene(scene, ep)  # its own landmark positions, if it recorded them
            with saved(painter):
                painter.translate(x, 0)
                painter.setClipRect(QRectF(0, 0, width, h))
                paint_static(painter, own, ep, layout, theme, half_opts)
                paint_dynamic(painter, own, ep, step, layout, theme, half_opts)
        painter.setPen(theme.qcolor("grid_major"))
        painter.drawLine(w // 2, 0, w // 2, h)
    finally:
        painter.end()
    buffer.close()
    return bytes(data.data())


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
