"""Editor state shared by canvas, tools and panels: document, selection, snapping, tools.

:class:`Editor` is the :class:`~arena_studio.editing.tools.ToolHost` the tools talk to. It keeps
selection outside the undo history (selecting is not an edit) and prunes it when objects
vanish through undo or delete.
"""

from __future__ import annotations

from PySide6.QtCore import QObject, Signal

from arena_studio.app.editor.document import SceneDocument
from arena_studio.core.scene.model import Scene
from arena_studio.core.wording import LandmarkNames
from arena_studio.editing import edits as edits
from arena_studio.editing.edits import ObjKey, Point
from arena_studio.editing.snapping import Snap, SnapSettings, snap_point
from arena_studio.editing.tools import Tool, make_tools


class Editor(QObject):
    selectionChanged = Signal()
    toolChanged = Signal(str)
    previewChanged = Signal()
    statusMessage = Signal(str)
    goalPicksChanged = Signal()  # landmarks picked for a new explicit goal
    goalAdded = Signal(tuple)  # the goal vector just added (the Goals panel shows it)

    def __init__(self, document: SceneDocument) -> None:
        super().__init__()
        self.document = document
        self._selection: tuple[ObjKey, ...] = ()
        self.active_vertex: tuple[ObjKey, int] | None = None
        self.goal_picks: tuple[str, ...] = ()  # landmark ids, in the order picked
        self.snap_settings = SnapSettings()
        self.snap_tolerance = 0.15  # metres; the canvas updates it from the zoom
        self._grid_step = 0.5  # metres; the canvas updates it from the zoom
        self.tools: dict[str, Tool] = make_tools(self)
        self.tool: Tool = self.tools["tool.select"]
        document.changed.connect(self._prune)

    # -- ToolHost ----------------------------------------------------------------------
    @property
    def scene(self) -> Scene:
        return self.document.scene

    def apply(self, scene: Scene, text: str, merge_key: object = None) -> None:
        self.document.apply(scene, text, merge_key)

    def selection(self) -> tuple[ObjKey, ...]:
        return self._selection

    def set_selection(self, keys: list[ObjKey] | tuple[ObjKey, ...]) -> None:
        keys = tuple(dict.fromkeys(keys))
        if keys != self._selection:
            self._selection = keys
            if self.active_vertex is not None and self.active_vertex[0] not in keys:
                self.active_vertex = None
            self.selectionChanged.emit()

    def snap(self, xy: Point, bypass: bool, exclude: ObjKey | None = None) -> Snap:
        settings = self.snap_settings
        if bypass:
            settings = SnapSettings(enabled=False)
        return snap_point(self.scene, xy, self._grid_step, self.snap_tolerance, settings, exclude)

    def grid_step(self) -> float:
        return self._grid_step

    def set_grid_step(self, step: float) -> None:
        self._grid_step = step

    def message(self, text: str) -> None:
        self.statusMessage.emit(text)

    def set_active_vertex(self, vertex: tuple[ObjKey, int] | None) -> None:
        self.active_vertex = vertex
        self.previewChanged.emit()

    # -- commands ----------------------------------------------------------------------
    def set_tool(self, name: str) -> None:
        if self.tool.name == name:
            return
        self.tool.cancel()
        self.tool = self.tools[name]
        if name == "tool.goal_pick" and not self.goal_picks:  # selected landmarks: first picks
            picks = tuple(oid for group, oid in self._selection if group == "landmarks")
            if picks:
                self.goal_picks = picks
                self.goalPicksChanged.emit()
        self.toolChanged.emit(name)
        self.statusMessage.emit(self.tool.hint)
        self.previewChanged.emit()

    def select_all(self) -> None:
        self.set_selection(edits.keys_of(self.scene))

    def delete_selection(self) -> bool:
        """Delete the active vertex if one is picked, else every selected object."""
        if self.active_vertex is not None:
            key, idx = self.active_vertex
            new = edits.delete_vertex(self.scene, key, idx)
            if new is None:
                self.message("An outline keeps at least three vertices.")
                return False
            self.active_vertex = None
            self.apply(new, "Delete vertex")
            return True
        if not self._selection:
            return False
        self.apply(edits.delete_objects(self.scene, self._selection), "Delete")
        return True

    def nudge(self, dx_steps: float, dy_steps: float, fine: bool) -> None:
        if not self._selection:
            return
        step = self._grid_step / (10.0 if fine else 1.0)
        new = edits.move_objects(self.scene, self._selection, dx_steps * step, dy_steps * step)
        self.apply(new, "Nudge")

    # -- explicit goals picked on the canvas -------------------------------------------
    def toggle_goal_pick(self, landmark_id: str) -> None:
        picks = list(self.goal_picks)
        picks.remove(landmark_id) if landmark_id in picks else picks.append(landmark_id)
        self.goal_picks = tuple(picks)
        if picks:
            names = LandmarkNames.of(self.scene)
            self.message(f"New goal: {names.goal(picks)} (Enter adds it)")
        else:
            self.message("No landmarks picked")
        self.goalPicksChanged.emit()

    def clear_goal_picks(self) -> bool:
        if not self.goal_picks:
            return False
        self.goal_picks = ()
        self.goalPicksChanged.emit()
        return True

    def commit_goal_picks(self) -> bool:
        """Add the picked landmarks as an explicit goal; the picks clear for the next one."""
        if not self.goal_picks:
            self.message("Pick landmarks first: click them on the canvas.")
            return False
        added = self.add_goal(self.goal_picks)
        if added:
            self.clear_goal_picks()
        return added

    def add_goal(self, landmark_ids: tuple[str, ...] | set[str]) -> bool:
        """One undoable edit adding the goal with exactly these targets; False if listed."""
        scene = self.scene
        vec = tuple(1 if lm.id in landmark_ids else 0 for lm in scene.landmarks)
        if not any(vec):
            return False
        g = scene.goals
        if vec in g.vectors:
            self.message("That goal is already listed.")
            return False
        vw = (*g.vector_weights, 1.0) if g.vector_weights is not None else None
        self.apply(edits.set_goals(scene, vectors=(*g.vectors, vec), vector_weights=vw), "Add goal")
        k = sum(vec)
        if k in g.families:  # allowed (it adds sampling weight), but say so
            self.message(f"Added; the {k}-hot family lists this goal too, so their weights add up.")
        else:
            self.message(f"Added a goal with {k} target{'s' if k > 1 else ''}.")
        self.goalAdded.emit(vec)
        return True

    def _prune(self) -> None:
        ids = {lm.id for lm in self.scene.landmarks}
        if any(i not in ids for i in self.goal_picks):
            self.goal_picks = tuple(i for i in self.goal_picks if i in ids)
            self.goalPicksChanged.emit()
        present = set(edits.keys_of(self.scene))
        kept = tuple(k for k in self._selection if k in present)
        if self.active_vertex is not None:
            key, idx = self.active_vertex
            pts = edits.outline_of(edits.find(self.scene, key)) if key in present else None
            if not pts or idx >= len(pts):
                self.active_vertex = None
        if kept != self._selection:
            self._selection = kept
            self.selectionChanged.emit()
