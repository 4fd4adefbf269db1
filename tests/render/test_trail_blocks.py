"""Pre-drawn trail blocks and body sprites must land where Qt would draw the shapes directly.

Reference: Qt itself (a general-purpose library): the same trail stroked straight onto the
image with the same pen, and the same body drawn with drawEllipse at its exact centre.
Span arithmetic is plane bookkeeping (common practice, no source).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from PySide6.QtGui import QColor, QImage, QPainter

from arena_studio.core.scene.model import Agent, GoalSpec, Landmark, Room, Scene, Start
from arena_studio.core.tape.episode import Episode
from arena_studio.render.agent_painter import SPRITE_PHASES, paint_agents
from arena_studio.render.episode_cache import episode_cache
from arena_studio.render.episode_painter import FrameOptions, paint_trails, prefill_frame
from arena_studio.render.theme import load_theme
from arena_studio.render.trail_blocks import (
    NEWEST_ALPHA,
    OLDEST_ALPHA,
    block_spans,
    span_alpha,
    span_samples,
)
from arena_studio.render.view import ViewTransform

W, H = 640, 360


@given(
    first=st.integers(0, 500),
    length=st.integers(1, 400),
    block=st.integers(1, 60),
)
@settings(max_examples=150, deadline=None)
def test_spans_tile_the_window_and_whole_blocks_sit_on_fixed_steps(first, length, block):
    step = first + length
    spans = block_spans(first, step, block)
    assert spans[0][0] == first and spans[-1][1] == step
    for (_a0, a1, _wa), (b0, _b1, _wb) in itertools.pairwise(spans):
        assert a1 == b0  # neighbours share their end step: no gap, no overlap
    for start, end, whole in spans:
        assert start < end
        if whole:  # the same block whatever the window: it starts and ends on the grid
            assert start % block == 0 and end == start + block
        else:  # a window's ragged end
            assert start % block != 0 or end % block != 0


def test_span_samples_keep_the_ends_and_the_grid_between():
    assert span_samples(3, 17, 4).tolist() == [3, 4, 8, 12, 16, 17]
    assert span_samples(8, 16, 4).tolist() == [8, 12, 16]
    assert span_samples(8, 9, 4).tolist() == [8, 9]


def test_older_spans_are_fainter():
    alphas = [span_alpha(200, s, s + 20, 200) for s in range(0, 200, 20)]
    assert alphas == sorted(alphas)
    assert alphas[-1] == pytest.approx(NEWEST_ALPHA + (OLDEST_ALPHA - NEWEST_ALPHA) * 0.05)
    assert min(alphas) >= OLDEST_ALPHA and max(alphas) <= NEWEST_ALPHA


def _hall_episode(agents: int = 2, steps: int = 400) -> tuple[Scene, Episode]:
    side = 20.0
    scene = Scene(
        name="blocks",
        rooms=(Room("hall", ((0, 0), (side, 0), (side, side * 0.6), (0, side * 0.6))),),
        landmarks=(Landmark("lm0", "L0", (5.0, 6.0), 0.6, "free"),),
        agents=tuple(
            Agent(f"a{i}", 0.25, 1.0, 2.0, Start(pose=(1.0 + i, 1.0, 0.0))) for i in range(agents)
        ),
        goals=GoalSpec(families=(1,)),
    )
    t = np.arange(steps) * 0.05
    poses = np.zeros((steps, agents, 3))
    for a in range(agents):  # smooth loops of different sizes (demo data)
        poses[:, a, 0] = 10 + (3 + 2 * a) * np.cos(0.3 * t + a)
        poses[:, a, 1] = 6 + (2 + a) * np.sin(0.45 * t + a)
        poses[:, a, 2] = 0.3 * t
    return scene, Episode(0, 0.05, poses)


def _frame(draw) -> np.ndarray:
    img = QImage(W, H, QImage.Format.Format_RGB32)
    img.fill(QColor("#FAF9F5"))
    p = QPainter(img)
    p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
    draw(p)
    p.end()
    ptr = img.constBits()
    return np.frombuffer(ptr, np.uint8).reshape(H, W, 4)[..., :3].astype(np.int16).copy()


@pytest.mark.parametrize("opacity", [1.0, 0.38])
def test_blitted_blocks_equal_the_stroked_trail(qapp, opacity):
    scene, ep = _hall_episode()
    theme = load_theme("light")
    view = ViewTransform.fit_scene(scene, (0, 0, W, H))
    opts = FrameOptions(trail_seconds=12.0)
    cache = episode_cache(scene, ep)
    while prefill_frame(scene, ep, 300, view, theme, opts, 64):
        pass
    assert cache.trail_blocks, "the prefill drew no blocks"

    def trails(raster: bool):
        def draw(p: QPainter) -> None:
            p.setOpacity(opacity)  # a ghosted layer: blocks must keep the painter's opacity
            paint_trails(p, cache, 300, view, theme, opts, 1.0, raster)

        return draw

    blitted, stroked = _frame(trails(True)), _frame(trails(False))
    ink = np.abs(stroked - 250).max(axis=-1) > 8
    assert ink.sum() > 500  # there is a trail to compare
    diff = np.abs(blitted - stroked).max(axis=-1)
    # the same pixels: a block landing even a pixel off would differ along the whole trail
    assert (diff > 3).sum() <= 0.05 * ink.sum(), f"{(diff > 3).sum()} of {ink.sum()} differ"
    # what differs are the joints between pieces of a span: stroked directly they are
    # blended twice with the translucent pen (a darker bead); in a work image they are
    # joined at full strength first, so the blitted trail is only ever lighter there
    assert (stroked - blitted).max() <= 3
    assert diff.max() <= 24


def test_kept_blocks_give_the_very_same_frame(qapp):
    # stills and clips must not depend on what was drawn before (byte-identical output)
    scene, ep = _hall_episode()
    theme = load_theme("light")
    view = ViewTransform.fit_scene(scene, (0, 0, W, H))
    opts = FrameOptions(trail_seconds=12.0)
    cache = episode_cache(scene, ep)
    cache.trail_blocks.clear()
    cold = _frame(lambda p: paint_trails(p, cache, 333, view, theme, opts, 1.0, True))
    while prefill_frame(scene, ep, 300, view, theme, opts, 64):
        pass
    warm = _frame(lambda p: paint_trails(p, cache, 333, view, theme, opts, 1.0, True))
    assert np.array_equal(cold, warm)


def test_integer_pan_reuses_blocks_and_shifts_pixels(qapp):
    scene, ep = _hall_episode()
    theme = load_theme("light")
    view = ViewTransform.fit_scene(scene, (0, 0, W, H))
    opts = FrameOptions(trail_seconds=12.0)
    cache = episode_cache(scene, ep)
    while prefill_frame(scene, ep, 300, view, theme, opts, 64):
        pass
    (store,) = cache.trail_blocks.values()
    count = len(store.images)
    moved = ViewTransform(view.scale, view.offset_x + 7, view.offset_y - 3)
    a = _frame(lambda p: paint_trails(p, cache, 300, view, theme, opts, 1.0, True))
    b = _frame(lambda p: paint_trails(p, cache, 300, moved, theme, opts, 1.0, True))
    assert len(cache.trail_blocks) == 1 and len(store.images) == count  # no new images
    assert np.array_equal(a[10:-10, 10:-10], b[7:-13, 17:-3])


def test_prefill_finishes_and_covers_every_whole_block(qapp):
    scene, ep = _hall_episode(agents=3, steps=300)
    theme = load_theme("light")
    view = ViewTransform.fit_scene(scene, (0, 0, W, H))
    calls = 0
    while prefill_frame(scene, ep, 0, view, theme, FrameOptions(), 10):
        calls += 1
        assert calls < 500
    cache = episode_cache(scene, ep)
    (store,) = cache.trail_blocks.values()
    starts = {start for _a, start in store.images}
    size = min(b - a for a, b in itertools.pairwise(sorted(starts)))
    assert len(store.images) == 3 * ((ep.steps - 1) // size)


def _centroid(rgb: np.ndarray, background: int = 250) -> np.ndarray:
    weight = np.abs(rgb - background).sum(axis=-1).astype(np.float64)
    ys, xs = np.indices(weight.shape)
    return np.array([(xs * weight).sum(), (ys * weight).sum()]) / weight.sum()


@pytest.mark.parametrize("dx", [0.0, 0.13, 0.37, 0.5, 0.81])
def test_body_sprites_sit_within_an_eighth_of_a_pixel(qapp, dx):
    # one agent alone, at a fractional pixel position: the blitted body (raster=True) and the
    # body Qt draws directly (raster=False) must have the same centroid to within the
    # sprite's sub-pixel step (1/SPRITE_PHASES px, so at most half of that off)
    scene, ep = _hall_episode(agents=1, steps=4)
    theme = load_theme("light")
    base = ViewTransform.fit_scene(scene, (0, 0, W, H))
    view = ViewTransform(base.scale, base.offset_x + dx, base.offset_y + dx / 2)
    cache = episode_cache(scene, ep)
    opts = FrameOptions(roles="none")

    def body(raster: bool):
        return lambda p: paint_agents(p, cache, 1, view, theme, opts, 1.0, raster)

    blit, direct = _frame(body(True)), _frame(body(False))
    offset = _centroid(blit) - _centroid(direct)
    assert np.abs(offset).max() <= 0.5 / SPRITE_PHASES + 0.03
    assert np.abs(blit - direct).max() <= 60  # edges shift by under 1/8 px: small steps only


def test_sprites_skip_agents_without_a_pose(qapp):
    scene, ep = _hall_episode(agents=2, steps=4)
    poses = ep.poses.copy()
    poses[2, 1, :2] = np.nan  # a dropped sample
    gap = Episode(0, ep.dt, poses)
    theme = load_theme("light")
    view = ViewTransform.fit_scene(scene, (0, 0, W, H))
    cache = episode_cache(scene, gap)
    got = _frame(lambda p: paint_agents(p, cache, 2, view, theme, FrameOptions(), 1.0, True))
    assert (np.abs(got - 250).max(axis=-1) > 40).sum() > 20  # the other agent is drawn


def test_zoomed_in_frames_keep_only_small_blocks_on_screen(qapp):
    # zoomed far in, most blocks are off screen and the rest are large: nothing off screen
    # or larger than MAX_KEEP_PX is kept, and the frame still equals the stroked one
    from arena_studio.render.trail_blocks import MAX_KEEP_PX

    scene, ep = _hall_episode()
    theme = load_theme("light")
    base = ViewTransform.fit_scene(scene, (0, 0, W, H))
    cache = episode_cache(scene, ep)
    x, y = cache.xy[300, 0]
    scale = base.scale * 12
    view = ViewTransform(scale, W / 2 - scale * x, H / 2 + scale * y)
    opts = FrameOptions(trail_seconds=12.0)
    cache.trail_blocks.clear()
    blitted = _frame(lambda p: paint_trails(p, cache, 300, view, theme, opts, 1.0, True))
    stroked = _frame(lambda p: paint_trails(p, cache, 300, view, theme, opts, 1.0, False))
    (store,) = cache.trail_blocks.values()
    for x0, y0, img in store.images.values():
        assert img.width() <= MAX_KEEP_PX and img.height() <= MAX_KEEP_PX
        ix, iy = int(np.floor(view.offset_x)), int(np.floor(view.offset_y))
        assert x0 + ix < W and x0 + ix + img.width() > 0  # on screen
        assert y0 + iy < H and y0 + iy + img.height() > 0
    diff = np.abs(blitted - stroked).max(axis=-1)
    ink = np.abs(stroked - 250).max(axis=-1) > 8
    assert ink.sum() > 500 and (diff > 3).sum() <= 0.05 * ink.sum()


def test_prefill_stops_on_its_budget_and_carries_on(qapp):
    from arena_studio.render.trail_blocks import prefill_blocks

    scene, ep = _hall_episode(agents=2, steps=400)
    theme = load_theme("light")
    view = ViewTransform.fit_scene(scene, (0, 0, W, H))
    cache = episode_cache(scene, ep)
    cache.trail_blocks.clear()
    assert prefill_blocks(cache, 200, 2, view, theme, 1.6, max_new=5) is True
    (store,) = cache.trail_blocks.values()
    assert len(store.images) == 5
    calls = 1
    while prefill_blocks(cache, 200, 2, view, theme, 1.6, max_new=5):
        calls += 1
    total = len(store.images) + len(store.skip)
    # every call but the last drew its 5: it carried on, it never started over
    assert calls == total // 5 and store.job is None


def test_small_team_path_draws_the_same_bodies_as_the_general_one(qapp, monkeypatch):
    # the plain-float path for a few agents must give the very pixels of the array path
    import arena_studio.render.agent_painter as agent_painter

    scene, ep = _hall_episode(agents=3, steps=60)
    theme = load_theme("light")
    view = ViewTransform.fit_scene(scene, (0, 0, W, H))
    cache = episode_cache(scene, ep)
    opts = FrameOptions()
    frames = []
    for step in (5, 33, 59):
        fast = _frame(lambda p, s=step: paint_agents(p, cache, s, view, theme, opts, 1.0, True))
        with monkeypatch.context() as m:
            m.setattr(agent_painter, "_paint_small_team", lambda *a, **k: False)
            slow = _frame(lambda p, s=step: paint_agents(p, cache, s, view, theme, opts, 1.0, True))
        assert np.array_equal(fast, slow), f"step {step}"
        frames.append(fast)
    assert not np.array_equal(frames[0], frames[1])  # the agents moved: the check has teeth


@given(
    agents=st.integers(1, 3),
    steps=st.integers(1, 40),
    gaps=st.lists(st.tuples(st.integers(0, 39), st.integers(0, 2)), max_size=6),
    step=st.integers(-5, 45),
    zoom=st.sampled_from([0.2, 1.0, 9.0, 60.0]),
    trail=st.sampled_from([0.0, 0.3, 2.0, 50.0]),
)
@settings(max_examples=40, deadline=None)
def test_frames_of_ragged_episodes_paint_and_prefill_without_error(
    qapp, agents, steps, gaps, step, zoom, trail
):
    # missing samples, one-step episodes, steps out of range, extreme zooms: never an error
    from arena_studio.render.episode_painter import paint_episode_frame

    scene, ep = _hall_episode(agents=agents, steps=max(steps, 1))
    poses = ep.poses.copy()
    for t, a in gaps:
        if t < steps and a < agents:
            poses[t, a, :2] = np.nan
    ragged = Episode(0, 0.05, poses)
    theme = load_theme("light")
    base = ViewTransform.fit_scene(scene, (0, 0, W, H))
    view = ViewTransform(base.scale * zoom, base.offset_x, base.offset_y)
    opts = FrameOptions(trail_seconds=trail)
    for _ in range(3):
        if not prefill_frame(scene, ragged, step, view, theme, opts, 8, (W, H)):
            break
    _frame(lambda p: paint_episode_frame(p, scene, ragged, step, view, theme, opts))
