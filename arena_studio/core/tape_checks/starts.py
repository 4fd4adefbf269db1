"""Where an episode starts, against each agent's start pose or start region."""

from __future__ import annotations

import math

import numpy as np
import shapely

from arena_studio.core.geometry import polygon
from arena_studio.core.scene import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape_checks.findings import TapeFinding, place, tape_finding
from arena_studio.core.tape_checks.motion import wrap_angle

#: metres a first pose may be off its start pose or outside its start region
START_TOLERANCE = 0.05
#: radians a first heading may be off a fixed start heading
HEADING_TOLERANCE = 0.05


def check_start(scene: Scene, ep: Episode) -> list[TapeFinding]:
    """One finding per agent whose first recorded pose is not where the scene starts it."""
    found = []
    for a, agent in enumerate(scene.agents):
        x, y, h = (float(v) for v in ep.poses[0, a])
        start = agent.start
        problem = None
        if start.pose is not None:
            sx, sy, sh = start.pose
            off = math.hypot(x - sx, y - sy)
            turn = abs(float(wrap_angle(np.asarray(h - sh))))
            if off > START_TOLERANCE:
                problem = f"starts {off:.2f} m from its start pose ({sx:g}, {sy:g})"
            elif turn > HEADING_TOLERANCE:
                problem = f"starts facing {turn:.2f} rad away from its start heading"
        elif start.region is not None:
            region = polygon(start.region)
            if region.distance(shapely.Point(x, y)) > START_TOLERANCE:
                problem = "starts outside its start region"
            elif (
                start.heading is not None
                and abs(float(wrap_angle(np.asarray(h - start.heading)))) > HEADING_TOLERANCE
            ):
                problem = "starts facing away from its region's fixed heading"
        if problem:
            found.append(
                tape_finding(
                    "start-mismatch",
                    f"{place(ep.index, 0, agent.id)}: {problem}",
                    episode=ep.index,
                    step=0,
                    agent=agent.id,
                    point=(x, y),
                )
            )
    return found


__all__ = ["HEADING_TOLERANCE", "START_TOLERANCE", "check_start"]
