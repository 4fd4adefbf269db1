"""Whole frames offscreen: layout, the cached static layer, PNG and SVG stills.

A frame is the scene (left) with a side panel (right: clock and legend), an optional title
line on top and caption line at the bottom. :class:`FrameRenderer` paints the static part
(background, scene, legend) once per episode and output size, then each frame is one blit
plus the episode layer, which is what makes clip export fast. Painting is deterministic:
same inputs, same pixels (no clock, no randomness, one font family).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, replace
from pathlib import Path

from PySide6.QtCore import QBuffer, QByteArray, QIODevice, QRectF, QSize
from PySide6.QtGui import QColor, QImage, QPainter

from arena_studio.core.atomic import write_bytes_atomic
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape.episode_scene import episode_scene
from arena_studio.render.episode_painter import (
    FrameOptions,
    paint_banner,
    paint_clock,
    paint_episode_frame,
    paint_legend,
)
from arena_studio.render.paint_guard import guarded, saved
from arena_studio.render.scene_painter import SceneOptions, paint_scene
from arena_studio.render.theme import Theme, load_theme
from arena_studio.render.view import ViewTransform

#: Written into stills, so a re-run recognises its own earlier output (core.outputs).
STILL_MARK = "arena-studio render"
IMAGE_FORMAT = QImage.Format.Format_RGB32  # memory order B, G, R, 0xFF on little-endian


@dataclass(frozen=True)
class FrameLayout:
    size: tuple[int, int]
    ui: float
    scene_rect: QRectF
    panel_rect: QRectF | None  # side panel or bottom strip (clock + legend)
    legend_rect: QRectF | None
    clock_rect: QRectF | None
    legend_columns: bool
    title_rect: QRectF | None
    caption_rect: QRectF | None
    view: ViewTransform
    statement_rect: QRectF | None = None


#: lines of the who-went-where statement a frame has room for
STATEMENT_LINES = 3


def statement_height(ui: float, width: float) -> float:
    """Room for the who-went-where lines: one more line in narrow frames (a side-by-side
    half), where the same sentence wraps more often."""
    lines = STATEMENT_LINES if width >= 1000.0 * ui else STATEMENT_LINES + 1
    return (lines * 16.0 + 8.0) * ui


def ui_scale_for(size: tuple[int, int], options: FrameOptions) -> float:
    if options.ui_scale is not None:
        return float(options.ui_scale)
    w, h = size
    return float(min(max(min(h / 720.0, w / 1000.0), 0.45), 4.0))


def frame_layout(scene: Scene, size: tuple[int, int], options: FrameOptions) -> FrameLayout:
    """Scene area plus a panel for clock and legend: at the right, or as a strip below the
    scene when that leaves the scene larger (square and narrow frames, side-by-side halves)."""
    w, h = size
    if w < 16 or h < 16:
        raise ValueError(f"frame size {w}x{h} is too small (16x16 at least)")
    ui = ui_scale_for(size, options)
    top = 36.0 * ui if options.title else 0.0
    bottom = 30.0 * ui if options.caption else 0.0
    said = statement_height(ui, w) if options.statement and h - top - bottom > 200 * ui else 0.0
    body_h = h - top - bottom - said
    margin = 14.0 * ui
    title_rect = QRectF(0, 0, w, top) if top else None
    caption_rect = QRectF(0, h - bottom, w, bottom) if bottom else None
    statement = QRectF(0, h - bottom - said, w, said) if said else None
    return replace(
        _frame_layout(scene, size, options, ui, top, body_h, margin, title_rect, caption_rect),
        statement_rect=statement,
    )


def _frame_layout(
    scene: Scene,
    size: tuple[int, int],
    options: FrameOptions,
    ui: float,
    top: float,
    body_h: float,
    margin: float,
    title_rect: QRectF | None,
    caption_rect: QRectF | None,
) -> FrameLayout:
    w, _h = size
    if not (options.legend or options.clock):
        rect = QRectF(0, top, w, body_h)
        view = ViewTransform.fit_scene(scene, rect, margin_px=margin)
        return FrameLayout(size, ui, rect, None, None, None, False, title_rect, caption_rect, view)
    panel_w = min(min(max(0.2 * w, 170.0 * ui), 250.0 * ui), 0.45 * w)
    side = QRectF(0, top, w - panel_w, body_h)
    strip_h = min((150.0 if options.legend else 60.0) * ui, 0.4 * body_h)
    under = QRectF(0, top, w, body_h - strip_h)
    view_side = ViewTransform.fit_scene(scene, side, margin_px=margin)
    view_under = ViewTransform.fit_scene(scene, under, margin_px=margin)
    gap = 8.0 * ui
    if view_under.scale > 1.1 * view_side.scale:
        panel = QRectF(0, under.bottom(), w, strip_h)
        clock_w = 230.0 * ui if options.clock else 0.0
        clock = QRectF(panel.x(), panel.y(), clock_w, 60 * ui) if options.clock else None
        legend = (
            QRectF(panel.x() + clock_w + gap, panel.y(), w - clock_w - 2 * gap, strip_h - gap)
            if options.legend
            else None
        )
        return FrameLayout(
            size, ui, under, panel, legend, clock, True, title_rect, caption_rect, view_under
        )
    panel = QRectF(w - panel_w, top, panel_w, body_h)
    clock = QRectF(panel.x(), panel.y(), panel_w, 60 * ui) if options.clock else None
    legend_top = panel.y() + (70.0 * ui if options.clock else gap)
    legend = (
        QRectF(panel.x() + 6 * ui, legend_top, panel_w - 14 * ui, panel.bottom() - legend_top - gap)
        if options.legend
        else None
    )
    return FrameLayout(
        size, ui, side, panel, legend, clock, False, title_rect, caption_rect, view_side
    )


def scene_options(options: FrameOptions, ui: float) -> SceneOptions:
    return SceneOptions(
        grid=options.grid,
        scale_bar=options.scale_bar,
        landmark_labels=options.landmark_labels,
        reach_rings=True,
        starts=False,
        fill_background=True,
        ui_scale=ui,
    )


def paint_static(
    painter: QPainter,
    scene: Scene,
    episode: Episode,
    layout: FrameLayout,
    theme: Theme,
    options: FrameOptions,
) -> None:
    """Background, scene, panel and legend, title and caption: what no step changes."""
    w, h = layout.size
    with saved(painter):
        painter.setClipRect(layout.scene_rect)
        paint_scene(
            painter,
            scene,
            layout.view,
            theme,
            scene_options(options, layout.ui),
            size=(layout.scene_rect.right(), layout.scene_rect.bottom()),
        )
    painter.fillRect(QRectF(0, 0, w, layout.scene_rect.top()), theme.qcolor("background"))
    painter.fillRect(
        QRectF(0, layout.scene_rect.bottom(), w, h - layout.scene_rect.bottom()),
        theme.qcolor("background"),
    )
    if layout.panel_rect is not None:
        painter.fillRect(layout.panel_rect, theme.qcolor("background"))
    if layout.legend_rect is not None:
        with guarded(painter, "the legend", layout.legend_rect, theme):
            paint_legend(
                painter,
                layout.legend_rect,
                scene,
                episode,
                theme,
                options,
                layout.ui,
                columns=layout.legend_columns,
            )
    if layout.title_rect is not None and options.title:
        with guarded(painter, "the title", theme=theme):
            paint_banner(painter, layout.title_rect, options.title, theme, 18 * layout.ui, True)
    if layout.statement_rect is not None:
        with guarded(painter, "the statement", theme=theme):
            paint_statement(painter, layout.statement_rect, scene, episode, theme, layout.ui)
    if layout.caption_rect is not None and options.caption:
        with guarded(painter, "the caption", theme=theme):
            paint_banner(
                painter, layout.caption_rect, options.caption, theme, 13 * layout.ui, False
            )


def paint_statement(
    painter: QPainter, rect: QRectF, scene: Scene, episode: Episode, theme: Theme, ui: float
) -> None:
    """How the episode went and who went where (core.analysis.statement), wrapped into the
    strip's lines at the largest size that fits."""
    from PySide6.QtCore import Qt

    from arena_studio.core.analysis.statement import episode_statement
    from arena_studio.render.drawing import font

    text = episode_statement(scene, episode)
    if not text:
        return
    box = rect.adjusted(14 * ui, 4 * ui, -14 * ui, -4 * ui)
    with saved(painter):
        painter.fillRect(rect, theme.qcolor("room_fill"))
        painter.setPen(theme.qcolor("text"))
        flags = Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter
        flags |= Qt.TextFlag.TextWordWrap
        for px in (12.5, 11.5, 10.5, 9.5):  # the largest size that fits the lines
            painter.setFont(font(px * ui))
            need = painter.boundingRect(box, int(flags), text)
            if need.height() <= box.height() + 0.5:
                break
        painter.drawText(box, int(flags), text)


def paint_dynamic(
    painter: QPainter,
    scene: Scene,
    episode: Episode,
    step: int,
    layout: FrameLayout,
    theme: Theme,
    options: FrameOptions,
) -> None:
    opts = replace(options, ui_scale=layout.ui)
    with saved(painter):
        painter.setClipRect(layout.scene_rect)
        paint_episode_frame(painter, scene, episode, step, layout.view, theme, opts)
    if layout.clock_rect is not None:
        with guarded(painter, "the clock", theme=theme):
            paint_clock(painter, layout.clock_rect, episode, step, theme, layout.ui)


class FrameRenderer:
    """Frames of one scene at one size; caches the static layer per episode.

    ``render(episode, step)`` returns an internal image that the next call overwrites (copy it
    to keep it); :func:`render_frame` is the convenience that returns a fresh image.
    """

    def __init__(self, scene: Scene, size: tuple[int, int], options: FrameOptions) -> None:
        self.scene = scene
        self.options = options
        self.theme = load_theme(options.theme)
        self.layout = frame_layout(scene, size, options)
        self._static: QImage | None = None
        self._static_for: Episode | None = None
        self._image = QImage(QSize(*size), IMAGE_FORMAT)

    def _static_layer(self, episode: Episode) -> QImage:
        if self._static is None or self._static_for is not episode:
            img = QImage(QSize(*self.layout.size), IMAGE_FORMAT)
            img.fill(self.theme.qcolor("background"))
            painter = QPainter(img)
            try:
                scene = episode_scene(self.scene, episode)  # its own landmark positions
                paint_static(painter, scene, episode, self.layout, self.theme, self.options)
            finally:
                painter.end()
            self._static, self._static_for = img, episode
        return self._static

    def new_image(self) -> QImage:
        """An image of this renderer's size and format, to pass as ``into``."""
        return QImage(QSize(*self.layout.size), IMAGE_FORMAT)

    def render(self, episode: Episode, step: int, into: QImage | None = None) -> QImage:
        """Paint the frame into ``into`` (from :meth:`new_image`) or the internal image.

        Clip export passes its own rotating images so one frame can be piped to the encoder
        while the next is painted."""
        static = self._static_layer(episode)
        target = self._image if into is None else into
        painter = QPainter(target)
        try:
            painter.drawImage(0, 0, static)
            scene = episode_scene(self.scene, episode)
            paint_dynamic(painter, scene, episode, step, self.layout, self.theme, self.options)
        finally:
            painter.end()
        return target

    def render_card(
        self, episode: Episode, title: str, subtitle: str, into: QImage | None = None
    ) -> QImage:
        """A title card: the first frame dimmed, with a large title and one line below."""
        from arena_studio.render.episode_painter import paint_banner as banner

        target = self.render(episode, 0, into)
        w, h = self.layout.size
        painter = QPainter(target)
        veil = QColor(self.theme.qcolor("background"))
        veil.setAlphaF(0.82)
        painter.fillRect(QRectF(0, 0, w, h), veil)
        ui = self.layout.ui
        banner(painter, QRectF(0, h / 2 - 60 * ui, w, 50 * ui), title, self.theme, 30 * ui, True)
        if subtitle:
            banner(
                painter, QRectF(0, h / 2 + 0 * ui, w, 30 * ui), subtitle, self.theme, 15 * ui, False
            )
        painter.end()
        return target


def render_frame(
    scene: Scene,
    episode: Episode,
    step: int,
    options: FrameOptions | None = None,
    size: tuple[int, int] = (1280, 720),
) -> QImage:
    """One frame as a new QImage (RGB32), offscreen, deterministic."""
    return FrameRenderer(scene, size, options or FrameOptions()).render(episode, step).copy()


# -- stills -------------------------------------------------------------------------------------
def png_bytes(image: QImage, dpi: float | None = None, software: str | None = None) -> bytes:
    """PNG of ``image``; ``software`` goes into a text chunk (stills name us there)."""
    if dpi is not None or software is not None:
        image = image.copy()
    if dpi is not None:
        per_metre = round(dpi / 0.0254)
        image.setDotsPerMeterX(per_metre)
        image.setDotsPerMeterY(per_metre)
    if software is not None:
        image.setText("Software", software)
    data = QByteArray()
    buffer = QBuffer(data)
    buffer.open(QIODevice.OpenModeFlag.WriteOnly)
    if not image.save(buffer, "PNG"):  # type: ignore[call-overload]  # stubs want bytes
        raise OSError("could not encode the frame as PNG")
    buffer.close()
    return bytes(data.data())


def save_png_still(
    path: str | Path,
    scene: Scene,
    episode: Episode,
    step: int,
    options: FrameOptions | None = None,
    size: tuple[int, int] = (1280, 720),
    scale: float = 1.0,
    dpi: float | None = None,
) -> Path:
    """A PNG still of ``size`` x ``scale`` pixels (``dpi`` stored in the file), atomic write."""
    pixels, opts = scaled(size, options or FrameOptions(), scale)
    image = render_frame(scene, episode, step, opts, pixels)
    target = Path(path)
    write_bytes_atomic(target, png_bytes(image, dpi, STILL_MARK))
    return target


def scaled(
    size: tuple[int, int], options: FrameOptions, scale: float
) -> tuple[tuple[int, int], FrameOptions]:
    """Pixels and options of a still drawn ``scale`` times ``size``: everything grows, the
    layout stays that of ``size``."""
    ui = ui_scale_for(size, options) * scale
    return (round(size[0] * scale), round(size[1] * scale)), replace(options, ui_scale=ui)


def paint_still(
    painter: QPainter,
    scene: Scene,
    episode: Episode,
    step: int,
    size: tuple[int, int],
    theme: Theme,
    options: FrameOptions,
) -> None:
    """One frame of ``size`` painted straight onto ``painter`` (vector output)."""
    layout = frame_layout(scene, size, options)
    own = episode_scene(scene, episode)  # its own landmark positions, if it recorded them
    paint_static(painter, own, episode, layout, theme, options)
    paint_dynamic(painter, own, episode, step, layout, theme, options)


def svg_document(
    size: tuple[int, int], title: str, description: str, paint: Callable[[QPainter], None]
) -> bytes:
    """An SVG of ``size`` that ``paint`` draws into: vector shapes, text kept as text
    (QSvgGenerator)."""
    from PySide6.QtSvg import QSvgGenerator

    data = QByteArray()
    buffer = QBuffer(data)
    buffer.open(QIODevice.OpenModeFlag.WriteOnly)
    gen = QSvgGenerator()
    gen.setOutputDevice(buffer)
    gen.setSize(QSize(*size))
    gen.setViewBox(QRectF(0, 0, *size))
    gen.setTitle(title)
    gen.setDescription(description)
    painter = QPainter(gen)
    try:
        paint(painter)
    finally:
        painter.end()
    buffer.close()
    return bytes(data.data())


def svg_bytes(
    scene: Scene,
    episode: Episode,
    step: int,
    options: FrameOptions | None = None,
    size: tuple[int, int] = (1280, 720),
    title: str = "arena_studio frame",
) -> bytes:
    """The frame as SVG: vector shapes, text kept as text (QSvgGenerator)."""
    opts = options or FrameOptions()
    theme = load_theme(opts.theme)

    def paint(painter: QPainter) -> None:
        painter.fillRect(QRectF(0, 0, *size), theme.qcolor("background"))
        paint_still(painter, scene, episode, step, size, theme, opts)

    described = f"{STILL_MARK}: {scene.name}, episode {episode.index}, step {step}"
    return svg_document(size, title, described, paint)


def save_svg_still(
    path: str | Path,
    scene: Scene,
    episode: Episode,
    step: int,
    options: FrameOptions | None = None,
    size: tuple[int, int] = (1280, 720),
) -> Path:
    target = Path(path)
    write_bytes_atomic(target, svg_bytes(scene, episode, step, options, size))
    return target
