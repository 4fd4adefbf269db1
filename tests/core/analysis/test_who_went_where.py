"""Who went where: each agent's target, arrival or stopping distance, and the empty targets.

Reference: shapely (GEOS) for the geometry: "covers" is a centre within the reach radius
of the landmark (``Point.distance <= reach``, boundary included) and the distance short
of a target is the distance from the centre to that disc (``Point.distance``); arrival
time = first covering step x dt (common practice). The episodes are hand-made
straight-line routes on the greenhouse demo scene.
"""

from __future__ import annotations

import numpy as np
import pytest
from shapely.geometry import Point

from arena_studio.core.analysis.who_went_where import who_went_where
from arena_studio.core.scene.model import load_scene
from arena_studio.core.tape.episode import Episode
from tests.conftest import SCENES

DT = 0.1


@pytest.fixture(scope="module")
def scene():
    return load_scene(SCENES / "greenhouse.scene.json")


def _line(a, b, steps):
    t = np.linspace(0.0, 1.0, steps)[:, None]
    return np.asarray(a) + (np.asarray(b) - np.asarray(a)) * t


def _landmark(scene, lid):
    return next(i for i, lm in enumerate(scene.landmarks) if lm.id == lid)


def test_one_agent_arrives_one_stops_short_and_the_empty_target_is_named(scene):
    tank, bench = _landmark(scene, "water-tank"), _landmark(scene, "potting-bench")
    tank_xy = np.array(scene.landmarks[tank].position)
    bench_xy = np.array(scene.landmarks[bench].position)
    steps = 101
    a0 = _line(tank_xy + np.array((-3.0, 0.0)), tank_xy, 61)
    a0 = np.vstack([a0, np.repeat(a0[-1:], steps - len(a0), axis=0)])
    stop = bench_xy + np.array((-2.5, 0.0))
    a1 = _line(bench_xy + np.array((-6.0, 0.0)), stop, steps)
    a2 = _line(tank_xy + np.array((-4.0, 0.4)), tank_xy + np.array((-3.0, 0.4)), steps)
    poses = np.zeros((steps, len(scene.agents), 3))
    for k, route in enumerate((a0, a1, a2)):
        poses[:, k, :2] = route
    goal = np.zeros(len(scene.landmarks), np.uint8)
    goal[[tank, bench]] = 1
    said = who_went_where(scene, Episode(0, DT, poses, team_goal=goal))
    reach = scene.landmarks[tank].reach_radius
    first = next(t for t in range(steps) if Point(*a0[t]).distance(Point(*tank_xy)) <= reach)
    rows = {r.agent: r for r in said.rows}
    assert rows["rover-1"].target == "Water tank" and rows["rover-1"].there
    assert rows["rover-1"].arrived_s == pytest.approx(first * DT)
    bench_disc = Point(*bench_xy).buffer(scene.landmarks[bench].reach_radius, 256)
    assert rows["rover-2"].target == "Potting bench" and not rows["rover-2"].there
    assert rows["rover-2"].short_m == pytest.approx(Point(*stop).distance(bench_disc), abs=1e-3)
    assert said.empty == ("Potting bench",)
    text = said.text()
    assert f"rover-1 reached Water tank at {first * DT:.1f} s" in text
    assert "rover-2 stopped 2.0 m short of Potting bench" in text
    assert "Potting bench was left empty" in text
    assert "water-tank" not in text  # labels, not ids


def test_an_agent_that_left_its_target_says_where_it_stopped(scene):
    tank, bench = _landmark(scene, "water-tank"), _landmark(scene, "potting-bench")
    tank_xy = np.array(scene.landmarks[tank].position)
    bench_xy = np.array(scene.landmarks[bench].position)
    steps = 60
    route = np.vstack(
        [_line(tank_xy, tank_xy, 10), _line(tank_xy, bench_xy + np.array((-1.5, 0)), 50)]
    )
    poses = np.zeros((steps, len(scene.agents), 3))
    poses[:, :, :2] = route[:, None, :] + np.array([0.0, 0.0])
    goal = np.zeros(len(scene.landmarks), np.uint8)
    goal[[tank, bench]] = 1
    said = who_went_where(scene, Episode(0, DT, poses, team_goal=goal))
    bench_disc = Point(*bench_xy).buffer(scene.landmarks[bench].reach_radius, 256)
    gap = Point(*route[-1]).distance(bench_disc)
    assert said.rows[0].target == "Water tank" and said.rows[0].arrived_s == 0.0
    assert said.rows[0].stopped_near == "Potting bench"
    assert f"left, stopped {gap:.1f} m short of Potting bench" in said.text()
    assert said.empty == ("Water tank", "Potting bench")
