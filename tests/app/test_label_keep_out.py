"""Landmark labels keep off the replay canvas's legend.

Reference: shapely/GEOS box intersection (OGC Simple Features ``intersects``) between each
placed label box, in pixels, and the legend's rectangle.
"""

from __future__ import annotations

import math

import numpy as np
import shapely

from arena_studio.app.replay.prepared import prepare_episode
from arena_studio.app.replay.replay_canvas import ReplayCanvas
from arena_studio.core.scene.model import load_scene
from arena_studio.core.tape.episode import Episode
from arena_studio.render.scene_painter import label_places
from arena_studio.render.theme import load_theme
from arena_studio.render.view import ViewTransform
from tests.conftest import SCENES


def test_labels_are_placed_clear_of_the_legend(qtbot):
    scene = load_scene(SCENES / "parking-level.scene.json")  # a wall landmark near the legend
    poses = np.zeros((3, len(scene.agents), 3))
    for a, agent in enumerate(scene.agents):
        poses[:, a, :2] = agent.start.pose[:2] if agent.start.pose else (1.0, 1.0)
    episode = Episode(0, 0.1, poses)
    canvas = ReplayCanvas(load_theme("dark"))
    qtbot.addWidget(canvas)
    canvas.resize(1360, 573)  # the replay canvas of a 1920 x 1080 window
    canvas.show()
    canvas.set_episode(scene, prepare_episode(scene, episode))
    canvas.fit_scene()
    legend = canvas.legend_rect()
    assert legend is not None
    keep = canvas.layer.options.label_keep_out
    assert any(k[0] < legend.left() and k[3] > legend.bottom() for k in keep)
    t = canvas.viewportTransform()
    view = ViewTransform(math.hypot(t.m11(), t.m12()), t.dx(), t.dy())
    size = (float(canvas.viewport().width()), float(canvas.viewport().height()))
    legend_box = shapely.box(legend.left(), legend.top(), legend.right(), legend.bottom())
    for place in label_places(scene, view, 1.0, size, True, keep):
        x0, y0, x1, y1 = place.box
        tl, br = view.to_px(x0, y1), view.to_px(x1, y0)
        label = shapely.box(tl.x(), tl.y(), br.x(), br.y())
        assert not label.intersects(legend_box)
    canvas.show_legend = False
    canvas.set_options(canvas.options)
    legend_box = shapely.box(legend.left(), legend.top(), legend.right(), legend.bottom())
    for x0, y0, x1, y1 in canvas.layer.options.label_keep_out:  # no legend: its place is free
        assert not shapely.box(x0, y0, x1, y1).intersects(legend_box)
