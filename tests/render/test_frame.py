"""Offscreen frames and stills: determinism, pixels where the tape says, SVG structure.

Sources: Pillow reads the PNGs back (an independent PNG decoder); the SVG check follows the
W3C SVG 2 document structure (root element ``svg`` in the ``http://www.w3.org/2000/svg``
namespace, with width, height and viewBox), parsed with xml.etree; text stays ``<text>``.
"""

from __future__ import annotations

import io
import math
import os
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
from PIL import Image

from arena_studio.core.tape.episode import Episode
from arena_studio.render.episode_painter import FrameOptions
from arena_studio.render.frame import (
    FrameRenderer,
    frame_layout,
    png_bytes,
    render_frame,
    save_png_still,
    svg_bytes,
)
from arena_studio.render.theme import load_theme

from .demo_episode import demo_episode, greenhouse

APPROVED = Path(__file__).parent / "approved"
SVG_NS = "http://www.w3.org/2000/svg"


@pytest.fixture(scope="module")
def scene():
    return greenhouse()


@pytest.fixture(scope="module")
def episode(scene):
    return demo_episode(scene)


def _pil(image) -> Image.Image:
    return Image.open(io.BytesIO(png_bytes(image))).convert("RGB")


def test_same_inputs_give_byte_identical_pngs(qapp, scene, episode):
    opts = FrameOptions(theme="dark", title="t", caption="c", par_paths=True)
    a = png_bytes(render_frame(scene, episode, 123, opts, (800, 450)))
    b = png_bytes(FrameRenderer(scene, (800, 450), opts).render(episode, 123))
    assert a == b
    assert a != png_bytes(render_frame(scene, episode, 124, opts, (800, 450)))


@pytest.mark.parametrize("theme", ["light", "dark"])
def test_agent_bodies_are_drawn_where_the_poses_say(qapp, scene, episode, theme):
    step = 200
    size = (1280, 720)
    opts = FrameOptions(theme=theme, pursued=False, trails=False)
    img = _pil(render_frame(scene, episode, step, opts, size))
    view = frame_layout(scene, size, opts).view
    pal = load_theme(theme)
    for a in range(episode.agent_count):
        x, y, h = episode.poses[step, a]
        r = scene.agents[a].radius
        # a point half a radius behind the centre (away from the heading tick)
        bx, by = x - 0.5 * r * math.cos(h), y - 0.5 * r * math.sin(h)
        p = view.to_px(bx, by)
        got = np.array(img.getpixel((round(p.x()), round(p.y()))), float)
        want = np.array([int(pal.agent_hex(a)[i : i + 2], 16) for i in (1, 3, 5)], float)
        if np.abs(got - want).max() > 12:  # an idle agent's body is a 35 % tint
            ground = np.array([int(pal.hex("room_fill")[i : i + 2], 16) for i in (1, 3, 5)])
            tint = 0.35 * want + 0.65 * ground
            assert np.abs(got - tint).max() <= 12, (a, got, want)


def test_svg_still_is_valid_svg_with_text_labels(qapp, scene, episode):
    data = svg_bytes(scene, episode, 100, FrameOptions(title="Greenhouse"), (960, 540))
    root = ET.fromstring(data)
    assert root.tag == f"{{{SVG_NS}}}svg"  # SVG 2 §5.1: root svg element in the SVG namespace
    assert root.get("width") and root.get("height")
    view_box = [float(v) for v in root.get("viewBox").split()]
    assert view_box == [0.0, 0.0, 960.0, 540.0]
    texts = " ".join("".join(t.itertext()) for t in root.iter(f"{{{SVG_NS}}}text"))
    for lm in scene.landmarks:
        assert lm.label in texts, lm.label
    assert "Greenhouse" in texts


def test_png_still_scale_and_dpi_read_back_with_pillow(qapp, scene, episode, tmp_path):
    out = save_png_still(
        tmp_path / "still.png", scene, episode, 50, FrameOptions(), (640, 360), scale=2.0, dpi=300
    )
    with Image.open(out) as im:
        assert im.size == (1280, 720)
        dpi = im.info["dpi"]
        assert dpi[0] == pytest.approx(300, abs=0.5)  # PNG pHYs stores dots per metre
    assert [p.name for p in tmp_path.iterdir()] == ["still.png"]  # no temp left behind


def test_many_agents_carry_numbers_and_the_legend_says_how_many_more(qapp, scene):
    rng = np.random.default_rng(1)
    a, t = 64, 40
    start = rng.uniform([1, 0.5], [15, 9.5], (a, 2))
    xy = start + np.cumsum(rng.normal(0, 0.02, (t, a, 2)), axis=0)
    poses = np.concatenate([xy, np.zeros((t, a, 1))], axis=-1)
    ep = Episode(0, 0.1, poses)
    opts = FrameOptions(numbers="auto")
    img = render_frame(scene, ep, t - 1, opts, (1280, 720))
    assert img.width() == 1280
    same_without = render_frame(scene, ep, t - 1, FrameOptions(numbers="never"), (1280, 720))
    assert png_bytes(img) != png_bytes(same_without)  # the numbers are drawn


def test_frame_options_reject_too_small_frames(qapp, scene):
    with pytest.raises(ValueError, match="too small"):
        frame_layout(scene, (10, 10), FrameOptions())


def test_approved_frame(qapp, scene, episode):
    """Image approval: a fixed frame against tests/render/approved/ (ARENA_APPROVE=1 renews).

    Tolerance: mean absolute difference under 1 level and under 0.5 % of pixels off by more
    than 40 levels (font rasterisation may differ slightly between machines).
    """
    opts = FrameOptions(
        theme="light",
        title="Greenhouse: seed tray + water tank",
        caption="rover-2 works on the north sensor; the seed tray is late",
    )
    img = _pil(render_frame(scene, episode, 200, opts, (960, 540)))
    ref_path = APPROVED / "greenhouse_step200_light.png"
    if os.environ.get("ARENA_APPROVE") == "1":
        APPROVED.mkdir(exist_ok=True)
        img.save(ref_path)
    assert ref_path.exists(), "no approved frame yet: run with ARENA_APPROVE=1 and look at it"
    ref = np.asarray(Image.open(ref_path).convert("RGB"), dtype=np.int16)
    got = np.asarray(img, dtype=np.int16)
    assert got.shape == ref.shape
    diff = np.abs(got - ref).max(axis=-1)
    assert diff.mean() < 1.0, f"mean difference {diff.mean():.2f}"
    assert (diff > 40).mean() < 0.005, f"{(diff > 40).mean():.2%} of pixels differ"


def test_tape_role_labels_fill_the_legend_and_change_the_marks(qapp, scene, episode):
    # Not an outside source: the tape's own labels must reach the legend (Episode.role_at is
    # the reference for which label holds when).
    roles = (((0, "scout"), (100, "carrier")), ((0, "carrier"),), ())
    taped = Episode(0, episode.dt, episode.poses, team_goal=episode.team_goal, roles=roles)
    from arena_studio.render.episode_cache import episode_cache
    from arena_studio.render.role_style import agent_styles, role_legend

    cache = episode_cache(scene, taped)
    opts = FrameOptions(roles="auto")
    assert [name for _s, name in role_legend(cache, opts)] == ["scout", "carrier"]
    before, after = agent_styles(cache, 50, opts), agent_styles(cache, 150, opts)
    assert before[0] != after[0] and before[1] == after[1]  # agent 1 changed role at step 100
    a = png_bytes(render_frame(scene, taped, 150, opts, (640, 360)))
    b = png_bytes(render_frame(scene, taped, 150, FrameOptions(roles="derived"), (640, 360)))
    assert a != b
