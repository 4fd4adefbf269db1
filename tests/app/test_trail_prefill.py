"""The replay canvas pre-draws trail blocks while idle, and frames drawn from them show the
same pixels as frames that stroke every block.

Reference: Qt itself (a general-purpose library): the same canvas rendered with the blocks
dropped, so every trail block is stroked directly with the same pen.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtGui import QImage

from arena_studio.app.replay.prepared import prepare_episode
from arena_studio.app.replay.replay_canvas import ReplayCanvas
from arena_studio.render.episode_cache import episode_cache
from arena_studio.render.episode_painter import FrameOptions
from arena_studio.render.theme import load_theme

from .test_replay_support import small_scene, straight_episode


def _pixels(canvas: ReplayCanvas) -> np.ndarray:
    image = QImage(canvas.viewport().size(), QImage.Format.Format_RGB32)
    canvas.viewport().render(image)
    bits = np.frombuffer(image.constBits(), np.uint8).reshape(image.height(), image.width(), 4)
    return bits[..., :3].astype(np.int16).copy()


def test_idle_canvas_draws_blocks_and_frames_look_the_same(qtbot):
    scene = small_scene()
    ep = straight_episode(steps=161)  # 8 s straight up at 0.5 m/s
    canvas = ReplayCanvas(load_theme("light"))
    qtbot.addWidget(canvas)
    canvas.resize(900, 560)
    canvas.show_legend = False
    canvas.set_episode(scene, prepare_episode(scene, ep))
    canvas.set_options(FrameOptions(trail_seconds=6.0, legend=False))
    canvas.show()
    canvas.fit_scene()
    canvas.set_step(150)
    cache = episode_cache(scene, ep)
    before = _pixels(canvas)  # the first paint asks for the idle-time blocks
    qtbot.waitUntil(lambda: not canvas.trail_prefill.busy, timeout=5000)
    (store,) = cache.trail_blocks.values()
    assert len(store.images) >= 2 * 3  # both agents, several blocks each
    after = _pixels(canvas)
    diff = np.abs(after - before).max(axis=-1)
    # the same frame: blocks blitted where the first frame stroked them (pieces inside a
    # block join at full strength, so a few joint pixels may be lighter; see
    # tests/render/test_trail_blocks.py)
    assert (diff > 3).sum() <= 40, f"{(diff > 3).sum()} pixels differ"
    assert canvas.layer_episode.painted_step == 150
