"""Picking an explicit goal on the canvas: click landmarks to put them in (or take them out of)
the pending goal, Enter or the Goals panel's "Add goal" adds it, Esc clears the picks.

The tool is Qt-free like the others; the pending landmark ids live on the host (the editor),
so the Goals panel and the canvas mark show the same picks.
"""

from __future__ import annotations

import math
from typing import Protocol

from arena_studio.editing.tools import Tool, ToolEvent, ToolHost

PICK_SLACK = 2.0  # a click counts within this many pick tolerances of a landmark's centre


class GoalPickHost(ToolHost, Protocol):
    def toggle_goal_pick(self, landmark_id: str) -> None: ...
    def clear_goal_picks(self) -> bool: ...
    def commit_goal_picks(self) -> bool: ...


def landmark_near(host: ToolHost, ev: ToolEvent) -> str | None:
    """Id of the landmark a click means: the nearest within its reach disc or a few pixels."""
    best: tuple[float, str] | None = None
    for lm in host.scene.landmarks:
        d = math.dist(lm.position, ev.pos)
        if d <= max(PICK_SLACK * ev.tol, min(lm.reach_radius, 6 * ev.tol)) and (
            best is None or d < best[0]
        ):
            best = (d, lm.id)
    return None if best is None else best[1]


class GoalPickTool(Tool):
    name = "tool.goal_pick"
    title = "Pick goal landmarks"
    hint = "Click landmarks to add or remove them from the new goal; Enter adds it, Esc clears"

    host: GoalPickHost

    def press(self, ev: ToolEvent) -> None:
        landmark = landmark_near(self.host, ev)
        if landmark is None:
            self.host.message("Click on a landmark to pick it for the goal.")
            return
        self.host.toggle_goal_pick(landmark)

    def cancel(self) -> None:
        self.host.clear_goal_picks()  # picks belong to pick mode: leaving it drops them

    def key(self, name: str) -> bool:
        if name == "enter":
            return self.host.commit_goal_picks()
        if name == "escape":
            return self.host.clear_goal_picks()
        return False
