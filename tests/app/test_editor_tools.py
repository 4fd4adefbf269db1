"""Tools as plain state machines: driven with fake events and a fake host, no window at all."""

from __future__ import annotations

import math

from shapely.geometry import Point, Polygon

from arena_studio.core.scene.model import Room, Scene
from arena_studio.editing.snapping import SnapSettings, snap_point
from arena_studio.editing.tools import (
    CircleTool,
    LandmarkTool,
    PolygonTool,
    RectTool,
    SelectTool,
    StartPoseTool,
    ToolEvent,
)


class FakeHost:
    def __init__(self, scene: Scene, grid: float = 0.5, snapping: bool = True) -> None:
        self.scene = scene
        self.history: list[tuple[str, object]] = []
        self.sel: tuple = ()
        self.messages: list[str] = []
        self.grid = grid
        self.snapping = snapping
        self.vertex = None

    def apply(self, scene, text, merge_key=None):
        self.history.append((text, merge_key))
        self.scene = scene

    def selection(self):
        return self.sel

    def set_selection(self, keys):
        self.sel = tuple(keys)

    def snap(self, xy, bypass, exclude=None):
        settings = SnapSettings(enabled=self.snapping and not bypass)
        return snap_point(self.scene, xy, self.grid, 0.2, settings, exclude)

    def grid_step(self):
        return self.grid

    def message(self, text):
        self.messages.append(text)

    def set_active_vertex(self, vertex):
        self.vertex = vertex


HALL = Scene(rooms=(Room("hall", ((0, 0), (10, 0), (10, 6), (0, 6))),))


def test_polygon_tool_snaps_to_grid_and_refuses_self_crossing_outlines():
    host = FakeHost(Scene())
    tool = PolygonTool(host, "tool.room_polygon", "Room", "room")
    for xy in [(0.1, 0.1), (4.2, -0.1), (3.9, 3.1)]:
        tool.press(ToolEvent(xy))
    assert tool.key("enter")
    (room,) = host.scene.rooms
    assert room.outline == ((0.0, 0.0), (4.0, 0.0), (4.0, 3.0))
    assert math.isclose(Polygon(room.outline).area, 6.0)  # reference: shapely area
    for xy in [(0, 0), (4, 4), (4, 0), (0, 4)]:  # a bow tie
        tool.press(ToolEvent(xy))
    tool.finish()
    assert len(host.scene.rooms) == 1 and "crosses itself" in host.messages[-1]


def test_rectangle_and_circle_tools_need_a_real_drag():
    host = FakeHost(Scene())
    rect = RectTool(host, "tool.obstacle_rect", "Obstacle", "obstacle")
    rect.press(ToolEvent((1, 1)))
    rect.release(ToolEvent((1, 1)))
    assert host.scene.obstacles == () and host.messages
    circle = CircleTool(host)
    circle.press(ToolEvent((2, 2)))
    circle.move(ToolEvent((3, 2)))
    circle.release(ToolEvent((3.5, 2)))
    (obs,) = host.scene.obstacles
    assert obs.circle.center == (2.0, 2.0) and obs.circle.radius == 1.5


def test_landmark_tool_mounts_on_the_nearest_wall_line():
    host = FakeHost(HALL)
    tool = LandmarkTool(host)
    tool.press(ToolEvent((9.9, 3.3), tol=0.2))
    tool.press(ToolEvent((5.0, 3.0), tol=0.2))
    wall, free = host.scene.landmarks
    assert wall.mount == "wall" and free.mount == "free"
    # Reference: shapely distance from the point to the room's boundary line.
    assert Point(wall.position).distance(Polygon(HALL.rooms[0].outline).exterior) < 1e-12


def test_start_pose_heading_follows_the_drag_in_15_degree_steps():
    host = FakeHost(HALL)
    tool = StartPoseTool(host)
    tool.press(ToolEvent((2, 2)))
    tool.release(ToolEvent((3, 3.1)))
    pose = host.scene.agents[0].start.pose
    assert pose[:2] == (2.0, 2.0)
    assert math.isclose(pose[2], math.atan2(1, 1))  # 45 degrees, counter-clockwise from +x
    host.snapping = False
    tool.press(ToolEvent((2, 2)))
    tool.release(ToolEvent((3, 3.1)))
    assert math.isclose(host.scene.agents[1].start.pose[2], math.atan2(1.1, 1))


def test_select_tool_merges_a_drag_into_one_key_and_esc_restores():
    host = FakeHost(HALL)
    tool = SelectTool(host)
    tool.press(ToolEvent((5, 3)))
    assert host.sel == (("rooms", "hall"),)
    tool.move(ToolEvent((6, 3)))
    tool.move(ToolEvent((7.1, 3.9)))
    assert host.scene.rooms[0].outline[0] == (2.0, 1.0)  # moved by whole grid steps
    assert len({key for _, key in host.history}) == 1  # every step carries one merge key
    assert tool.key("escape")
    assert host.scene == HALL
