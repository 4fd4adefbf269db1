"""The doorway tool, driven with fake events: the room it makes joins two rooms the way the
bundled demo's hand-made doorway does, and the checker then finds them connected.

References: shapely's unary_union (an outside geometry library) decides whether the rooms
form one open area; the demo greenhouse's ``hall-door`` (a 1.2 m doorway through a 0.2 m
wall, 0.1 m into each room) is the worked example the tool must reproduce.
"""

from __future__ import annotations

from dataclasses import replace

import pytest
from shapely.geometry import Polygon
from shapely.ops import unary_union

from arena_studio.core.checks.checker import check_scene
from arena_studio.core.resources import demo_path
from arena_studio.core.scene.model import Room, Scene, load_scene
from arena_studio.editing.doorway import DEFAULT_WIDTH, DoorwayTool, plan_doorway
from arena_studio.editing.tools import ToolEvent

from .test_tools import FakeHost

TWO_ROOMS = Scene(
    name="two rooms",
    rooms=(
        Room("west", ((0.0, 0.0), (5.0, 0.0), (5.0, 4.0), (0.0, 4.0))),
        Room("east", ((5.2, 0.0), (9.0, 0.0), (9.0, 4.0), (5.2, 4.0))),
    ),
)


def _area_pieces(scene: Scene) -> int:
    union = unary_union([Polygon(r.outline) for r in scene.rooms])
    return len(getattr(union, "geoms", [union]))


def test_a_click_in_the_wall_makes_a_doorway_of_the_default_width():
    host = FakeHost(TWO_ROOMS)
    tool = DoorwayTool(host)
    tool.press(ToolEvent((5.1, 2.0)))
    tool.release(ToolEvent((5.1, 2.0)))
    assert len(host.scene.rooms) == 3 and host.history[-1][0] == "Add doorway"
    door = Polygon(host.scene.rooms[-1].outline)
    minx, miny, maxx, maxy = door.bounds
    assert (minx, maxx) == pytest.approx((4.9, 5.3))  # 0.1 m into each room
    assert maxy - miny == pytest.approx(DEFAULT_WIDTH)
    assert door.exterior.is_ccw
    assert _area_pieces(TWO_ROOMS) == 2 and _area_pieces(host.scene) == 1
    assert host.sel == (("rooms", host.scene.rooms[-1].id),)
    assert "joins west and east" in host.messages[-1]


def test_a_drag_along_the_wall_sets_the_width_and_centre():
    host = FakeHost(TWO_ROOMS)
    tool = DoorwayTool(host)
    tool.press(ToolEvent((5.05, 1.0)))
    tool.move(ToolEvent((5.1, 2.0)))
    assert tool.preview() is not None and tool.preview().closed
    tool.release(ToolEvent((5.1, 2.5)))
    _x0, miny, _x1, maxy = Polygon(host.scene.rooms[-1].outline).bounds
    assert (miny, maxy) == pytest.approx((1.0, 2.5))


def test_the_demo_doorway_is_reproduced_and_the_checker_agrees():
    demo = load_scene(demo_path("greenhouse.scene.json"))
    made = next(r for r in demo.rooms if r.id == "hall-door")
    without = replace(demo, rooms=tuple(r for r in demo.rooms if r.id != "hall-door"))
    codes = {f.code for f in check_scene(without)}
    plan = plan_doorway(without, (16.1, 2.6), width=1.2)
    assert not plan.problem
    assert Polygon(plan.outline).equals(Polygon(made.outline))
    with_door = replace(without, rooms=(*without.rooms, Room("d", plan.outline)))
    assert {f.code for f in check_scene(with_door)} == {f.code for f in check_scene(demo)}
    assert codes != {f.code for f in check_scene(demo)}  # the doorway was what was missing


def test_no_doorway_where_there_is_no_wall_between_two_rooms():
    host = FakeHost(TWO_ROOMS)
    tool = DoorwayTool(host)
    tool.press(ToolEvent((2.0, 2.0)))  # in the middle of one room
    tool.release(ToolEvent((2.0, 2.0)))
    assert len(host.scene.rooms) == 2 and host.messages[-1].startswith("No doorway:")
    touching = Scene(
        rooms=(
            Room("a", ((0.0, 0.0), (5.0, 0.0), (5.0, 4.0), (0.0, 4.0))),
            Room("b", ((5.0, 0.0), (9.0, 0.0), (9.0, 4.0), (5.0, 4.0))),
        )
    )
    assert "already join" in plan_doorway(touching, (5.0, 2.0)).problem
    far = Scene(
        rooms=(
            Room("a", ((0.0, 0.0), (5.0, 0.0), (5.0, 4.0), (0.0, 4.0))),
            Room("b", ((8.0, 0.0), (12.0, 0.0), (12.0, 4.0), (8.0, 4.0))),
        )
    )
    assert plan_doorway(far, (6.5, 2.0)).problem
