"""Checks on the static layout: room and obstacle outlines, ids, where landmarks sit."""

from __future__ import annotations

import re
from collections import defaultdict

import shapely
from shapely.geometry import Point, Polygon
from shapely.geometry.base import BaseGeometry

from arena_studio.core.checks.checker import Finding, finding, fmt_point
from arena_studio.core.geometry import regions as geo
from arena_studio.core.scene.model import Scene

#: How far (m) a wall-mounted landmark may sit from a wall line. 5 cm: a drawing tolerance,
#: well below any robot's size (common practice, no source).
WALL_TOLERANCE = 0.05
#: Containment slack (m) for points that sit exactly on a boundary.
EPS = 1e-6

_REASON_AT = re.compile(r"^(?P<text>.*?)\[(?P<x>\S+) (?P<y>\S+)\]\s*$")


def geos_reason(poly: Polygon) -> tuple[str, tuple[float, float] | None]:
    """GEOS's validity reason split into text and location, e.g. ('Self-intersection', (.5, .5)).

    GEOS implements the OGC Simple Features validity rules and reports ``Reason[x y]``.
    """
    reason = shapely.is_valid_reason(poly)
    m = _REASON_AT.match(reason or "")
    if not m:
        return reason or "invalid geometry", None
    try:
        return m["text"], (float(m["x"]), float(m["y"]))
    except ValueError:
        return m["text"], None


def _invalid_outline(kind: str, obj_id: str, poly: Polygon, code: str) -> Finding:
    if poly.is_empty:
        return finding(code, f"{kind} '{obj_id}' has fewer than 3 points", obj_id)
    text, where = geos_reason(poly)
    place = f" at {fmt_point(where)}" if where else ""
    return finding(
        code,
        f"{kind} '{obj_id}' has an invalid outline: {text.lower()}{place}",
        obj_id,
        where,
    )


def check_rooms(scene: Scene) -> list[Finding]:
    """Room outlines valid per OGC/GEOS; all rooms join into one walkable area."""
    if not scene.rooms:
        return [finding("no-rooms", "the scene has no rooms; draw at least one room")]
    out: list[Finding] = []
    for room in scene.rooms:
        poly = geo.polygon(room.outline)
        if poly.is_empty or not poly.is_valid:
            out.append(_invalid_outline("room", room.id, poly, "room-invalid"))
    parts = _polygons(geo.walkable_area(scene))
    if len(parts) > 1:
        parts.sort(key=lambda p: -p.area)
        members: list[list[str]] = [[] for _ in parts]
        for room in scene.rooms:
            rp = _repaired(geo.polygon(room.outline))
            if rp.is_empty:
                continue
            inside = rp.representative_point()
            for i, part in enumerate(parts):
                if part.distance(inside) <= EPS:
                    members[i].append(room.id)
                    break
        main = _plural("room", members[0])
        for i in range(1, len(parts)):
            if not members[i]:
                continue
            names = _plural("room", members[i])
            verb = "does" if len(members[i]) == 1 else "do"
            out.append(
                finding(
                    "rooms-disconnected",
                    f"{names} {verb} not connect to the rest of the walkable area ({main}); "
                    "rooms must overlap or share a wall, or be joined by a doorway room",
                    members[i][0],
                    _xy(parts[i].representative_point()),
                )
            )
    return out


def check_ids(scene: Scene) -> list[Finding]:
    """Ids are unique across rooms, obstacles, landmarks and agents (goals and tapes use them)."""
    seen: dict[str, str] = {}
    out: list[Finding] = []
    groups = (
        ("room", scene.rooms),
        ("obstacle", scene.obstacles),
        ("landmark", scene.landmarks),
        ("agent", scene.agents),
    )
    for kind, objs in groups:
        for obj in objs:
            if obj.id in seen:
                out.append(
                    finding(
                        "duplicate-id",
                        f"{kind} id '{obj.id}' is already used by "
                        f"{'another' if seen[obj.id] == kind else 'a'} {seen[obj.id]}; "
                        "ids must be unique",
                        obj.id,
                        _object_point(scene, kind, obj),
                    )
                )
            else:
                seen[obj.id] = kind
    return out


def check_obstacles(scene: Scene) -> list[Finding]:
    out: list[Finding] = []
    walkable = geo.walkable_area(scene)
    for ob in scene.obstacles:
        geom = geo.obstacle_geometry(ob)
        if ob.outline is not None and (geom.is_empty or not geom.is_valid):
            out.append(_invalid_outline("obstacle", ob.id, geom, "obstacle-invalid"))
            geom = _repaired(geom)
        if walkable.is_empty or geom.is_empty:
            continue
        if geom.intersection(walkable).area <= EPS * EPS:
            out.append(
                finding(
                    "obstacle-outside-rooms",
                    f"obstacle '{ob.id}' lies outside every room and blocks nothing",
                    ob.id,
                    _xy(geom.representative_point()),
                )
            )
    return out


def check_landmarks(scene: Scene) -> list[Finding]:
    """Landmarks inside rooms, not inside obstacles; wall landmarks on a wall line."""
    if not scene.landmarks:
        return [finding("no-landmarks", "the scene has no landmarks, so it has no goals")]
    out: list[Finding] = []
    walkable = geo.walkable_area(scene)
    obstacles = [(ob.id, _repaired(geo.obstacle_geometry(ob))) for ob in scene.obstacles]
    labels: dict[str, list[str]] = defaultdict(list)
    for lm in scene.landmarks:
        labels[lm.label.strip().casefold()].append(lm.id)
        pt = Point(lm.position)
        if not walkable.is_empty:
            gap = walkable.distance(pt)
            slack = WALL_TOLERANCE if lm.mount == "wall" else EPS
            if gap > slack:
                out.append(
                    finding(
                        "landmark-outside-rooms",
                        f"landmark '{lm.id}' at {fmt_point(lm.position)} is {gap:.2f} m "
                        "outside every room",
                        lm.id,
                        lm.position,
                    )
                )
        for ob_id, geom in obstacles:
            inset = geom.boundary.distance(pt) if geom.contains(pt) else 0.0
            if inset > (WALL_TOLERANCE if lm.mount == "wall" else 0.0):
                out.append(
                    finding(
                        "landmark-inside-obstacle",
                        f"landmark '{lm.id}' at {fmt_point(lm.position)} is inside "
                        f"obstacle '{ob_id}'",
                        lm.id,
                        lm.position,
                    )
                )
                break
        if lm.mount == "wall":
            out.extend(_wall_mount(scene, lm.id, lm.position, [g for _, g in obstacles]))
    for ids in labels.values():
        if len(ids) > 1:
            out.append(
                finding(
                    "duplicate-label",
                    f"landmarks {_names(ids)} share one label; viewers cannot tell them apart",
                    ids[1],
                    scene.landmarks[scene.landmark_index(ids[1])].position,
                )
            )
    out.extend(_reach_overlaps(scene))
    return out


def _wall_mount(
    scene: Scene, lm_id: str, xy: tuple[float, float], obstacles: list[BaseGeometry]
) -> list[Finding]:
    """A wall landmark sits on a room wall or on an obstacle's outline (a sign on a pillar)."""
    wall_xy, gap = geo.nearest_wall_point(scene, xy)
    pt = Point(xy)
    gap_obstacle = min((g.boundary.distance(pt) for g in obstacles if not g.is_empty), default=gap)
    if min(gap, gap_obstacle) <= WALL_TOLERANCE:
        return []
    if gap == float("inf"):
        return []
    return [
        finding(
            "landmark-off-wall",
            f"wall-mounted landmark '{lm_id}' is {gap:.2f} m from the nearest wall line "
            f"(tolerance {WALL_TOLERANCE * 100:.0f} cm); move it to {fmt_point(wall_xy)} "
            "or make it free-standing",
            lm_id,
            xy,
        )
    ]


def _reach_overlaps(scene: Scene) -> list[Finding]:
    lms = scene.landmarks
    if len(lms) > 500:  # O(L^2) pairs; beyond demo sizes this hint is not worth the time
        return []
    out: list[Finding] = []
    for i, a in enumerate(lms):
        for b in lms[i + 1 :]:
            d = Point(a.position).distance(Point(b.position))
            if d < a.reach_radius + b.reach_radius:
                out.append(
                    finding(
                        "reach-overlap",
                        f"reach discs of landmarks '{a.id}' and '{b.id}' overlap "
                        f"({d:.2f} m apart); one agent can cover both at once",
                        b.id,
                        b.position,
                    )
                )
    return out


def _object_point(scene: Scene, kind: str, obj: object) -> tuple[float, float] | None:
    if kind == "landmark":
        return obj.position  # type: ignore[attr-defined]
    if kind == "agent":
        start = obj.start  # type: ignore[attr-defined]
        if start.pose is not None:
            return (start.pose[0], start.pose[1])
        return _xy(_repaired(geo.polygon(start.region)).representative_point())
    if kind == "obstacle":
        return _xy(_repaired(geo.obstacle_geometry(obj)).representative_point())  # type: ignore[arg-type]
    return _xy(_repaired(geo.polygon(obj.outline)).representative_point())  # type: ignore[attr-defined]


def _repaired(geom: BaseGeometry) -> BaseGeometry:
    return geom if geom.is_valid else shapely.make_valid(geom)


def _polygons(geom: BaseGeometry) -> list[Polygon]:
    return [g for g in getattr(geom, "geoms", [geom]) if isinstance(g, Polygon) and not g.is_empty]


def _xy(p: Point) -> tuple[float, float] | None:
    return None if p.is_empty else (p.x, p.y)


def _names(ids: list[str]) -> str:
    quoted = [f"'{i}'" for i in ids]
    if len(quoted) == 1:
        return quoted[0]
    return ", ".join(quoted[:-1]) + " and " + quoted[-1]


def _plural(kind: str, ids: list[str]) -> str:
    return f"{kind}{'s' if len(ids) != 1 else ''} {_names(ids)}"


__all__ = [
    "EPS",
    "WALL_TOLERANCE",
    "check_ids",
    "check_landmarks",
    "check_obstacles",
    "check_rooms",
    "geos_reason",
]
