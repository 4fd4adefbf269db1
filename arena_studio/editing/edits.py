"""Pure scene edits used by tools, panels and undo commands (no Qt).

Every function takes a :class:`Scene` and returns a new one; nothing mutates. Objects are
addressed by an :data:`ObjKey` ``(group, id)`` where ``group`` is one of :data:`GROUPS`.
Goal vectors are positional over the landmarks, so adding or deleting a landmark keeps every
explicit goal vector the right length here, in one place.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import replace
from typing import Any

from arena_studio.core.geometry.regions import nearest_wall_point
from arena_studio.core.scene.model import (
    Agent,
    Circle,
    GoalSpec,
    Landmark,
    Obstacle,
    Room,
    Scene,
    Start,
)

Point = tuple[float, float]
ObjKey = tuple[str, str]
GROUPS: tuple[str, ...] = ("rooms", "obstacles", "landmarks", "agents")
PREFIX = {"rooms": "room", "obstacles": "obstacle", "landmarks": "landmark", "agents": "agent"}
DEFAULT_REACH = 0.5
DEFAULT_AGENT = {"radius": 0.25, "max_speed": 0.8, "max_turn_rate": 2.0}


def new_id(scene: Scene, prefix: str) -> str:
    """Smallest ``prefix-N`` not used by any object (ids are unique across groups)."""
    used = set(scene.all_ids())
    n = 1
    while f"{prefix}-{n}" in used:
        n += 1
    return f"{prefix}-{n}"


def find(scene: Scene, key: ObjKey) -> Any | None:
    group, oid = key
    for obj in getattr(scene, group):
        if obj.id == oid:
            return obj
    return None


def keys_of(scene: Scene) -> list[ObjKey]:
    return [(g, o.id) for g in GROUPS for o in getattr(scene, g)]


def replace_object(scene: Scene, key: ObjKey, new: Any) -> Scene:
    group, oid = key
    items = tuple(new if o.id == oid else o for o in getattr(scene, group))
    return replace(scene, **{group: items})


def _pt(p: Iterable[float]) -> Point:
    x, y = p
    return (float(x), float(y))


# -- adding ----------------------------------------------------------------------------
def add_room(scene: Scene, outline: Iterable[Point]) -> tuple[Scene, ObjKey]:
    room = Room(new_id(scene, "room"), tuple(_pt(p) for p in outline))
    return replace(scene, rooms=(*scene.rooms, room)), ("rooms", room.id)


def add_obstacle(
    scene: Scene, outline: Iterable[Point] | None = None, circle: tuple[Point, float] | None = None
) -> tuple[Scene, ObjKey]:
    oid = new_id(scene, "obstacle")
    if circle is not None:
        obs = Obstacle(oid, circle=Circle(_pt(circle[0]), float(circle[1])))
    else:
        assert outline is not None
        obs = Obstacle(oid, outline=tuple(_pt(p) for p in outline))
    return replace(scene, obstacles=(*scene.obstacles, obs)), ("obstacles", oid)


def add_landmark(scene: Scene, position: Point, mount: str) -> tuple[Scene, ObjKey]:
    lid = new_id(scene, "landmark")
    reach = scene.landmarks[-1].reach_radius if scene.landmarks else DEFAULT_REACH
    label = f"Landmark {len(scene.landmarks) + 1}"
    lm = Landmark(lid, label, _pt(position), reach, mount)  # type: ignore[arg-type]
    goals = replace(scene.goals, vectors=tuple((*v, 0) for v in scene.goals.vectors))
    return replace(scene, landmarks=(*scene.landmarks, lm), goals=goals), ("landmarks", lid)


def add_agent(scene: Scene, start: Start) -> tuple[Scene, ObjKey]:
    aid = new_id(scene, "agent")
    if scene.agents:
        last = scene.agents[-1]
        agent = Agent(aid, last.radius, last.max_speed, last.max_turn_rate, start)
    else:
        agent = Agent(aid, start=start, **DEFAULT_AGENT)
    return replace(scene, agents=(*scene.agents, agent)), ("agents", aid)


def rectangle(a: Point, b: Point) -> tuple[Point, ...]:
    (x0, y0), (x1, y1) = a, b
    lo_x, hi_x, lo_y, hi_y = min(x0, x1), max(x0, x1), min(y0, y1), max(y0, y1)
    return ((lo_x, lo_y), (hi_x, lo_y), (hi_x, hi_y), (lo_x, hi_y))


# -- deleting --------------------------------------------------------------------------
def _drop_landmarks(goals: GoalSpec, indices: set[int]) -> GoalSpec:
    vectors: list[tuple[int, ...]] = []
    weights: list[float] = []
    old_w = goals.vector_weights or (1.0,) * len(goals.vectors)
    for vec, w in zip(goals.vectors, old_w, strict=True):
        kept = tuple(b for i, b in enumerate(vec) if i not in indices)
        if any(kept):
            vectors.append(kept)
            weights.append(w)
    vw = tuple(weights) if goals.vector_weights is not None else None
    return replace(goals, vectors=tuple(vectors), vector_weights=vw)


def delete_objects(scene: Scene, keys: Iterable[ObjKey]) -> Scene:
    doomed: dict[str, set[str]] = {g: set() for g in GROUPS}
    for g, oid in keys:
        doomed[g].add(oid)
    gone = {i for i, lm in enumerate(scene.landmarks) if lm.id in doomed["landmarks"]}
    changes: dict[str, Any] = {
        g: tuple(o for o in getattr(scene, g) if o.id not in doomed[g]) for g in GROUPS
    }
    if gone:
        changes["goals"] = _drop_landmarks(scene.goals, gone)
    return replace(scene, **changes)


# -- moving ----------------------------------------------------------------------------
def _shift(points: tuple[Point, ...], dx: float, dy: float) -> tuple[Point, ...]:
    return tuple((x + dx, y + dy) for x, y in points)


def _moved(obj: Any, dx: float, dy: float) -> Any:
    if isinstance(obj, Room):
        return replace(obj, outline=_shift(obj.outline, dx, dy))
    if isinstance(obj, Obstacle):
        if obj.circle is not None:
            cx, cy = obj.circle.center
            return replace(obj, circle=replace(obj.circle, center=(cx + dx, cy + dy)))
        assert obj.outline is not None
        return replace(obj, outline=_shift(obj.outline, dx, dy))
    if isinstance(obj, Landmark):
        x, y = obj.position
        return replace(obj, position=(x + dx, y + dy))
    if isinstance(obj, Agent):
        s = obj.start
        if s.pose is not None:
            x, y, h = s.pose
            return replace(obj, start=replace(s, pose=(x + dx, y + dy, h)))
        assert s.region is not None
        return replace(obj, start=replace(s, region=_shift(s.region, dx, dy)))
    raise TypeError(obj)


def move_objects(scene: Scene, keys: Iterable[ObjKey], dx: float, dy: float) -> Scene:
    """Translate objects; wall-mounted landmarks are put back on the nearest wall line."""
    wanted = {g: {oid for gg, oid in keys if gg == g} for g in GROUPS}
    changes = {
        g: tuple(_moved(o, dx, dy) if o.id in wanted[g] else o for o in getattr(scene, g))
        for g in GROUPS
    }
    out = replace(scene, **changes)
    return reseat_wall_landmarks(out, wanted["landmarks"])


def reseat_wall_landmarks(scene: Scene, ids: set[str]) -> Scene:
    """Project the given wall-mounted landmarks onto the nearest wall line."""
    lms = []
    for lm in scene.landmarks:
        if lm.id in ids and lm.mount == "wall":
            (wx, wy), dist = nearest_wall_point(scene, lm.position)
            if math.isfinite(dist):
                lm = replace(lm, position=(wx, wy))
        lms.append(lm)
    return replace(scene, landmarks=tuple(lms))


# -- vertices --------------------------------------------------------------------------
def outline_of(obj: Any) -> tuple[Point, ...] | None:
    """The editable vertex list of an object (room, polygon obstacle, start region)."""
    if isinstance(obj, Room):
        return obj.outline
    if isinstance(obj, Obstacle):
        return obj.outline
    if isinstance(obj, Agent):
        return obj.start.region
    return None


def with_outline(obj: Any, outline: tuple[Point, ...]) -> Any:
    if isinstance(obj, Room | Obstacle):
        return replace(obj, outline=outline)
    if isinstance(obj, Agent):
        return replace(obj, start=replace(obj.start, region=outline))
    raise TypeError(obj)


def set_vertex(scene: Scene, key: ObjKey, index: int, xy: Point) -> Scene:
    obj = find(scene, key)
    pts = list(outline_of(obj) or ())
    pts[index] = _pt(xy)
    return replace_object(scene, key, with_outline(obj, tuple(pts)))


def insert_vertex(scene: Scene, key: ObjKey, index: int, xy: Point) -> Scene:
    """Insert a vertex so it becomes ``outline[index]``."""
    obj = find(scene, key)
    pts = list(outline_of(obj) or ())
    pts.insert(index, _pt(xy))
    return replace_object(scene, key, with_outline(obj, tuple(pts)))


def delete_vertex(scene: Scene, key: ObjKey, index: int) -> Scene | None:
    """Remove a vertex; ``None`` when the outline would drop below three vertices."""
    obj = find(scene, key)
    pts = list(outline_of(obj) or ())
    if len(pts) <= 3:
        return None
    del pts[index]
    return replace_object(scene, key, with_outline(obj, tuple(pts)))


def set_goals(scene: Scene, **changes: Any) -> Scene:
    return replace(scene, goals=replace(scene.goals, **changes))
