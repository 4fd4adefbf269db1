"""The scene checker: findings about a scene that parses but may still be wrong.

The parser (:mod:`.scene_parse`) refuses documents that are malformed; everything that needs
geometry or a view of the whole scene is a *finding* here, so an editor can hold a scene that
is still being drawn and show what is wrong with it.

Public API::

    from arena_studio.core.checks.checker import check_scene, Finding

Every finding has a short stable ``code`` (listed in :data:`CODES`); tools may match on codes,
never on messages. Findings are sorted errors first, then warnings, then info, each group in
the order the checks ran (document order of the objects).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from shapely.errors import GEOSException

from arena_studio.core.scene.model import Scene

Severity = Literal["error", "warning", "info"]
SEVERITIES: tuple[Severity, ...] = ("error", "warning", "info")

#: Stable finding codes: code -> (severity, what it means). README.md lists them too.
CODES: dict[str, tuple[Severity, str]] = {
    "no-rooms": ("error", "the scene has no rooms, so there is nowhere to move"),
    "no-landmarks": ("error", "the scene has no landmarks, so there are no goals"),
    "no-agents": ("error", "the scene has no agents"),
    "no-goals": ("error", "the goal set is empty (no family yields a goal, no vectors)"),
    "duplicate-id": ("error", "two objects share one id"),
    "room-invalid": ("error", "a room outline is not a valid polygon (GEOS reason, location)"),
    "rooms-disconnected": ("error", "some rooms do not connect to the rest of the walkable area"),
    "obstacle-invalid": ("error", "an obstacle outline is not a valid polygon"),
    "obstacle-outside-rooms": ("warning", "an obstacle lies outside every room"),
    "landmark-outside-rooms": ("error", "a landmark lies outside every room"),
    "landmark-inside-obstacle": ("error", "a landmark lies inside an obstacle"),
    "landmark-off-wall": ("error", "a wall-mounted landmark is not on a wall line"),
    "landmark-unreachable": ("error", "no agent can bring its centre within the reach radius"),
    "landmark-unreachable-by-agent": ("info", "one agent cannot reach a landmark others can"),
    "reach-radius-too-small": (
        "error",
        "a wall landmark's reach radius is not above the agents' radius (warning: some agents)",
    ),
    "reach-radius-tight": ("warning", "a wall landmark can only be reached hugging the wall"),
    "reach-overlap": ("info", "two reach discs overlap: one agent can cover both landmarks"),
    "duplicate-label": ("info", "two landmarks share one label"),
    "agent-no-free-space": ("error", "an agent is too large to fit anywhere"),
    "start-outside-free-space": ("error", "an agent's start pose or region is outside free space"),
    "start-region-invalid": ("error", "a start region outline is not a valid polygon"),
    "start-region-partly-outside": ("warning", "part of a start region is outside free space"),
    "start-region-split": ("warning", "a start region spans disconnected parts of free space"),
    "start-overlap": ("error", "two agents start overlapping each other"),
    "goal-vector-length": ("error", "a goal vector's length differs from the landmark count"),
    "goal-empty": ("error", "a goal vector has no targets"),
    "goal-duplicate": ("info", "an explicit goal is already in the goal set"),
    "family-too-large": ("warning", "a k-hot family has k > landmark count and yields no goals"),
    "goal-needs-more-agents": ("error", "a goal needs more agents at once than the scene has"),
    "goal-no-assignment": (
        "error",
        "no assignment of distinct agents covers a goal's targets (warning: reach discs overlap)",
    ),
    "goal-weights-zero": ("error", "every goal has weight 0, so none can be sampled"),
    "geometry-failed": ("error", "the geometry library could not process part of the scene"),
}


@dataclass(frozen=True)
class Finding:
    """One thing the checker reports: how bad, a stable code, a sentence, and where."""

    severity: Severity
    code: str
    message: str
    object_id: str | None
    point: tuple[float, float] | None
    goal_index: int | None = None

    def to_dict(self) -> dict[str, Any]:
        point = None if self.point is None else [float(self.point[0]), float(self.point[1])]
        return {
            "severity": self.severity,
            "code": self.code,
            "message": self.message,
            "where": {"id": self.object_id, "point": point, "goal": self.goal_index},
        }


def finding(
    code: str,
    message: str,
    object_id: str | None = None,
    point: tuple[float, float] | None = None,
    goal_index: int | None = None,
    severity: Severity | None = None,
) -> Finding:
    """Build a finding with the code's usual severity (``severity`` overrides it)."""
    return Finding(
        severity or CODES[code][0],
        code,
        message,
        object_id,
        None if point is None else (float(point[0]), float(point[1])),
        goal_index,
    )


def check_scene(scene: Scene) -> list[Finding]:
    """Every finding about ``scene``, errors first. Fast on scenes of demo size (few ms)."""
    from arena_studio.core.checks.goals import check_goals
    from arena_studio.core.checks.layout import (
        check_ids,
        check_landmarks,
        check_obstacles,
        check_rooms,
    )
    from arena_studio.core.checks.reach import check_agents, check_reach

    groups: tuple[Callable[[Scene], list[Finding]], ...] = (
        check_rooms,
        check_ids,
        check_obstacles,
        check_landmarks,
        check_agents,
        check_reach,
        check_goals,
    )
    found: list[Finding] = []
    for group in groups:
        try:
            with np.errstate(all="ignore"):  # overflow at extreme coordinates -> findings
                found.extend(group(scene))
        except (GEOSException, ValueError, ArithmeticError) as exc:
            # Extreme coordinates can defeat GEOS; say so instead of crashing the editor.
            found.append(
                finding("geometry-failed", f"could not run the {group.__name__[6:]} checks: {exc}")
            )
    rank = {s: i for i, s in enumerate(SEVERITIES)}
    return sorted(found, key=lambda fd: rank[fd.severity])


def count_by_severity(findings: list[Finding]) -> dict[str, int]:
    counts: dict[str, int] = dict.fromkeys(SEVERITIES, 0)
    for fd in findings:
        counts[fd.severity] += 1
    return counts


def fmt_point(point: tuple[float, float]) -> str:
    return f"({point[0]:.2f}, {point[1]:.2f})"


__all__ = ["CODES", "SEVERITIES", "Finding", "check_scene", "count_by_severity"]
