"""The per-episode cache: contact onsets and first coverage, against shapely/GEOS distances.

Reference: shapely (GEOS) point-to-boundary and point-to-point distance (OGC Simple
Features); a disc of radius r touches a wall when its centre is closer than r to the wall.
"""

from __future__ import annotations

import numpy as np
from shapely.geometry import Point

from arena_studio.core.geometry.regions import open_area
from arena_studio.core.tape.episode import Episode
from arena_studio.render.episode_cache import build_cache

from .demo_episode import greenhouse


def _episode(xy: np.ndarray, dt: float = 0.1) -> Episode:
    poses = np.concatenate([xy, np.zeros((*xy.shape[:2], 1))], axis=-1)
    return Episode(0, dt, poses)


def test_wall_contact_onset_matches_geos_distance():
    scene = greenhouse()  # rover-1 has radius 0.25; the hall's west wall is x = 0
    steps = 40
    x = np.linspace(1.0, -0.1, steps)  # drives west into the wall
    xy = np.zeros((steps, 3, 2))
    xy[:, 0] = np.stack([x, np.full(steps, 6.5)], axis=1)
    xy[:, 1] = (5.0, 1.0)
    xy[:, 2] = (8.0, 9.0)
    cache = build_cache(scene, _episode(xy))
    walls = open_area(scene).boundary
    radius = scene.agents[0].radius
    touching = [
        Point(p).distance(walls) < radius or not open_area(scene).contains(Point(p))
        for p in xy[:, 0]
    ]
    expected = touching.index(True)
    wall_events = cache.collisions[cache.collisions[:, 3] == 1]
    assert wall_events[:, 0].tolist() == [expected]  # one onset, at the right step


def test_agent_contact_onsets_and_first_coverage():
    scene = greenhouse()
    steps = 30
    xy = np.zeros((steps, 3, 2))
    xy[:, 0] = np.stack([np.linspace(6.0, 7.7, steps), np.full(steps, 1.2)], axis=1)
    xy[:, 1] = (8.0, 1.2)  # parked on the water tank (reach 0.5)
    xy[:, 2] = (8.0, 9.0)
    cache = build_cache(scene, _episode(xy))
    gap = [Point(a).distance(Point(b)) for a, b in zip(xy[:, 0], xy[:, 1], strict=True)]
    reach = scene.agents[0].radius + scene.agents[1].radius
    first_touch = next(t for t, d in enumerate(gap) if d < reach)
    agent_events = cache.collisions[cache.collisions[:, 3] == 0]
    assert agent_events[:, 0].tolist() == [first_touch]
    tank = scene.landmark_index("water-tank")
    first_in = next(t for t, p in enumerate(xy[:, 0]) if Point(p).distance(Point(8, 1.2)) <= 0.5)
    assert cache.covered_first[0, tank] == first_in
    assert cache.covered_first[1, tank] == 0
    assert cache.covered_first[2, tank] == -1


def test_contact_marks_agree_with_the_replay_events():
    # Not an outside source: the frame's contact marks and core.events' scrub-bar events must
    # name the same steps (one definition of a contact in the whole tool).
    from arena_studio.core.analysis.events import episode_events

    from .demo_episode import demo_episode

    scene = greenhouse()
    ep = demo_episode(scene)
    events = sorted(
        (e.step, 0 if e.kind == "collision" else 1)
        for e in episode_events(scene, ep)
        if e.kind in ("collision", "wall-collision")
    )
    marks = sorted((int(t), int(k)) for t, _x, _y, k in build_cache(scene, ep).collisions)
    assert marks == events and marks
