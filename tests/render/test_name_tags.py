"""Name tags follow the bodies, keep clear of labels, and stacked bodies stay visible.

References: the tape's recorded poses mapped through the frame's ViewTransform (where the body
is drawn, checked in test_frame) and shapely (GEOS) box geometry for distances and overlaps.
"""

from __future__ import annotations

import numpy as np
import shapely
from PySide6.QtGui import QImage, QPainter

from arena_studio.core.tape.episode import Episode
from arena_studio.render.episode_cache import episode_cache
from arena_studio.render.name_tags import paint_name_tags, place_tags, stacks
from arena_studio.render.options import FrameOptions
from arena_studio.render.theme import load_theme
from arena_studio.render.view import ViewTransform

from .demo_episode import demo_episode, greenhouse

SIZE = (1280, 720)


def _tags(scene, episode, step):
    view = ViewTransform.fit_scene(scene, (0, 0, *SIZE))
    img = QImage(*SIZE, QImage.Format.Format_ARGB32_Premultiplied)
    p = QPainter(img)
    try:
        got = paint_name_tags(
            p, episode_cache(scene, episode), step, view, load_theme("light"),
            FrameOptions(), 1.0, [],
        )  # fmt: skip
    finally:
        p.end()
    return view, got


def test_each_tag_sits_beside_its_body_at_every_step(qapp):
    scene = greenhouse()
    episode = demo_episode(scene)
    for step in (0, 80, 160, 240, 319):
        view, tags = _tags(scene, episode, step)
        assert sorted(a for agents, _box in tags for a in agents) == [0, 1, 2]
        for agents, box in tags:
            a = agents[0]
            x, y = episode.poses[step, a, :2]
            body = view.to_px(float(x), float(y))
            r = view.length_px(scene.agents[a].radius)
            tag = shapely.box(*box)
            centre = shapely.Point(body.x(), body.y())
            # beside the body: not over its centre, and within a few pixels of its rim
            assert not tag.contains(centre)
            assert tag.distance(centre) <= r + 5.5 + 3.0 + 12.0, (step, a)


def test_tags_move_with_the_bodies(qapp):
    scene = greenhouse()
    episode = demo_episode(scene)
    view, before = _tags(scene, episode, 100)
    _, after = _tags(scene, episode, 110)
    for (agents, b0), (_same, b1) in zip(before, after, strict=True):
        a = agents[0]
        moved = view.map_array(episode.poses[110, a:a + 1, :2]) - view.map_array(
            episode.poses[100, a:a + 1, :2]
        )  # fmt: skip
        # the same spot is kept while it stays clear: the tag moves exactly as the body
        assert np.allclose([b1[0] - b0[0], b1[1] - b0[1]], moved[0], atol=1e-6)


def test_stacked_bodies_share_one_tag_naming_both(qapp):
    scene = greenhouse()
    base = demo_episode(scene)
    poses = np.array(base.poses)
    poses[:, 1, :2] = poses[:, 0, :2] + 0.05  # rover-2 sits on rover-1
    episode = Episode(0, base.dt, poses, team_goal=base.team_goal)
    _view, tags = _tags(scene, episode, 50)
    assert [agents for agents, _b in tags] == [[0, 1], [2]]


def test_stacks_group_only_bodies_on_one_another():
    pos = np.array([[0.0, 0.0], [3.0, 0.0], [30.0, 0.0], [np.nan, np.nan]])
    assert stacks(pos, np.array([5.0, 5.0, 5.0, 5.0])) == [[0, 1], [2]]


def test_a_tag_avoids_a_blocked_label_box():
    blocked = (100.0 + 8, 100.0 - 30, 100.0 + 80, 100.0 - 2)  # where the first spot would go
    ((box, spot),) = place_tags([(100.0, 100.0)], [8.0], [(50.0, 14.0)], [blocked])
    assert spot != 0
    assert not shapely.box(*box).intersects(shapely.box(*blocked).buffer(-0.01))
