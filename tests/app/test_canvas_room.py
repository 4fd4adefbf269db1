"""Where the replay canvas puts its legend: the full one where it costs the scene little, the
compact one where the full one would shrink the scene (a wide but short compare pane).

Reference: the scene's scale is worked out here by the usual fit of a box into what a view
leaves free (the smaller of the two axis ratios, common practice for aspect-locked views).
"""

from __future__ import annotations

import numpy as np
import pytest

from arena_studio.app.replay.canvas_room import FULL_LEGEND_FROM_PX, Room, place_legend
from arena_studio.core.resources import demo_path
from arena_studio.core.scene.model import load_scene
from arena_studio.core.tape.episode import Episode
from arena_studio.render.options import FrameOptions


def _fit(size: tuple[float, float], world: tuple[float, float]):
    w, h = size

    def scale_for(room: Room) -> float:
        return min((w - room.right) / world[0], (h - room.top - room.bottom) / world[1])

    return scale_for


@pytest.mark.parametrize(
    ("size", "world", "kind"),
    [
        ((570.0, 420.0), (30.0, 10.0), "compact"),  # wide scene, pane half a large screen
        ((770.0, 300.0), (10.0, 10.0), "full"),  # short view: the legend's side is free
        ((400.0, 300.0), (10.0, 10.0), "compact"),  # under the full legend's width
    ],
)
def test_the_legend_that_leaves_the_scene_larger(qapp, size, world, kind):
    scene = load_scene(demo_path("greenhouse.scene.json"))
    episode = Episode(0, 0.1, np.zeros((2, len(scene.agents), 3)))
    place = place_legend(scene, episode, FrameOptions(), size, 50.0, _fit(size, world))
    assert place.kind == kind
    if size[0] >= FULL_LEGEND_FROM_PX and kind == "compact":
        full_right = Room(50.0, 260.0)
        assert _fit(size, world)(place.room) > _fit(size, world)(full_right)
