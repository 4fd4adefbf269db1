"""Every user action as data: id, title, shortcuts, icon, menu, toolbar and enable condition.

The main window builds its QActions, menus and toolbars from :data:`ACTIONS`, so they always
agree. ``enabled`` names a condition the window evaluates (see ``MainWindow._conditions``);
``modes`` lists the pages (``"layout"``, ``"replay"``) an action works in, so editing keys
cannot reach the hidden editor while a tape is shown. View actions act on the visible canvas.
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
    modes: tuple[str, ...] = ()  # pages where the action works; empty = every page


LAYOUT = ("layout",)  # editing: only while the layout editor is shown


ACTIONS: tuple[ActionSpec, ...] = (
    ActionSpec("file.new", "&New", (SK.New,), "File", "file", "new", tip="Start an empty scene"),
    ActionSpec("file.open", "&Open…", (SK.Open,), "File", "file", "open"),
    ActionSpec(
        "file.open_folder",
        "Open &Folder…",
        ("Ctrl+Shift+O",),
        "File",
        tip="Open a folder of tapes (a sweep) in the runs page",
    ),
    ActionSpec(
        "file.save",
        "&Save",
        (SK.Save,),
        "File",
        "file",
        "save",
        "is_dirty_or_unnamed",
        tip="Save the scene",
        modes=LAYOUT,
    ),
    ActionSpec("file.save_as", "Save &As…", ("Ctrl+Shift+S",), "File", modes=LAYOUT),
    ActionSpec(
        "file.export",
        "&Export for Simulator…",
        ("Ctrl+E",),
        "File",
        tip="Write the scene as json, msgpack, npz, wkt, svg or an occupancy grid",
        modes=LAYOUT,
    ),
    ActionSpec(
        "file.import_map",
        "Import &Map…",
        (),
        "File",
        tip="Trace a building's occupancy map (map-server YAML) into a new scene",
    ),
    ActionSpec(
        "file.import_run",
        "Import Robot &Run…",
        (),
        "File",
        tip="Turn recorded ROS 2 bags into a tape on this scene",
        modes=LAYOUT,
    ),
    ActionSpec("file.quit", "&Quit", (SK.Quit, "Ctrl+Q"), "File"),
    ActionSpec("edit.undo", "&Undo", (SK.Undo,), "Edit", "file", "undo", "can_undo", modes=LAYOUT),
    ActionSpec(
        "edit.redo",
        "&Redo",
        ("Ctrl+Shift+Z", "Ctrl+Y"),
        "Edit",
        "file",
        "redo",
        "can_redo",
        modes=LAYOUT,
    ),
    ActionSpec(
        "edit.delete", "&Delete", (SK.Delete,), "Edit", "", "delete", "has_selection", modes=LAYOUT
    ),
    ActionSpec("edit.select_all", "Select &All", (SK.SelectAll,), "Edit", modes=LAYOUT),
    ActionSpec(
        "edit.snap",
        "S&nap to Grid, Vertices and Walls",
        ("Ctrl+G",),
        "Edit",
        "file",
        "snap",
        checkable=True,
        tip="Snapping on/off (hold Ctrl to bypass while placing)",
        modes=LAYOUT,
    ),
    ActionSpec("view.zoom_in", "Zoom &In", (SK.ZoomIn, "Ctrl+="), "View", "file", "zoom_in"),
    ActionSpec("view.zoom_out", "Zoom &Out", (SK.ZoomOut,), "View", "file", "zoom_out"),
    ActionSpec("view.fit", "&Fit Scene", ("Ctrl+0",), "View", "file", "zoom_fit"),
    ActionSpec("view.dark", "&Dark Theme", (), "View", checkable=True),
    ActionSpec(
        "view.reset_layout",
        "&Reset Layout",
        (),
        "View",
        tip="Show every tool bar and panel again, in their first places and sizes",
    ),
    ActionSpec(
        "view.underlay",
        "&Underlay…",
        (),
        "View",
        tip="Reference image under the layout: file, placement, opacity, lock",
        modes=LAYOUT,
    ),
    ActionSpec(
        "mode.layout",
        "&Layout Editor",
        ("Ctrl+1",),
        "View",
        "modes",
        checkable=True,
        tip="Show the layout editor",
    ),
    ActionSpec(
        "mode.replay",
        "&Replay",
        ("Ctrl+2",),
        "View",
        "modes",
        enabled="has_replay",
        checkable=True,
        tip="Show the replay of the open tape (File > Open a .tape file first)",
    ),
    ActionSpec(
        "mode.runs",
        "R&uns",
        ("Ctrl+3",),
        "View",
        "modes",
        enabled="has_runs",
        checkable=True,
        tip="Show the sweep of tapes (File > Open Folder first)",
    ),
    ActionSpec(
        "tool.select",
        "Select and Move",
        ("1",),
        "Tools",
        "tools",
        "select",
        checkable=True,
        modes=LAYOUT,
    ),
    ActionSpec(
        "tool.room_polygon",
        "Room Outline",
        ("2",),
        "Tools",
        "tools",
        "room_polygon",
        checkable=True,
        modes=LAYOUT,
    ),
    ActionSpec(
        "tool.room_rect",
        "Rectangular Room",
        ("3",),
        "Tools",
        "tools",
        "room_rect",
        checkable=True,
        modes=LAYOUT,
    ),
    ActionSpec(
        "tool.doorway",
        "Doorway",
        ("0",),
        "Tools",
        "tools",
        "doorway",
        checkable=True,
        tip="Click in the wall between two rooms for a doorway; drag along the wall to size it",
        modes=LAYOUT,
    ),
    ActionSpec(
        "tool.obstacle_polygon",
        "Obstacle Outline",
        ("4",),
        "Tools",
        "tools",
        "obstacle_polygon",
        checkable=True,
        modes=LAYOUT,
    ),
    ActionSpec(
        "tool.obstacle_rect",
        "Rectangular Obstacle",
        ("5",),
        "Tools",
        "tools",
        "obstacle_rect",
        checkable=True,
        modes=LAYOUT,
    ),
    ActionSpec(
        "tool.obstacle_circle",
        "Round Obstacle",
        ("6",),
        "Tools",
        "tools",
        "obstacle_circle",
        checkable=True,
        modes=LAYOUT,
    ),
    ActionSpec(
        "tool.landmark",
        "Landmark",
        ("7",),
        "Tools",
        "tools",
        "landmark",
        checkable=True,
        modes=LAYOUT,
    ),
    ActionSpec(
        "tool.start_pose",
        "Start Pose",
        ("8",),
        "Tools",
        "tools",
        "start_pose",
        checkable=True,
        modes=LAYOUT,
    ),
    ActionSpec(
        "tool.start_region",
        "Start Region",
        ("9",),
        "Tools",
        "tools",
        "start_region",
        checkable=True,
        modes=LAYOUT,
    ),
    ActionSpec(
        "tool.goal_pick",
        "Pick Goal Landmarks",
        (),
        "Tools",
        checkable=True,
        tip="Click landmarks on the canvas to build an explicit goal (Goals panel)",
        modes=LAYOUT,
    ),
    ActionSpec(
        "tool.calibrate_underlay",
        "Calibrate Underlay by Two Points",
        (),
        "Tools",
        checkable=True,
        tip="Click two points of the underlay image and type their true distance",
        modes=LAYOUT,
    ),
)

MENUS: tuple[str, ...] = ("File", "Edit", "View", "Tools")


def key_sequences(action: ActionSpec) -> list[QKeySequence]:
    """The action's keys on this platform, each once: a standard key that expands to a key
    also listed (Quit is Ctrl+Q on Linux) would make the shortcut ambiguous, and Qt then
    triggers neither."""
    out: list[QKeySequence] = []
    for key in action.shortcuts:
        if isinstance(key, QKeySequence.StandardKey):
            found = QKeySequence.keyBindings(key)
        else:
            found = [QKeySequence(key)]
        out.extend(seq for seq in found if not seq.isEmpty() and seq not in out)
    return out


def spec(action_id: str) -> ActionSpec:
    for a in ACTIONS:
        if a.id == action_id:
            return a
    raise KeyError(action_id)
