"""Checks on agents and reachability: starts inside free space, every landmark reachable.

Reach rule (README glossary): a landmark counts as reached when an agent's centre is within its
reach radius. An agent's centre lives in its *free space* (rooms minus obstacles, shrunk by
the agent's radius), and it can only travel inside the connected part it starts in. So agent
``a`` can reach landmark ``l`` exactly when the closed reach disc of ``l`` meets a part of
``a``'s free space that ``a`` starts in.
"""

from __future__ import annotations

from functools import lru_cache

from shapely.geometry import Point, Polygon

from arena_studio.core.checks.checker import Finding, Severity, finding, fmt_point
from arena_studio.core.checks.layout import EPS, geos_reason
from arena_studio.core.geometry import regions as geo
from arena_studio.core.scene.model import Agent, Scene

#: Below this clearance (m) between reach radius and agent radius a wall landmark can only be
#: reached by driving along the wall (common practice, no source).
TIGHT_MARGIN = 0.05


def start_parts(scene: Scene, agent: Agent) -> list[Polygon]:
    """The connected parts of the agent's free space its start pose or region lies in."""
    parts = geo.free_parts(scene, agent.radius)
    if agent.start.pose is not None:
        pt = Point(agent.start.pose[:2])
        return [p for p in parts if p.distance(pt) <= EPS]
    region = _region(agent)
    if region is None:
        return []
    return [p for p in parts if p.intersection(region).area > 0]


@lru_cache(maxsize=64)
def reach_table(scene: Scene) -> tuple[tuple[bool, ...], ...]:
    """``table[a][l]``: agent ``a`` can bring its centre within landmark ``l``'s reach radius."""
    rows = []
    for agent in scene.agents:
        parts = start_parts(scene, agent)
        rows.append(
            tuple(
                any(p.distance(Point(lm.position)) <= lm.reach_radius + EPS for p in parts)
                for lm in scene.landmarks
            )
        )
    return tuple(rows)


def check_agents(scene: Scene) -> list[Finding]:
    if not scene.agents:
        return [finding("no-agents", "the scene has no agents; add at least one")]
    out: list[Finding] = []
    for agent in scene.agents:
        out.extend(_check_start(scene, agent))
    out.extend(_start_overlaps(scene))
    return out


def _check_start(scene: Scene, agent: Agent) -> list[Finding]:
    free = geo.free_space(scene, agent.radius)
    start = agent.start
    if free.is_empty:
        if not scene.rooms:
            return []
        return [
            finding(
                "agent-no-free-space",
                f"agent '{agent.id}' (radius {agent.radius:g} m) fits nowhere: rooms minus "
                "obstacles leave no place for its centre",
                agent.id,
                start.pose[:2] if start.pose is not None else None,
            )
        ]
    if start.pose is not None:
        xy = (start.pose[0], start.pose[1])
        if free.distance(Point(xy)) <= EPS:
            return []
        return [
            finding(
                "start-outside-free-space",
                f"start pose of agent '{agent.id}' at {fmt_point(xy)} is {_why_outside(scene, xy)}",
                agent.id,
                xy,
            )
        ]
    assert start.region is not None  # a start is a pose or a region
    raw = geo.polygon(start.region)
    if raw.is_empty or not raw.is_valid:
        text, where = geos_reason(raw) if not raw.is_empty else ("fewer than 3 points", None)
        return [
            finding(
                "start-region-invalid",
                f"start region of agent '{agent.id}' has an invalid outline: {text.lower()}"
                + (f" at {fmt_point(where)}" if where else ""),
                agent.id,
                where,
            )
        ]
    inside = raw.intersection(free).area
    centre = (raw.representative_point().x, raw.representative_point().y)
    if inside <= 0:
        return [
            finding(
                "start-outside-free-space",
                f"start region of agent '{agent.id}' lies wholly outside its free space "
                f"(rooms minus obstacles, kept {agent.radius:g} m from walls)",
                agent.id,
                centre,
            )
        ]
    out: list[Finding] = []
    share = 1.0 - inside / raw.area
    if share > 1e-6:
        out.append(
            finding(
                "start-region-partly-outside",
                f"{share:.0%} of the start region of agent '{agent.id}' is outside its free "
                "space; placements there are impossible",
                agent.id,
                centre,
            )
        )
    if len(start_parts(scene, agent)) > 1:
        out.append(
            finding(
                "start-region-split",
                f"start region of agent '{agent.id}' spans disconnected parts of its free "
                "space; what it can reach depends on where it is placed",
                agent.id,
                centre,
            )
        )
    return out


def _why_outside(scene: Scene, xy: tuple[float, float]) -> str:
    pt = Point(xy)
    if geo.walkable_area(scene).distance(pt) > EPS:
        return "outside every room"
    for ob in scene.obstacles:
        if geo.obstacle_geometry(ob).distance(pt) <= EPS:
            return f"inside obstacle '{ob.id}'"
    return "closer to a wall or obstacle than the agent's radius"


def _region(agent: Agent) -> Polygon | None:
    if agent.start.region is None:
        return None
    poly = geo.polygon(agent.start.region)
    return poly if poly.is_valid else None


def _start_overlaps(scene: Scene) -> list[Finding]:
    posed = [a for a in scene.agents if a.start.pose is not None]
    out: list[Finding] = []
    for i, a in enumerate(posed):
        for b in posed[i + 1 :]:
            assert a.start.pose is not None and b.start.pose is not None
            d = Point(a.start.pose[:2]).distance(Point(b.start.pose[:2]))
            if d < a.radius + b.radius:
                out.append(
                    finding(
                        "start-overlap",
                        f"agents '{a.id}' and '{b.id}' start {d:.2f} m apart, closer than "
                        f"their radii allow ({a.radius + b.radius:.2f} m)",
                        b.id,
                        b.start.pose[:2],
                    )
                )
    return out


def check_reach(scene: Scene) -> list[Finding]:
    """Every landmark reachable by some agent; wall landmarks' reach radius large enough."""
    if not scene.agents or not scene.landmarks or not scene.rooms:
        return []
    out: list[Finding] = []
    table = reach_table(scene)
    started = [bool(start_parts(scene, a)) for a in scene.agents]
    for li, lm in enumerate(scene.landmarks):
        if lm.mount == "wall":
            out.extend(_wall_reach(scene, li))
        able = [a for ai, a in enumerate(scene.agents) if table[ai][li]]
        if not able:
            out.append(
                finding(
                    "landmark-unreachable",
                    f"landmark '{lm.id}' cannot be reached by any agent: "
                    + _why_unreached(scene, li),
                    lm.id,
                    lm.position,
                )
            )
            continue
        for ai, agent in enumerate(scene.agents):
            # An agent with no valid start already has its own error; do not repeat it here.
            if not table[ai][li] and started[ai]:
                out.append(
                    finding(
                        "landmark-unreachable-by-agent",
                        f"agent '{agent.id}' cannot reach landmark '{lm.id}' "
                        f"(others can: {', '.join(repr(a.id) for a in able)})",
                        lm.id,
                        lm.position,
                    )
                )
    return out


def _why_unreached(scene: Scene, li: int) -> str:
    lm = scene.landmarks[li]
    pt = Point(lm.position)
    meets = [
        a
        for a in scene.agents
        if geo.free_space(scene, a.radius).distance(pt) <= lm.reach_radius + EPS
    ]
    if not meets:
        return (
            f"its reach disc ({lm.reach_radius:g} m) meets no agent's free space "
            "(too close to walls or obstacles, or outside the rooms)"
        )
    return (
        "it lies in a part of free space where no agent starts (cut off by obstacles or a "
        "doorway narrower than the agents)"
    )


def _wall_reach(scene: Scene, li: int) -> list[Finding]:
    """On a straight wall an agent's centre stays >= its radius away, so reach must exceed it."""
    lm = scene.landmarks[li]
    too_big = [a for a in scene.agents if a.radius >= lm.reach_radius]
    if too_big:
        names = ", ".join(f"'{a.id}' ({a.radius:g} m)" for a in too_big)
        severity: Severity = "error" if len(too_big) == len(scene.agents) else "warning"
        return [
            finding(
                "reach-radius-too-small",
                f"wall landmark '{lm.id}' has reach radius {lm.reach_radius:g} m, not more "
                f"than the radius of agent(s) {names}: their centre stays at least their "
                "radius from the wall",
                lm.id,
                lm.position,
                severity=severity,
            )
        ]
    smallest = min(a.radius for a in scene.agents)
    if lm.reach_radius - smallest < TIGHT_MARGIN:
        return [
            finding(
                "reach-radius-tight",
                f"wall landmark '{lm.id}': reach radius {lm.reach_radius:g} m leaves under "
                f"{TIGHT_MARGIN * 100:.0f} cm beyond the smallest agent radius {smallest:g} m; "
                "agents must hug the wall to reach it",
                lm.id,
                lm.position,
            )
        ]
    return []


__all__ = ["TIGHT_MARGIN", "check_agents", "check_reach", "reach_table", "start_parts"]
