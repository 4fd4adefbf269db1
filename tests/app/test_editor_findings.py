"""Findings follow edits: the checker reruns after a vertex drag and the panel shows it."""

from __future__ import annotations

from PySide6.QtCore import Qt
from shapely.geometry import Point, Polygon

from arena_studio.core.scene.model import Agent, Landmark, Room, Scene, Start
from arena_studio.editing.tools import ToolEvent

from .conftest import view_point


def _scene() -> Scene:
    return Scene(
        name="one room",
        rooms=(Room("hall", ((0, 0), (6, 0), (6, 4), (0, 4))),),
        landmarks=(Landmark("crate", "Crate", (5.0, 2.0), 0.4, "free"),),
        agents=(Agent("rover", 0.25, 0.8, 2.0, Start(pose=(1.0, 1.0, 0.0))),),
    )


def _codes(win) -> set[str]:
    return {f.code for f in win.findings}


def test_moving_a_vertex_updates_findings(qtbot, main_window):
    win = main_window
    win.document.reset(_scene(), None)
    win.canvas.fit_scene()
    win.canvas._sync_scale()
    qtbot.waitUntil(lambda: win.checks.latest == win.document.scene and not win.checks.busy)
    assert "landmark-outside-rooms" not in _codes(win)

    win.editor.set_selection([("rooms", "hall")])
    vp = win.canvas.viewport()
    qtbot.mousePress(vp, Qt.MouseButton.LeftButton, pos=view_point(win, 6, 4))
    qtbot.mouseMove(vp, view_point(win, 4.5, 4))
    qtbot.mouseMove(vp, view_point(win, 3, 4))
    qtbot.mouseRelease(vp, Qt.MouseButton.LeftButton, pos=view_point(win, 3, 4))
    room = win.document.scene.rooms[0]
    # Independent reference: shapely says the landmark is now outside the room.
    assert not Polygon(room.outline).contains(Point(5.0, 2.0))
    qtbot.waitUntil(lambda: "landmark-outside-rooms" in _codes(win), timeout=5000)
    panel = win.findings_panel
    messages = [panel.list.item(i).text() for i in range(panel.list.count())]
    assert any("crate" in m.lower() or "Crate" in m for m in messages)
    assert win.canvas.layer.findings  # also marked on the canvas

    # Clicking the finding selects the landmark it names.
    row = next(
        i
        for i in range(panel.list.count())
        if panel.list.item(i).data(Qt.ItemDataRole.UserRole).code == "landmark-outside-rooms"
    )
    panel._clicked(panel.list.item(row))
    assert win.editor.selection() == (("landmarks", "crate"),)

    win.document.undo_stack.undo()
    qtbot.waitUntil(lambda: "landmark-outside-rooms" not in _codes(win), timeout=5000)


def test_findings_arrive_before_par_times_and_stale_plans_are_not_shown(qtbot, main_window):
    win = main_window
    runner = win.checks
    seen: list[str] = []
    runner.results.connect(lambda *_: seen.append("findings"))
    runner.plansReady.connect(lambda *_: seen.append("plans"))
    win.document.reset(_scene(), None)
    qtbot.waitUntil(lambda: "plans" in seen and not runner.busy, timeout=10000)
    assert seen.index("findings") < seen.index("plans")
    table = win.goals_panel.table
    assert table.item(0, 2).text().endswith(" s")
    # An edit makes the shown par time stale at once: it shows as pending, not as a number.
    win.editor.tools["tool.landmark"].press(ToolEvent((2.0, 3.0), tol=0.01))
    assert all(table.item(i, 2).text() == "…" for i in range(table.rowCount()))
    qtbot.waitUntil(lambda: table.item(0, 2).text().endswith(" s"), timeout=10000)
