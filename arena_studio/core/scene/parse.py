"""Validate a plain-dict scene document and build the :class:`Scene` value.

Structural rules live here (types, ranges, required and unknown keys); semantic rules that
need geometry (a landmark outside every room...) are findings of :mod:`.checks`, because an
editor must be able to hold a scene that is still wrong while it is being drawn.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from arena_studio.core.errors import SceneFormatError
from arena_studio.core.scene import fields as f
from arena_studio.core.scene.model import (
    FORMAT_NAME,
    FORMAT_VERSION,
    MOUNTS,
    RULES,
    Agent,
    Circle,
    GoalSpec,
    Landmark,
    Obstacle,
    Room,
    Scene,
    Start,
    Underlay,
)
from arena_studio.core.scene.upgrade import upgrade_to_current
from arena_studio.core.value_limits import HEADING_LIMIT

#: Documented maxima (README "Limits"), each measured on a 2-core machine with every command
#: finishing within seconds (tests/bench/bench_scale.py): larger lists are refused at load.
MAX_ROOMS = 1_000
MAX_OBSTACLES = 5_000
MAX_LANDMARKS = 3_000
MAX_AGENTS = 1_000
MAX_GOAL_VECTORS = 10_000
#: Vertices of all outlines (rooms, obstacles, start regions) together.
MAX_TOTAL_VERTICES = 200_000

TOP_REQUIRED = ("format", "version", "name", "units", "rooms", "landmarks", "agents", "goals")
TOP_OPTIONAL = ("obstacles", "description", "underlay")


def parse_scene(data: Mapping[str, Any]) -> Scene:
    doc = f.mapping(data, "")
    fmt = doc.get("format")
    if fmt != FORMAT_NAME:
        raise SceneFormatError("format", f"expected {FORMAT_NAME!r}, got {fmt!r}: not a scene")
    version = _whole(doc.get("version"), "version", minimum=1)
    if version > FORMAT_VERSION:
        raise SceneFormatError(
            "version",
            f"this file is version {version}, written by a newer arena_studio; this one "
            f"reads up to version {FORMAT_VERSION}. Please upgrade arena_studio.",
        )
    doc = upgrade_to_current(doc, version)
    f.check_keys(doc, "", TOP_REQUIRED, TOP_OPTIONAL)
    if doc["units"] != "m":
        raise SceneFormatError("units", f"expected 'm' (metres), got {doc['units']!r}")
    _check_total_vertices(doc)
    return Scene(
        name=f.line(doc["name"], "name"),
        description=f.string(
            doc.get("description", ""), "description", nonempty=False, max_length=10_000
        ),
        rooms=tuple(
            _room(r, f"rooms[{i}]")
            for i, r in enumerate(f.sequence(doc["rooms"], "rooms", max_items=MAX_ROOMS))
        ),
        obstacles=tuple(
            _obstacle(o, f"obstacles[{i}]")
            for i, o in enumerate(
                f.sequence(doc.get("obstacles", []), "obstacles", max_items=MAX_OBSTACLES)
            )
        ),
        landmarks=tuple(
            _landmark(m, f"landmarks[{i}]")
            for i, m in enumerate(
                f.sequence(doc["landmarks"], "landmarks", max_items=MAX_LANDMARKS)
            )
        ),
        agents=tuple(
            _agent(a, f"agents[{i}]")
            for i, a in enumerate(f.sequence(doc["agents"], "agents", max_items=MAX_AGENTS))
        ),
        goals=_goals(doc["goals"], "goals"),
        underlay=_underlay(doc["underlay"], "underlay") if "underlay" in doc else None,
    )


def _underlay(value: object, path: str) -> Underlay:
    obj = f.mapping(value, path)
    f.check_keys(obj, path, ("image", "origin", "scale"), ("rotation", "opacity", "locked"))
    locked = obj.get("locked", True)
    if not isinstance(locked, bool):
        raise SceneFormatError(f.join(path, "locked"), f"expected true or false, got {locked!r}")
    return Underlay(
        image=f.string(obj["image"], f.join(path, "image"), max_length=1000),
        origin=f.point(obj["origin"], f.join(path, "origin")),
        scale=f.number(obj["scale"], f.join(path, "scale"), exclusive_minimum=0),
        rotation=f.number(obj.get("rotation", 0.0), f.join(path, "rotation")),
        opacity=f.number(obj.get("opacity", 0.5), f.join(path, "opacity"), minimum=0, maximum=1),
        locked=locked,
    )


def _outlines(doc: Mapping[str, Any]) -> Iterator[object]:
    """Every outline-like list of a raw document (malformed parts are skipped here; the
    field readers name them)."""
    for key in ("rooms", "obstacles"):
        items = doc.get(key)
        for obj in items if isinstance(items, list | tuple) else ():
            if isinstance(obj, Mapping):
                yield obj.get("outline")
    agents = doc.get("agents")
    for obj in agents if isinstance(agents, list | tuple) else ():
        start = obj.get("start") if isinstance(obj, Mapping) else None
        if isinstance(start, Mapping):
            yield start.get("region")


def _check_total_vertices(doc: Mapping[str, Any]) -> None:
    """Refuse a scene whose outlines together exceed MAX_TOTAL_VERTICES, before parsing them."""
    total = sum(len(o) for o in _outlines(doc) if isinstance(o, list | tuple))
    if total > MAX_TOTAL_VERTICES:
        raise SceneFormatError(
            "", f"too many outline vertices in all ({total:,} > {MAX_TOTAL_VERTICES:,})"
        )


def _id(obj: Mapping[str, Any], path: str) -> str:
    return f.line(obj["id"], f.join(path, "id"), max_length=64)


def _room(value: object, path: str) -> Room:
    obj = f.mapping(value, path)
    f.check_keys(obj, path, ("id", "outline"))
    return Room(id=_id(obj, path), outline=f.outline(obj["outline"], f.join(path, "outline")))


def _obstacle(value: object, path: str) -> Obstacle:
    obj = f.mapping(value, path)
    if "outline" in obj and "circle" in obj:
        raise SceneFormatError(path, "an obstacle has either 'outline' or 'circle', not both")
    if "circle" in obj:
        f.check_keys(obj, path, ("id", "circle"))
        cpath = f.join(path, "circle")
        c = f.mapping(obj["circle"], cpath)
        f.check_keys(c, cpath, ("center", "radius"))
        circle = Circle(
            center=f.point(c["center"], f.join(cpath, "center")),
            radius=f.radius(c["radius"], f.join(cpath, "radius")),
        )
        return Obstacle(id=_id(obj, path), circle=circle)
    f.check_keys(obj, path, ("id", "outline"))
    return Obstacle(id=_id(obj, path), outline=f.outline(obj["outline"], f.join(path, "outline")))


def _landmark(value: object, path: str) -> Landmark:
    obj = f.mapping(value, path)
    f.check_keys(obj, path, ("id", "label", "position", "reach_radius", "mount"))
    return Landmark(
        id=_id(obj, path),
        label=f.line(obj["label"], f.join(path, "label"), max_length=80),
        position=f.point(obj["position"], f.join(path, "position")),
        reach_radius=f.radius(obj["reach_radius"], f.join(path, "reach_radius")),
        mount=f.choice(obj["mount"], f.join(path, "mount"), MOUNTS),  # type: ignore[arg-type]
    )


def _agent(value: object, path: str) -> Agent:
    obj = f.mapping(value, path)
    f.check_keys(obj, path, ("id", "radius", "max_speed", "max_turn_rate", "start"))
    return Agent(
        id=_id(obj, path),
        radius=f.radius(obj["radius"], f.join(path, "radius")),
        max_speed=f.number(obj["max_speed"], f.join(path, "max_speed"), exclusive_minimum=0),
        max_turn_rate=f.number(
            obj["max_turn_rate"], f.join(path, "max_turn_rate"), exclusive_minimum=0
        ),
        start=_start(obj["start"], f.join(path, "start")),
    )


def _start(value: object, path: str) -> Start:
    obj = f.mapping(value, path)
    if "pose" in obj:
        f.check_keys(obj, path, ("pose",))
        return Start(pose=f.pose(obj["pose"], f.join(path, "pose")))
    if "region" in obj:
        f.check_keys(obj, path, ("region",), ("heading",))
        heading = obj.get("heading")
        return Start(
            region=f.outline(obj["region"], f.join(path, "region")),
            heading=None
            if heading is None
            else f.bounded(heading, f.join(path, "heading"), HEADING_LIMIT, "rad"),
        )
    raise SceneFormatError(path, "expected 'pose' [x, y, heading] or 'region' [[x, y], ...]")


def _goals(value: object, path: str) -> GoalSpec:
    obj = f.mapping(value, path)
    f.check_keys(obj, path, ("rule",), ("hold_time", "families", "vectors", "weights"))
    families = tuple(
        _whole(k, f"{path}.families[{i}]", minimum=1)
        for i, k in enumerate(
            f.sequence(obj.get("families", []), f.join(path, "families"), max_items=MAX_LANDMARKS)
        )
    )
    if len(set(families)) != len(families):
        raise SceneFormatError(f.join(path, "families"), "each k may be listed only once")
    vectors = tuple(
        _vector(v, f"{path}.vectors[{i}]")
        for i, v in enumerate(
            f.sequence(obj.get("vectors", []), f.join(path, "vectors"), max_items=MAX_GOAL_VECTORS)
        )
    )
    family_weights = vector_weights = None
    if "weights" in obj:
        wpath = f.join(path, "weights")
        w = f.mapping(obj["weights"], wpath)
        f.check_keys(w, wpath, (), ("families", "vectors"))
        if "families" in w:
            family_weights = _weights(w["families"], f.join(wpath, "families"), len(families))
        if "vectors" in w:
            vector_weights = _weights(w["vectors"], f.join(wpath, "vectors"), len(vectors))
    return GoalSpec(
        rule=f.choice(obj["rule"], f.join(path, "rule"), RULES),  # type: ignore[arg-type]
        hold_time=f.number(obj.get("hold_time", 0.0), f.join(path, "hold_time"), minimum=0),
        families=families,
        vectors=vectors,
        family_weights=family_weights,
        vector_weights=vector_weights,
    )


def _vector(value: object, path: str) -> tuple[int, ...]:
    items = f.sequence(value, path, max_items=MAX_LANDMARKS)
    out = []
    for i, bit in enumerate(items):
        if isinstance(bit, bool) or not isinstance(bit, int | float) or bit not in (0, 1):
            raise SceneFormatError(f"{path}[{i}]", f"expected 0 or 1, got {bit!r}")
        out.append(int(bit))
    return tuple(out)


def _whole(value: object, path: str, *, minimum: int) -> int:
    """A whole number; ``1.0`` counts as 1, as in JSON Schema (draft 2020-12, "integer")."""
    if isinstance(value, float) and value.is_integer():
        value = int(value)
    return f.integer(value, path, minimum=minimum)


def _weights(value: object, path: str, expected: int) -> tuple[float, ...]:
    items = f.sequence(value, path)
    if len(items) != expected:
        raise SceneFormatError(
            path, f"expected {expected} weights (one per entry), got {len(items)}"
        )
    return tuple(f.number(w, f"{path}[{i}]", minimum=0) for i, w in enumerate(items))


__all__ = [
    "MAX_AGENTS",
    "MAX_GOAL_VECTORS",
    "MAX_LANDMARKS",
    "MAX_OBSTACLES",
    "MAX_ROOMS",
    "MAX_TOTAL_VERTICES",
    "TOP_OPTIONAL",
    "TOP_REQUIRED",
    "parse_scene",
]
