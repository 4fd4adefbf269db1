"""Every user action as data: id, title, shortcuts, icon, menu, toolbar and enable condition.

The main window builds its QActions, menus and toolbars from :data:`ACTIONS`, so they always
agree. ``enabled`` names a condition the window evaluates (see ``MainWindow._conditions``).
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6.QtGui import QKeySequence

SK = QKeySequence.StandardKey


@dataclass(frozen=True)
class ActionSpec:
    id: str
    title: str
    shortcuts: tuple[str | QKeySequence.StandardKey, ...] = ()
    menu: str = ""
    toolbar: str = ""  # "file" (top) or "tools" (left)
    icon: str = ""
    enabled: str = ""  # condition name; empty = always
    checkable: bool = False
    tip: str = ""


ACTIONS: tuple[ActionSpec, ...] = (
    ActionSpec("file.new", "&New", (SK.New,), "File", "file", "new", tip="Start an empty scene"),
    ActionSpec("file.open", "&Open…", (SK.Open,), "File", "file", "open"),
    ActionSpec("file.save", "&Save", (SK.Save,), "File", "file", "save", "is_dirty_or_unnamed"),
    ActionSpec("file.save_as", "Save &As…", ("Ctrl+Shift+S",), "File"),
    ActionSpec("file.quit", "&Quit", (SK.Quit, "Ctrl+Q"), "File"),
    ActionSpec("edit.undo", "&Undo", (SK.Undo,), "Edit", "file", "undo", "can_undo"),
    ActionSpec(
        "edit.redo", "&Redo", ("Ctrl+Shift+Z", "Ctrl+Y"), "Edit", "file", "redo", "can_redo"
    ),
    ActionSpec("edit.delete", "&Delete", (SK.Delete,), "Edit", "", "delete", "has_selection"),
    ActionSpec("edit.select_all", "Select &All", (SK.SelectAll,), "Edit"),
    ActionSpec(
        "edit.snap",
        "S&nap to Grid, Vertices and Walls",
        ("Ctrl+G",),
        "Edit",
        "file",
        "snap",
        checkable=True,
        tip="Snapping on/off (hold Ctrl to bypass while placing)",
    ),
    ActionSpec("view.zoom_in", "Zoom &In", (SK.ZoomIn, "Ctrl+="), "View", "file", "zoom_in"),
    ActionSpec("view.zoom_out", "Zoom &Out", (SK.ZoomOut,), "View", "file", "zoom_out"),
    ActionSpec("view.fit", "&Fit Scene", ("Ctrl+0",), "View", "file", "zoom_fit"),
    ActionSpec("view.dark", "&Dark Theme", (), "View", checkable=True),
    ActionSpec(
        "tool.select", "Select and Move", ("1",), "Tools", "tools", "select", checkable=True
    ),
    ActionSpec(
        "tool.room_polygon",
        "Room Outline",
        ("2",),
        "Tools",
        "tools",
        "room_polygon",
        checkable=True,
    ),
    ActionSpec(
        "tool.room_rect", "Rectangular Room", ("3",), "Tools", "tools", "room_rect", checkable=True
    ),
    ActionSpec(
        "tool.obstacle_polygon",
        "Obstacle Outline",
        ("4",),
        "Tools",
        "tools",
        "obstacle_polygon",
        checkable=True,
    ),
    ActionSpec(
        "tool.obstacle_rect",
        "Rectangular Obstacle",
        ("5",),
        "Tools",
        "tools",
        "obstacle_rect",
        checkable=True,
    ),
    ActionSpec(
        "tool.obstacle_circle",
        "Round Obstacle",
        ("6",),
        "Tools",
        "tools",
        "obstacle_circle",
        checkable=True,
    ),
    ActionSpec("tool.landmark", "Landmark", ("7",), "Tools", "tools", "landmark", checkable=True),
    ActionSpec(
        "tool.start_pose", "Start Pose", ("8",), "Tools", "tools", "start_pose", checkable=True
    ),
    ActionSpec(
        "tool.start_region",
        "Start Region",
        ("9",),
        "Tools",
        "tools",
        "start_region",
        checkable=True,
    ),
)

MENUS: tuple[str, ...] = ("File", "Edit", "View", "Tools")


def spec(action_id: str) -> ActionSpec:
    for a in ACTIONS:
        if a.id == action_id:
            return a
    raise KeyError(action_id)
