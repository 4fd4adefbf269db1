"""The open scene document: current Scene value, file path and the undo stack.

Every edit is one :class:`SceneEdit` holding the scene before and after (scenes are immutable
values, so a command is two references). Edits carrying the same ``merge_key`` (one mouse
drag) merge into one command.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QObject, Signal
from PySide6.QtGui import QUndoCommand, QUndoStack

from arena_studio.core.scene.model import Scene


class SceneEdit(QUndoCommand):
    MERGE_ID = 4201

    def __init__(self, doc: SceneDocument, before: Scene, after: Scene, text: str, key: object):
        super().__init__(text)
        self.doc, self.before, self.after, self.key = doc, before, after, key

    def redo(self) -> None:
        self.doc._set(self.after)

    def undo(self) -> None:
        self.doc._set(self.before)

    def id(self) -> int:
        return self.MERGE_ID if self.key is not None else -1

    def mergeWith(self, other: QUndoCommand) -> bool:
        if not isinstance(other, SceneEdit) or other.key != self.key:
            return False
        self.after = other.after
        if self.after == self.before:
            self.setObsolete(True)
        return True


class SceneDocument(QObject):
    """Holds the scene; emits ``changed`` after every edit, undo or redo."""

    changed = Signal()
    pathChanged = Signal()

    def __init__(self, scene: Scene | None = None, path: Path | None = None) -> None:
        super().__init__()
        self._scene = scene if scene is not None else Scene()
        self.path = path
        self.undo_stack = QUndoStack(self)
        self._restored_dirty = False

    @property
    def scene(self) -> Scene:
        return self._scene

    def _set(self, scene: Scene) -> None:
        self._scene = scene
        self.changed.emit()

    def apply(self, scene: Scene, text: str, merge_key: object = None) -> None:
        """Record an edit as one undo command; an edit that changes nothing is not recorded."""
        if scene == self._scene:
            return
        self.undo_stack.push(SceneEdit(self, self._scene, scene, text, merge_key))

    def reset(self, scene: Scene, path: Path | None, dirty: bool = False) -> None:
        """Start over with a new scene (open, new): history cleared."""
        self.undo_stack.clear()
        self.path = path
        self.undo_stack.setClean()
        self._restored_dirty = dirty  # a restored recovery copy holds unsaved work
        self._scene = scene
        self.pathChanged.emit()
        self.changed.emit()

    @property
    def dirty(self) -> bool:
        return not self.undo_stack.isClean() or self._restored_dirty

    def mark_saved(self, path: Path) -> None:
        self.path = path
        self._restored_dirty = False
        self.undo_stack.setClean()
        self.pathChanged.emit()

    @property
    def display_name(self) -> str:
        return self.path.name if self.path is not None else "Untitled"
