"""Two-point calibration of the underlay: click two points of the image, type their distance.

A tool like the drawing tools (no Qt): the window gives it ``ask``, which asks the user for
the true distance in metres (None = cancelled). The first point stays where it is; the image
is scaled about it (:func:`arena_studio.core.robot.underlay.calibrate`).
"""

from __future__ import annotations

from collections.abc import Callable

from arena_studio.core.robot.underlay import calibrate
from arena_studio.editing.edits import Point
from arena_studio.editing.tools import Preview, Tool, ToolEvent, ToolHost


class CalibrateTool(Tool):
    name = "tool.calibrate_underlay"
    title = "Calibrate underlay"
    hint = "Click two points of the underlay image whose true distance you know"

    def __init__(self, host: ToolHost) -> None:
        super().__init__(host)
        self.ask: Callable[[float], float | None] = lambda measured: None
        self._a: Point | None = None
        self._cursor: Point | None = None

    def press(self, ev: ToolEvent) -> None:
        under = self.host.scene.underlay
        if under is None:
            self.host.message("No underlay: add one in View > Underlay… first.")
            return
        if under.locked:
            self.host.message("The underlay is locked: unlock it in View > Underlay… first.")
            return
        if self._a is None:
            self._a = ev.pos
            self.host.message("Now click the second point.")
            return
        a, b = self._a, ev.pos
        self._a = self._cursor = None
        measured = ((b[0] - a[0]) ** 2 + (b[1] - a[1]) ** 2) ** 0.5
        if measured <= 0:
            self.host.message("The two points are the same point; start again.")
            return
        distance = self.ask(measured)
        if distance is None:
            self.host.message("Calibration cancelled.")
            return
        try:
            new = calibrate(under, a, b, distance)
        except ValueError as exc:
            self.host.message(f"Not calibrated: {exc}.")
            return
        self.host.apply(self.host.scene.with_changes(underlay=new), "Calibrate underlay")
        self.host.message(f"Underlay calibrated: {new.scale:.5g} m per pixel.")

    def move(self, ev: ToolEvent) -> None:
        self._cursor = ev.pos

    def key(self, name: str) -> bool:
        if name == "escape" and self._a is not None:
            self.cancel()
            return True
        return False

    def cancel(self) -> None:
        self._a = self._cursor = None

    def preview(self) -> Preview | None:
        if self._a is None:
            return None
        end = self._cursor or self._a
        return Preview(polyline=[self._a, end], marker=self._a)


__all__ = ["CalibrateTool"]
