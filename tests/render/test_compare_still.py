"""Stills of two episodes side by side, from the command line and the module.

The PNG is read back with Pillow and the SVG with xml.etree (independent decoders); the
halves are checked against the side-by-side clip's frame at the same steps, which is what
the still promises to match.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

import numpy as np
import pytest
from PIL import Image

from arena_studio.cli import main
from arena_studio.core.tape import open_tape
from arena_studio.render.clip import ClipPainter, ClipSpec, Shot, halves
from arena_studio.render.compare_still import render_compare, save_compare_png
from arena_studio.render.episode_painter import FrameOptions
from arena_studio.render.frame import ui_scale_for

from .demo_episode import write_demo_tape

SVG = "{http://www.w3.org/2000/svg}"


@pytest.fixture(scope="module")
def tape_path(tmp_path_factory):
    return write_demo_tape(tmp_path_factory.mktemp("tapes") / "demo.tape")


def _pixels(image) -> np.ndarray:
    ptr = image.constBits()
    return np.frombuffer(ptr, np.uint8, image.sizeInBytes()).reshape(image.height(), -1).copy()


def test_halves_cover_the_width_once():
    for width in (640, 641, 1280, 1921):
        (x0, w0), (x1, w1) = halves(width)
        assert x0 == 0 and x1 == w0 and w0 + w1 == width and abs(w0 - w1) <= 1


def test_still_is_the_side_by_side_clip_frame(qapp, tape_path):
    tape = open_tape(tape_path)
    episodes = [tape.episode(0), tape.episode(1)]
    size = (800, 450)
    frame = FrameOptions()
    # export_clip fixes the ui scale of the whole frame before it paints the halves
    spec = ClipSpec(size=size, compare=True, frame=FrameOptions(ui_scale=ui_scale_for(size, frame)))
    steps = (episodes[0].steps - 1, 5)
    want = ClipPainter(tape.scene, episodes, spec, size).render(Shot(steps, 0)).copy()
    got = render_compare(tape.scene, episodes, steps, frame, size)
    assert got.size() == want.size()
    assert np.array_equal(_pixels(got), _pixels(want))


def test_png_halves_show_different_episodes(qapp, tape_path, tmp_path):
    tape = open_tape(tape_path)
    episodes = [tape.episode(0), tape.episode(1)]
    out = save_compare_png(tmp_path / "c.png", tape.scene, episodes, (10, 10), size=(640, 360))
    with Image.open(out) as im:
        assert im.size == (640, 360)
        rgb = np.asarray(im.convert("RGB"))
    assert not np.array_equal(rgb[:, :320], rgb[:, 320:])


def test_two_episodes_exactly(qapp, tape_path):
    tape = open_tape(tape_path)
    with pytest.raises(ValueError, match="exactly two"):
        render_compare(tape.scene, [tape.episode(0)], [0], size=(320, 180))


def test_command_compare_still_png_and_svg(qapp, tape_path, tmp_path):
    png, svg = tmp_path / "c.png", tmp_path / "c.svg"
    common = ["render", str(tape_path), "--compare", "0", "1", "--size", "800x450"]
    assert main([*common, "-o", str(png), "--time", "2", "--quiet"]) == 0
    with Image.open(png) as im:
        assert im.size == (800, 450)
    assert main([*common, "-o", str(svg), "--quiet"]) == 0
    root = ET.parse(svg).getroot()
    texts = " ".join("".join(t.itertext()) for t in root.iter(f"{SVG}text"))
    # each half is titled with its episode and keeps its words as text
    assert "episode 0" in texts and "episode 1" in texts
    assert texts.count("Who went where") == 2
