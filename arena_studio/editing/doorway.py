"""The doorway tool: click in the wall between two rooms to open a doorway through it.

In a scene a wall between two rooms is the gap between their outlines (rooms that touch or
overlap join into one open area), and a doorway is a small room that overlaps both (README,
"doorway room"). This tool makes that small room: across the gap, a little into each room,
as wide as asked. A click gives a doorway of the default width centred there; a drag along
the wall sets the width from where it was pressed to where it was released.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from shapely.geometry import LineString, Polygon
from shapely.geometry import Point as ShapelyPoint

from arena_studio.core.scene.model import Room, Scene
from arena_studio.editing import edits as edits
from arena_studio.editing.edits import Point
from arena_studio.editing.tools import Preview, Tool, ToolEvent, ToolHost

#: width of a doorway made by a click (m); common practice for an interior door, ~0.9-1 m
DEFAULT_WIDTH = 1.0
#: how far the doorway reaches into each room past the wall (m), so the rooms overlap it
OVERLAP = 0.1
#: thickest wall the tool opens (m); farther apart, the rooms are not neighbours
MAX_WALL = 1.0
#: narrowest doorway (m); a drag shorter than this is taken as a click
MIN_WIDTH = 0.2


@dataclass(frozen=True)
class DoorwayPlan:
    """A doorway room's outline and the two rooms it joins, or why there is none."""

    outline: tuple[Point, ...] = ()
    joins: tuple[str, str] = ("", "")
    problem: str = ""
    along_wall: Point = (1.0, 0.0)  # unit vector along the wall
    width: float = 0.0


def plan_doorway(
    scene: Scene, at: Point, width: float = DEFAULT_WIDTH, tol: float = 0.1, along: float = 0.0
) -> DoorwayPlan:
    """The doorway through the wall nearest ``at``; ``along`` shifts its centre along the wall
    (m, a drag's midpoint). Says why not when ``at`` is not in a wall between two rooms."""
    near = _two_nearest_rooms(scene, at, tol)
    if isinstance(near, str):
        return DoorwayPlan(problem=near)
    (room_a, poly_a), (room_b, poly_b) = near
    if poly_a.distance(poly_b) < 1e-9:
        return DoorwayPlan(
            problem=f"{room_a.id} and {room_b.id} already join here (no wall between them); "
            "leave a gap between room outlines where a wall should be"
        )
    u, n, foot = _wall_frame(poly_a, poly_b, at)
    gap = _gap_across(foot, n, poly_b)
    if gap is None or gap > MAX_WALL + tol:
        return DoorwayPlan(problem=f"no room within {MAX_WALL:g} m across this wall")
    cx = foot[0] + n[0] * gap / 2 + u[0] * along
    cy = foot[1] + n[1] * gap / 2 + u[1] * along
    half_w, half_d = width / 2, gap / 2 + OVERLAP
    corners = tuple(
        (
            round(cx + su * half_w * u[0] + sn * half_d * n[0], 6),
            round(cy + su * half_w * u[1] + sn * half_d * n[1], 6),
        )
        for su, sn in ((-1, -1), (1, -1), (1, 1), (-1, 1))
    )
    door = Polygon(corners)
    for room, poly in ((room_a, poly_a), (room_b, poly_b)):
        if door.intersection(poly).area <= 1e-9:
            return DoorwayPlan(problem=f"the doorway would not reach into {room.id}")
        if poly.area <= door.area:
            return DoorwayPlan(problem=f"{room.id} is smaller than a {width:g} m doorway")
    outline = corners if door.exterior.is_ccw else tuple(reversed(corners))
    return DoorwayPlan(outline, (room_a.id, room_b.id), "", u, width)


def _two_nearest_rooms(
    scene: Scene, at: Point, tol: float
) -> tuple[tuple[Room, Polygon], tuple[Room, Polygon]] | str:
    p = ShapelyPoint(at)
    found: list[tuple[float, Room, Polygon]] = []
    for room in scene.rooms:
        poly = Polygon(room.outline).buffer(0)
        if poly.is_empty:
            continue
        found.append((poly.exterior.distance(p), room, poly))
    found.sort(key=lambda f: f[0])
    if len(found) < 2 or found[1][0] > MAX_WALL + tol:
        return "click in the wall between two rooms (the gap between their outlines)"
    return (found[0][1], found[0][2]), (found[1][1], found[1][2])


def _wall_frame(poly_a: Polygon, poly_b: Polygon, at: Point) -> tuple[Point, Point, Point]:
    """Along-wall unit ``u``, unit normal ``n`` from room A towards room B, and the point of
    A's outline nearest ``at``."""
    ring = poly_a.exterior
    d = ring.project(ShapelyPoint(at))
    foot = ring.interpolate(d)
    coords = list(ring.coords)
    best = min(
        range(len(coords) - 1),
        key=lambda i: LineString(coords[i : i + 2]).distance(foot),
    )
    (x0, y0), (x1, y1) = coords[best][:2], coords[best + 1][:2]
    length = math.hypot(x1 - x0, y1 - y0) or 1.0
    u = ((x1 - x0) / length, (y1 - y0) / length)
    n = (-u[1], u[0])
    towards = poly_b.representative_point()
    if (towards.x - foot.x) * n[0] + (towards.y - foot.y) * n[1] < 0:
        n = (-n[0], -n[1])
    return u, n, (foot.x, foot.y)


def _gap_across(foot: Point, n: Point, poly_b: Polygon) -> float | None:
    """Distance from ``foot`` along ``n`` to room B (None when the ray misses it)."""
    reach = MAX_WALL * 4
    ray = LineString([foot, (foot[0] + n[0] * reach, foot[1] + n[1] * reach)])
    hit = ray.intersection(poly_b)
    if hit.is_empty:
        return None
    return ShapelyPoint(foot).distance(hit)


class DoorwayTool(Tool):
    """Click in a wall for a doorway of the default width; drag along the wall to size it."""

    name = "tool.doorway"
    title = "Doorway"
    hint = (
        f"Click in the wall between two rooms for a {DEFAULT_WIDTH:g} m doorway, "
        "or drag along the wall to set its width"
    )

    def __init__(self, host: ToolHost) -> None:
        super().__init__(host)
        self._from: Point | None = None
        self._plan: DoorwayPlan | None = None

    def press(self, ev: ToolEvent) -> None:
        self._from = ev.pos
        self._plan = self._plan_for(ev)

    def move(self, ev: ToolEvent) -> None:
        if self._from is not None:
            self._plan = self._plan_for(ev)

    def release(self, ev: ToolEvent) -> None:
        if self._from is None:
            return
        plan = self._plan_for(ev)
        self._from = self._plan = None
        if plan.problem:
            self.host.message(f"No doorway: {plan.problem}.")
            return
        scene = self.host.scene
        door = Room(edits.new_id(scene, "doorway"), plan.outline)
        self.host.apply(replace(scene, rooms=(*scene.rooms, door)), "Add doorway")
        self.host.set_selection([("rooms", door.id)])
        a, b = plan.joins
        self.host.message(f"Doorway {door.id}, {plan.width:.2f} m wide, joins {a} and {b}.")

    def cancel(self) -> None:
        self._from = self._plan = None

    def preview(self) -> Preview | None:
        if self._plan is None or not self._plan.outline:
            return None
        return Preview(polyline=list(self._plan.outline), closed=True)

    def _plan_for(self, ev: ToolEvent) -> DoorwayPlan:
        """The doorway for a press at ``_from`` and the pointer at ``ev``: a drag along the
        wall gives width and centre; a click the default width."""
        start = self._from if self._from is not None else ev.pos
        plan = plan_doorway(self.host.scene, start, DEFAULT_WIDTH, ev.tol)
        if plan.problem or math.dist(start, ev.pos) < MIN_WIDTH:
            return plan
        u = plan.along_wall
        along = (ev.pos[0] - start[0]) * u[0] + (ev.pos[1] - start[1]) * u[1]
        if abs(along) < MIN_WIDTH:
            return plan
        return plan_doorway(self.host.scene, start, abs(along), ev.tol, along / 2)
