"""A target's "n at t s" text keeps off its landmark's label.

Reference: shapely/GEOS box intersection (OGC Simple Features ``intersects``) between the
text's box, where the episode painter puts it, and the label box the scene painter placed.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from PySide6.QtGui import QFontMetricsF

from arena_studio.core.scene.model import load_scene
from arena_studio.core.tape.episode import Episode
from arena_studio.render.drawing import font
from arena_studio.render.episode_cache import episode_cache
from arena_studio.render.episode_painter import _WIDEST_ARRIVAL, _arrival_above, _arrival_offset
from arena_studio.render.scene_painter import label_places
from arena_studio.render.view import ViewTransform
from tests.conftest import SCENES

SIZE = (1280.0, 720.0)


@pytest.mark.parametrize("name", ["greenhouse", "lab-wing", "parking-level"])
def test_arrival_text_never_covers_the_landmark_label(qapp, name):
    scene = load_scene(SCENES / f"{name}.scene.json")
    episode = Episode(0, 0.1, np.zeros((2, len(scene.agents), 3)))
    cache = episode_cache(scene, episode)
    view = ViewTransform.fit_scene(scene, (0, 0, *SIZE))
    above = _arrival_above(cache, view, 1.0, SIZE)
    metrics = QFontMetricsF(font(11, bold=True))
    half_w = metrics.horizontalAdvance(_WIDEST_ARRIVAL) / 2 + 2.0
    half_h = metrics.height() / 2 + 2.0
    places = label_places(scene, view, 1.0, SIZE, False)
    for lm, place, up in zip(scene.landmarks, places, above, strict=True):
        c = view.to_px(*lm.position)
        r = max(view.length_px(lm.reach_radius), 6.0)
        offset = _arrival_offset(r, 1.0, up)
        cy = c.y() - offset if up else c.y() + offset
        text = shapely.box(c.x() - half_w, cy - half_h, c.x() + half_w, cy + half_h)
        x0, y0, x1, y1 = place.box
        tl, br = view.to_px(x0, y1), view.to_px(x1, y0)
        label_box = shapely.box(tl.x(), tl.y(), br.x(), br.y())
        assert not text.intersects(label_box), f"{lm.id}: arrival text over its label"
    assert any(above) or name != "greenhouse"  # the north sensor's label is below it


@pytest.mark.parametrize("x", [0.0, 5.0, 640.0, 1275.0, 1280.0])
def test_arrival_text_moves_inside_the_frame(qapp, x):
    """A target at the frame's edge (a wall landmark) keeps its "n at t s" text whole.

    Reference: shapely ``contains`` of the text's box in the frame's box."""
    from arena_studio.render.episode_painter import _text_shift

    text = "rover-2 3.2 s"
    half = QFontMetricsF(font(11, bold=True)).horizontalAdvance(text) / 2 + 2.0
    shift = _text_shift(x, text, 1.0, SIZE[0])
    box = shapely.box(x + shift - half, 0.0, x + shift + half, 10.0)
    assert shapely.box(0.0, -1.0, SIZE[0], 11.0).contains(box)
    if half + 2.0 <= x <= SIZE[0] - half - 2.0:
        assert shift == 0.0  # centred whenever it fits
