"""Editing tools as small state machines over world coordinates (no Qt).

The canvas turns mouse and key events into :class:`ToolEvent` values (metres, y up) and calls
``press`` / ``move`` / ``release`` / ``double_click`` / ``key``. Tools read and change the
document only through a :class:`ToolHost`, so tests drive them with fake events.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field
from typing import Protocol

import numpy as np
from shapely.geometry import Polygon

from arena_studio.core.geometry.regions import nearest_wall_point, segments_of, walkable_area
from arena_studio.core.scene.model import Scene, Start
from arena_studio.editing import edits as edits
from arena_studio.editing.edits import ObjKey, Point
from arena_studio.editing.hit import hit_edge, hit_object, hit_vertex, objects_in_rect
from arena_studio.editing.snapping import Snap, grid_point_on_segment, nearest_on_segments

_drag_serial = itertools.count(1)
HEADING_STEP = math.radians(15.0)


@dataclass(frozen=True)
class ToolEvent:
    pos: Point  # world position, not snapped
    shift: bool = False  # add to / toggle selection
    bypass: bool = False  # ignore snapping
    tol: float = 0.1  # pick tolerance in metres (a few pixels)


@dataclass
class Preview:
    """What the tool wants drawn on top of the scene while it works."""

    polyline: list[Point] = field(default_factory=list)
    closed: bool = False
    rect: tuple[Point, Point] | None = None
    circle: tuple[Point, float] | None = None
    arrow: tuple[Point, Point] | None = None
    marker: Point | None = None


class ToolHost(Protocol):
    @property
    def scene(self) -> Scene: ...
    def apply(self, scene: Scene, text: str, merge_key: object = None) -> None: ...
    def selection(self) -> tuple[ObjKey, ...]: ...
    def set_selection(self, keys: list[ObjKey] | tuple[ObjKey, ...]) -> None: ...
    def snap(self, xy: Point, bypass: bool, exclude: ObjKey | None = None) -> Snap: ...
    def grid_step(self) -> float: ...
    def message(self, text: str) -> None: ...
    def set_active_vertex(self, vertex: tuple[ObjKey, int] | None) -> None: ...


class Tool:
    """Base: ignores everything. ``name`` is the action id that selects it."""

    name = "tool"
    title = "Tool"
    hint = ""

    def __init__(self, host: ToolHost) -> None:
        self.host = host

    def press(self, ev: ToolEvent) -> None: ...
    def move(self, ev: ToolEvent) -> None: ...
    def release(self, ev: ToolEvent) -> None: ...
    def double_click(self, ev: ToolEvent) -> None: ...

    def key(self, name: str) -> bool:
        """``"enter"``, ``"escape"``, ``"backspace"``; True when the tool used the key."""
        return False

    def cancel(self) -> None: ...

    def preview(self) -> Preview | None:
        return None

    def snapped(self, ev: ToolEvent, exclude: ObjKey | None = None) -> Point:
        return self.host.snap(ev.pos, ev.bypass, exclude).point


class SelectTool(Tool):
    """Click or shift-click to select, drag to move, drag handles, rubber-band on empty space.

    Double-click on an edge of the selected outline inserts a vertex there.
    """

    name = "tool.select"
    title = "Select and move"
    hint = "Click to select, Shift adds; drag moves; double-click an edge adds a vertex"

    def __init__(self, host: ToolHost) -> None:
        super().__init__(host)
        self._mode = "idle"
        self._start: Point = (0.0, 0.0)
        self._now: Point = (0.0, 0.0)
        self._base: Scene | None = None
        self._vertex: tuple[ObjKey, int] | None = None
        self._moving: tuple[ObjKey, ...] = ()
        self._merge: object = None

    def _single_outline(self) -> ObjKey | None:
        sel = self.host.selection()
        if len(sel) == 1 and edits.outline_of(edits.find(self.host.scene, sel[0])):
            return sel[0]
        return None

    def press(self, ev: ToolEvent) -> None:
        scene = self.host.scene
        self._start = self._now = ev.pos
        self._base = scene
        self._merge = ("drag", next(_drag_serial))
        key = self._single_outline()
        if key is not None:
            idx = hit_vertex(scene, key, ev.pos, ev.tol)
            if idx is not None:
                self._mode = "vertex"
                self._vertex = (key, idx)
                self.host.set_active_vertex(self._vertex)
                return
        hit = hit_object(scene, ev.pos, ev.tol)
        self.host.set_active_vertex(None)
        if hit is None:
            self._mode = "band"
            if not ev.shift:
                self.host.set_selection(())
            return
        sel = list(self.host.selection())
        if ev.shift:
            sel = [k for k in sel if k != hit] if hit in sel else [*sel, hit]
            self.host.set_selection(sel)
            self._mode = "idle"
            return
        if hit not in sel:
            sel = [hit]
            self.host.set_selection(sel)
        self._mode = "move"
        self._moving = tuple(sel)

    def move(self, ev: ToolEvent) -> None:
        self._now = ev.pos
        if self._base is None:
            return
        if self._mode == "vertex" and self._vertex is not None:
            key, idx = self._vertex
            xy = self.snapped(ev, exclude=key)
            new = edits.set_vertex(self._base, key, idx, xy)
            self.host.apply(new, "Move vertex", self._merge)
        elif self._mode == "move":
            dx, dy = ev.pos[0] - self._start[0], ev.pos[1] - self._start[1]
            step = self.host.grid_step()
            if not ev.bypass and step > 0 and self.host.snap(ev.pos, False).kind != "none":
                dx, dy = round(dx / step) * step, round(dy / step) * step
            if dx == 0 and dy == 0:
                new = self._base
            else:
                new = edits.move_objects(self._base, self._moving, dx, dy)
            self.host.apply(new, "Move", self._merge)

    def release(self, ev: ToolEvent) -> None:
        if self._mode == "band":
            keys = objects_in_rect(self.host.scene, self._start, ev.pos)
            if math.dist(self._start, ev.pos) > ev.tol:
                if ev.shift:
                    keys = list(dict.fromkeys([*self.host.selection(), *keys]))
                self.host.set_selection(keys)
        self._mode = "idle"
        self._base = None

    def double_click(self, ev: ToolEvent) -> None:
        key = self._single_outline()
        if key is None:
            return
        hit = hit_edge(self.host.scene, key, ev.pos, ev.tol)
        if hit is None or hit_vertex(self.host.scene, key, ev.pos, ev.tol) is not None:
            return
        index, point = hit
        self.host.apply(edits.insert_vertex(self.host.scene, key, index, point), "Add vertex")
        self.host.set_active_vertex((key, index))

    def key(self, name: str) -> bool:
        if name == "escape" and self._mode != "idle":
            if self._base is not None and self._mode in ("move", "vertex"):
                self.host.apply(self._base, "Move", self._merge)
            self._mode = "idle"
            return True
        return False

    def preview(self) -> Preview | None:
        if self._mode == "band":
            return Preview(rect=(self._start, self._now))
        return None


class PolygonTool(Tool):
    """Click vertices; double-click, Enter or a click on the first vertex closes; Esc cancels."""

    def __init__(self, host: ToolHost, name: str, title: str, target: str) -> None:
        super().__init__(host)
        self.name, self.title, self.target = name, title, target
        self.hint = "Click to add vertices; double-click or Enter closes; Esc cancels"
        self.points: list[Point] = []
        self._hover: Point | None = None

    def press(self, ev: ToolEvent) -> None:
        xy = self.snapped(ev)
        if len(self.points) >= 3 and math.dist(xy, self.points[0]) <= ev.tol:
            self.finish()
            return
        if not self.points or math.dist(xy, self.points[-1]) > 1e-9:
            self.points.append(xy)

    def move(self, ev: ToolEvent) -> None:
        self._hover = self.snapped(ev)

    def double_click(self, ev: ToolEvent) -> None:
        self.finish()

    def key(self, name: str) -> bool:
        if name == "enter" and self.points:
            self.finish()
            return True
        if name == "escape" and self.points:
            self.cancel()
            return True
        if name == "backspace" and self.points:
            self.points.pop()
            return True
        return False

    def cancel(self) -> None:
        self.points = []
        self._hover = None

    def finish(self) -> None:
        pts, self.points = self.points, []
        if len(pts) < 3:
            self.host.message("An outline needs at least three vertices.")
            return
        poly = Polygon(pts)
        if not poly.is_valid or poly.area <= 1e-9:
            self.host.message("That outline crosses itself or has no area; it was not added.")
            return
        create(self.host, self.target, pts)

    def preview(self) -> Preview | None:
        if not self.points:
            return None
        pts = [*self.points, *([self._hover] if self._hover else [])]
        return Preview(polyline=pts, closed=len(pts) >= 3, marker=self._hover)


class RectTool(Tool):
    """Press at one corner, release at the opposite one."""

    def __init__(self, host: ToolHost, name: str, title: str, target: str) -> None:
        super().__init__(host)
        self.name, self.title, self.target = name, title, target
        self.hint = "Drag from one corner to the opposite corner"
        self._a: Point | None = None
        self._b: Point | None = None

    def press(self, ev: ToolEvent) -> None:
        self._a = self._b = self.snapped(ev)

    def move(self, ev: ToolEvent) -> None:
        if self._a is not None:
            self._b = self.snapped(ev)

    def release(self, ev: ToolEvent) -> None:
        if self._a is None:
            return
        a, b = self._a, self.snapped(ev)
        self._a = self._b = None
        if abs(a[0] - b[0]) < 1e-6 or abs(a[1] - b[1]) < 1e-6:
            self.host.message("Drag to give the rectangle a width and a height.")
            return
        create(self.host, self.target, list(edits.rectangle(a, b)))

    def cancel(self) -> None:
        self._a = self._b = None

    def key(self, name: str) -> bool:
        if name == "escape" and self._a is not None:
            self.cancel()
            return True
        return False

    def preview(self) -> Preview | None:
        if self._a is None or self._b is None:
            return None
        return Preview(rect=(self._a, self._b))


class CircleTool(Tool):
    name = "tool.obstacle_circle"
    title = "Round obstacle"
    hint = "Press at the centre and drag out the radius"

    def __init__(self, host: ToolHost) -> None:
        super().__init__(host)
        self._c: Point | None = None
        self._r = 0.0

    def press(self, ev: ToolEvent) -> None:
        self._c, self._r = self.snapped(ev), 0.0

    def move(self, ev: ToolEvent) -> None:
        if self._c is not None:
            self._r = math.dist(self._c, self.snapped(ev))

    def release(self, ev: ToolEvent) -> None:
        if self._c is None:
            return
        c, r = self._c, math.dist(self._c, self.snapped(ev))
        self._c = None
        if r <= 1e-6:
            self.host.message("Drag away from the centre to set the radius.")
            return
        scene, key = edits.add_obstacle(self.host.scene, circle=(c, r))
        self.host.apply(scene, "Add round obstacle")
        self.host.set_selection([key])

    def cancel(self) -> None:
        self._c = None

    def preview(self) -> Preview | None:
        return None if self._c is None else Preview(circle=(self._c, self._r))


class LandmarkTool(Tool):
    """Click near a wall: the landmark sits on the wall line (wall-mounted); else free-standing."""

    name = "tool.landmark"
    title = "Landmark"
    hint = "Click on a wall for a wall-mounted landmark, elsewhere for a free-standing one"

    def press(self, ev: ToolEvent) -> None:
        scene = self.host.scene
        position, mount = landmark_placement(scene, ev, self.host)
        new, key = edits.add_landmark(scene, position, mount)
        self.host.apply(new, "Add landmark")
        self.host.set_selection([key])


def landmark_placement(scene: Scene, ev: ToolEvent, host: ToolHost) -> tuple[Point, str]:
    if not ev.bypass:
        wall, dist = nearest_wall_point(scene, ev.pos)
        if dist <= ev.tol:
            return _along_wall_on_grid(scene, wall, host), "wall"
    return host.snap(ev.pos, ev.bypass).point, "free"


def _along_wall_on_grid(scene: Scene, wall: Point, host: ToolHost) -> Point:
    """A wall point moved along its wall to the nearest grid value, when grid snapping is on."""
    if host.snap(wall, False).kind == "none":  # snapping off (or no grid)
        return wall
    segs = segments_of(walkable_area(scene))
    if len(segs) == 0:
        return wall
    p = np.asarray(wall, dtype=np.float64)
    i = int(np.argmin([_segment_distance(s, p) for s in segs]))
    (ax, ay), (bx, by) = segs[i]
    on_grid = grid_point_on_segment((ax, ay), (bx, by), wall, host.grid_step())
    return on_grid if on_grid is not None else wall


def _segment_distance(seg: np.ndarray, p: np.ndarray) -> float:
    _, d = nearest_on_segments(seg[None], p)
    return d


class StartPoseTool(Tool):
    """Press at the start position, drag towards the heading, release."""

    name = "tool.start_pose"
    title = "Start pose"
    hint = "Press at the start position and drag to set the heading"

    def __init__(self, host: ToolHost) -> None:
        super().__init__(host)
        self._p: Point | None = None
        self._q: Point | None = None
        self._pressed: Point = (0.0, 0.0)

    def press(self, ev: ToolEvent) -> None:
        self._p = self._q = self.snapped(ev)
        self._pressed = ev.pos

    def move(self, ev: ToolEvent) -> None:
        if self._p is not None:
            self._q = ev.pos

    def release(self, ev: ToolEvent) -> None:
        if self._p is None:
            return
        (x, y), (qx, qy) = self._p, ev.pos
        self._p = self._q = None
        # the heading is the direction the pointer was dragged, measured from where it was
        # pressed (not from the snapped position, which would tilt a straight drag)
        px, py = self._pressed
        heading = math.atan2(qy - py, qx - px) if math.hypot(qx - px, qy - py) > ev.tol else 0.0
        if not ev.bypass and self.host.snap(ev.pos, False).kind != "none":
            heading = round(heading / HEADING_STEP) * HEADING_STEP  # snapping: 15 degree steps
        heading = math.atan2(math.sin(heading), math.cos(heading))
        scene, key = edits.add_agent(self.host.scene, Start(pose=(x, y, heading)))
        self.host.apply(scene, "Add start pose")
        self.host.set_selection([key])

    def cancel(self) -> None:
        self._p = None

    def preview(self) -> Preview | None:
        if self._p is None or self._q is None:
            return None
        return Preview(arrow=(self._p, self._q), marker=self._p)


def create(host: ToolHost, target: str, pts: list[Point]) -> None:
    scene = host.scene
    if target == "room":
        new, key = edits.add_room(scene, pts)
        text = "Add room"
    elif target == "obstacle":
        new, key = edits.add_obstacle(scene, outline=pts)
        text = "Add obstacle"
    else:
        new, key = edits.add_agent(scene, Start(region=tuple(pts)))
        text = "Add start region"
    host.apply(new, text)
    host.set_selection([key])


def make_tools(host: ToolHost) -> dict[str, Tool]:
    """Every tool keyed by its action id (see :mod:`arena_studio.app.actions`)."""
    tools: list[Tool] = [
        SelectTool(host),
        PolygonTool(host, "tool.room_polygon", "Room outline", "room"),
        RectTool(host, "tool.room_rect", "Rectangular room", "room"),
        PolygonTool(host, "tool.obstacle_polygon", "Obstacle outline", "obstacle"),
        RectTool(host, "tool.obstacle_rect", "Rectangular obstacle", "obstacle"),
        CircleTool(host),
        LandmarkTool(host),
        StartPoseTool(host),
        PolygonTool(host, "tool.start_region", "Start region", "region"),
    ]
    from arena_studio.editing.goal_pick import (
        GoalPickTool,  # its own module; it needs the host's goal picks
    )

    tools.append(GoalPickTool(host))
    from arena_studio.editing.underlay_tools import CalibrateTool  # two clicks on the image

    tools.append(CalibrateTool(host))
    from arena_studio.editing.doorway import DoorwayTool  # its own module: wall geometry

    tools.append(DoorwayTool(host))
    return {t.name: t for t in tools}
