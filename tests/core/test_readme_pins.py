"""What README.md says about exports, observations and hold time, pinned to the code.

Each test names its outside reference: shapely/GEOS for geometry (OGC Simple Features),
plain trigonometry for bearings, the README's own counting rule recomputed here without the
package for hold time, argparse for the command line.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from shapely.geometry import LineString, MultiLineString, Point, box
from shapely.ops import unary_union

from arena_studio.core.export.npz import scene_arrays
from arena_studio.core.planning.partime import plan_goal
from arena_studio.core.scene.model import Landmark, Scene
from arena_studio.core.sim.observe import goal_reached, observe, wrap_angle

ROOT = Path(__file__).resolve().parents[2]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _two_rooms(start: dict) -> Scene:
    return Scene.from_dict(
        {
            "format": "arena-studio.scene",
            "version": 1,
            "name": "pins",
            "units": "m",
            "rooms": [
                {"id": "west", "outline": [[0, 0], [5, 0], [5, 5], [0, 5]]},
                {"id": "door", "outline": [[4.8, 3.5], [6.2, 3.5], [6.2, 4.5], [4.8, 4.5]]},
                {"id": "east", "outline": [[6, 0], [11, 0], [11, 5], [6, 5]]},
            ],
            "obstacles": [
                {"id": "barrel", "circle": {"center": [1.0, 4.0], "radius": 0.5}},
                {"id": "crate", "outline": [[8, 1], [9, 1], [9, 2], [8, 2]]},
            ],
            "landmarks": [
                {"id": "A", "label": "A", "position": [1, 1], "reach_radius": 0.5, "mount": "free"}
            ],
            "agents": [
                {"id": "r0", "radius": 0.25, "max_speed": 0.5, "max_turn_rate": 2, "start": start}
            ],
            "goals": {"rule": "all_at_end", "families": [1]},
        }
    )


def test_npz_wall_segments_are_the_open_areas_boundary() -> None:
    scene = _two_rooms({"pose": [4, 4, 0]})
    segs = scene_arrays(scene)["wall_segments"]
    walls = MultiLineString([s.tolist() for s in segs])
    # reference: GEOS boundary of rooms joined minus obstacles (circle within 1 mm, below)
    rooms = unary_union([box(0, 0, 5, 5), box(4.8, 3.5, 6.2, 4.5), box(6, 0, 11, 5)])
    crate = box(8, 1, 9, 2)
    barrel = Point(1.0, 4.0).buffer(0.5, quad_segs=64)
    expected = rooms.difference(crate).difference(barrel).boundary
    assert walls.hausdorff_distance(expected) < 1e-3  # the same outline, within 1 mm
    # the doorway is open: no wall across it on either side
    for x in (5.0, 6.0):
        assert walls.intersection(LineString([(x, 3.55), (x, 4.45)])).length == 0.0
    # the circle: a polygon inscribed within 1 mm, 52 sides for a 0.5 m radius
    ring = [s for s in segs if Point(1.0, 4.0).distance(Point(s[0])) < 0.6]
    assert len(ring) == 52
    for s in ring:
        assert abs(Point(1.0, 4.0).distance(Point(s[0])) - 0.5) < 1e-9  # vertices on the circle
        mid = (s[0] + s[1]) / 2
        assert 0.5 - Point(1.0, 4.0).distance(Point(mid)) < 1e-3  # sagitta under 1 mm
    assert "52 sides for a 0.5 m radius" in README


def test_npz_par_time_is_the_best_case_of_a_start_region() -> None:
    # a square region in the west room, landmark A at (1, 1): its corner (2, 2) is nearest
    region = [[2, 2], [3.5, 2], [3.5, 3.5], [2, 3.5]]
    scene = _two_rooms({"region": region, "heading": None})
    par = float(scene_arrays(scene)["goal_par_times"][0])
    # reference: straight line in an open part of a room (GEOS distance), into the reach
    # disc, at top speed 0.5 m/s; the barrel lies off that line
    best = (Point(2, 2).distance(Point(1, 1)) - 0.5) / 0.5
    assert par == pytest.approx(best, abs=2e-3)
    plan = plan_goal(scene, np.array([1]))
    assert plan.par_time_worst is not None and plan.par_time_worst > par + 1.0
    assert "best case" in README


@pytest.mark.parametrize("heading", [0.0, math.pi / 2, -math.pi / 2, math.pi, 2.5])
def test_a_landmark_dead_behind_has_bearing_plus_pi(heading: float) -> None:
    # plain trigonometry: the point one metre behind the agent along its heading
    x, y = 3.0, 4.0
    behind = (x - math.cos(heading), y - math.sin(heading))
    scene = _two_rooms({"pose": [4, 4, 0]})
    scene = scene.with_changes(
        landmarks=(Landmark("B", "B", behind, 0.5),),
    )
    obs = observe(scene, np.array([[x, y, heading]]))
    b = float(obs["landmark_bearing"][0, 0])
    assert b == pytest.approx(math.pi, abs=1e-12) and b > 0  # +pi, never -pi
    assert float(wrap_angle(-math.pi)) == math.pi  # the half-open interval (-pi, pi]
    # left is positive (counter-clockwise, common practice): a point to the agent's left
    left = (x - math.sin(heading), y + math.cos(heading))
    scene = scene.with_changes(landmarks=(Landmark("L", "L", left, 0.5),))
    obs = observe(scene, np.array([[x, y, heading]]))
    assert float(obs["landmark_bearing"][0, 0]) == pytest.approx(math.pi / 2, abs=1e-12)
    assert "dead behind gets +pi" in README


@settings(max_examples=200, deadline=None)
@given(
    dt=st.sampled_from([0.05, 0.1, 0.2, 0.25, 1 / 3, 0.5]),
    hold=st.sampled_from([0.0, 0.1, 0.3, 0.5, 1.0, 0.7, 2.0]),
    before=st.integers(0, 5),
    run=st.integers(1, 25),
)
def test_hold_time_counted_as_the_readme_says(
    dt: float, hold: float, before: int, run: int
) -> None:
    """A target covered on steps s..t has held (t - s) * dt seconds; success is the first
    t where that reaches hold_time (1e-9 s tolerance). Recomputed here from that sentence."""
    scene = _two_rooms({"pose": [4, 4, 0]})
    far, near = (4.0, 4.0), (1.0, 1.0)
    xy = np.array([far] * before + [near] * run + [far] * 3, dtype=float)[:, None, :]
    got = goal_reached(scene, np.array([1]), xy, rule="all_at_once", dt=dt, hold_time=hold)
    s = before
    expected = [s <= t < s + run and (t - s) * dt >= hold - 1e-9 for t in range(len(xy))]
    assert list(got) == expected
    if any(expected):  # e.g. dt 0.1, hold 0.5: the 6th covered step, 0.5 s after the 1st
        assert expected.index(True) - s == math.ceil(hold / dt - 1e-9)


def test_readme_rollout_line_lists_every_option() -> None:
    import argparse

    from arena_studio.commands import rollout

    parser = argparse.ArgumentParser()
    rollout.add_arguments(parser)
    options = [s for a in parser._actions for s in a.option_strings if s.startswith("--")]
    block = README[README.index("arena-studio rollout") : README.index("arena-studio stats")]
    missing = [o for o in options if o not in block and o not in ("--help", "--quiet", "--output")]
    assert not missing, f"README's rollout line misses {missing}"
    assert "--output" in options and "-o OUT.tape" in block
