"""The canvas's cached overlays draw the same pixels as the shared painters they stand in for.

The replay canvas paints its clock with fonts made once (ClockOverlay) and blits the scale bar
from a cached cut-out; clip export calls render.legend.paint_clock and
render.scene_painter.paint_scale_bar directly. Screen and clip must agree pixel for pixel, so
each check compares images with Pillow's ImageChops.difference (the reference library) and
wants no pixel to differ. The screen-versus-shared-painter rule is common practice, no source.
"""

from __future__ import annotations

import numpy as np
import pytest
from PIL import Image, ImageChops
from PySide6.QtCore import QRectF, Qt
from PySide6.QtGui import QImage, QPainter

from arena_studio.app.canvas import SceneCanvas
from arena_studio.app.replay.clock_overlay import ClockOverlay
from arena_studio.core.tape.episode import Episode
from arena_studio.render.legend import paint_clock
from arena_studio.render.scene_painter import paint_scale_bar
from arena_studio.render.theme import load_theme
from arena_studio.render.view import ViewTransform

from .test_replay_support import small_scene


def to_pillow(image: QImage) -> Image.Image:
    rgb = image.convertToFormat(QImage.Format.Format_RGB888)
    buf = np.frombuffer(rgb.constBits(), np.uint8, count=rgb.sizeInBytes())
    rows = buf.reshape(rgb.height(), rgb.bytesPerLine())[:, : rgb.width() * 3]
    return Image.fromarray(rows.reshape(rgb.height(), rgb.width(), 3).copy())


def differing_pixels(a: QImage, b: QImage) -> int:
    diff = np.asarray(ImageChops.difference(to_pillow(a), to_pillow(b)))
    return int((diff.max(axis=-1) > 0).sum())


def striped(w: int, h: int) -> QImage:
    """A busy backdrop, so translucent backdrops and text antialiasing are both exercised."""
    image = QImage(w, h, QImage.Format.Format_RGB32)
    image.fill(Qt.GlobalColor.white)
    p = QPainter(image)
    for x in range(0, w, 7):
        p.fillRect(x, 0, 3, h, Qt.GlobalColor.darkCyan)
    p.end()
    return image


def episode(steps: int, index: int = 7) -> Episode:
    poses = np.zeros((steps, 1, 3))
    goal = np.array([1, 0, 0], dtype=np.uint8)
    return Episode(index=index, dt=0.1, poses=poses, team_goal=goal, pursued_goals=(goal,))


@pytest.mark.parametrize("theme_name", ["light", "dark"])
@pytest.mark.parametrize("ui", [1.0, 1.5])
def test_clock_overlay_equals_shared_clock(qapp, theme_name, ui):
    theme = load_theme(theme_name)
    overlay = ClockOverlay()
    ep = episode(2001)
    for step in (0, 7, 999, 2000, 5000, -3):  # clamped at both ends, as the shared clock does
        shared, ours = striped(360, 90), striped(360, 90)
        for image, draw in (
            (shared, lambda p, s=step: paint_clock(p, QRectF(0, 0, 320, 60), ep, s, theme, ui)),
            (ours, lambda p, s=step: overlay.paint(p, QRectF(0, 0, 320, 60), ep, s, theme, ui)),
        ):
            p = QPainter(image)
            p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
            p.setRenderHint(QPainter.RenderHint.TextAntialiasing, True)
            draw(p)
            p.end()
        assert differing_pixels(shared, ours) == 0, (theme_name, ui, step)
        # and the clock did draw something (the test can fail)
        assert differing_pixels(shared, striped(360, 90)) > 100


def test_clock_overlay_follows_a_theme_change(qapp):
    overlay = ClockOverlay()
    ep = episode(50)
    for name in ("light", "dark", "light"):
        theme = load_theme(name)
        shared, ours = striped(360, 90), striped(360, 90)
        p = QPainter(shared)
        paint_clock(p, QRectF(0, 0, 320, 60), ep, 20, theme, 1.0)
        p.end()
        p = QPainter(ours)
        overlay.paint(p, QRectF(0, 0, 320, 60), ep, 20, theme, 1.0)
        p.end()
        assert differing_pixels(shared, ours) == 0, name


@pytest.mark.parametrize("size", [(1280, 720), (430, 260)])
def test_canvas_scale_bar_blit_equals_shared_scale_bar(qtbot, size):
    theme = load_theme("light")
    canvas = SceneCanvas(theme)
    qtbot.addWidget(canvas)
    canvas.resize(*size)
    canvas.show_scene(small_scene())
    canvas.show()
    canvas.fit_scene()
    for factor in (1.0, 1.7, 0.4):  # the cut-out is remade when the zoom changes
        canvas.zoom_by(factor)
        w, h = canvas.viewport().width(), canvas.viewport().height()
        t = canvas.viewportTransform()
        view = ViewTransform(canvas.pixels_per_metre(), t.dx(), t.dy())
        shown = striped(w, h)
        direct = striped(w, h)
        p = QPainter(shown)
        p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        p.setRenderHint(QPainter.RenderHint.TextAntialiasing, True)
        canvas.drawForeground(p, QRectF(0, 0, w, h))
        p.end()
        p = QPainter(direct)
        p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        p.setRenderHint(QPainter.RenderHint.TextAntialiasing, True)
        paint_scale_bar(p, view, theme, (float(w), float(h)))
        p.end()
        assert differing_pixels(shown, direct) == 0, factor
        assert differing_pixels(shown, striped(w, h)) > 20
