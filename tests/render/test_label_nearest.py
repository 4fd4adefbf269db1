"""Each landmark label sits nearer its own mark than any other (the overview heat map put
"Tool rack" beside the Potting bench mark and back).

Reference: shapely (GEOS) distances from each placed label box to every landmark point.
"""

from __future__ import annotations

import pytest
from shapely.geometry import Point, box

from arena_studio.core.scene.model import load_scene
from arena_studio.render.scene_painter import label_places
from arena_studio.render.view import ViewTransform
from tests.conftest import SCENES

#: the overview map's sizes at 1280x800 and 1920x1080 windows, and a still's
SIZES = [(300, 190), (330, 210), (420, 240), (560, 300), (1280, 720)]


@pytest.mark.parametrize("size", SIZES)
@pytest.mark.parametrize("name", ["greenhouse", "lab-wing", "parking-level"])
def test_every_label_is_nearest_its_own_landmark(qapp, name, size):
    scene = load_scene(SCENES / f"{name}.scene.json")
    w, h = size
    header = 20.0  # the overview map's title line (batch_view.OccupancyView)
    view = ViewTransform.fit_scene(scene, (0, header, w, h - header), 8)
    places = label_places(scene, view, 1.0, (float(w), float(h)), False)
    points = [Point(lm.position) for lm in scene.landmarks]
    for i, place in enumerate(places):
        g = box(*place.box)
        own = g.distance(points[i])
        for j, p in enumerate(points):
            if j != i:
                assert own <= g.distance(p) + 1e-9, (
                    f"{scene.landmarks[i].id}'s label is nearer {scene.landmarks[j].id}"
                )
