"""The layout editor's canvas: SceneCanvas plus tool input, selection and findings overlays."""

from __future__ import annotations

from PySide6.QtCore import QPoint, Qt
from PySide6.QtGui import QKeyEvent, QMouseEvent, QResizeEvent

from arena_studio.app.canvas import SceneCanvas
from arena_studio.app.editor.editor_view import Editor
from arena_studio.editing.edits import outline_of
from arena_studio.editing.tools import ToolEvent
from arena_studio.render.theme import Theme

PICK_PX = 7.0  # pick and snap tolerance in pixels
BYPASS = Qt.KeyboardModifier.ControlModifier  # hold to place without snapping
FINE = Qt.KeyboardModifier.ShiftModifier  # hold with arrow keys for a finer nudge
KEY_NAMES = {
    Qt.Key.Key_Return: "enter",
    Qt.Key.Key_Enter: "enter",
    Qt.Key.Key_Escape: "escape",
    Qt.Key.Key_Backspace: "backspace",
}
ARROWS = {
    Qt.Key.Key_Left: (-1, 0),
    Qt.Key.Key_Right: (1, 0),
    Qt.Key.Key_Up: (0, 1),
    Qt.Key.Key_Down: (0, -1),
}


class EditorCanvas(SceneCanvas):
    def __init__(self, theme: Theme, editor: Editor) -> None:
        super().__init__(theme)
        self.editor = editor
        editor.document.changed.connect(self.refresh)
        editor.selectionChanged.connect(self.refresh)
        editor.previewChanged.connect(self.refresh)
        editor.goalPicksChanged.connect(self.refresh)
        self.zoomChanged.connect(lambda _s: self._sync_scale())
        self.auto_fit = True  # refit on resize until the user zooms, pans or jumps somewhere
        self._sync_scale()
        self.refresh()

    # -- view: stay fitted while the window is resized, until the user takes over ----------
    def fit_scene(self, margin_px: float = 36.0) -> None:
        super().fit_scene(margin_px)
        self.auto_fit = True

    def zoom_by(self, factor: float, anchor: QPoint | None = None) -> None:
        self.auto_fit = False
        super().zoom_by(factor, anchor)

    def centre_on(self, xy: tuple[float, float]) -> None:
        self.auto_fit = False
        super().centre_on(xy)

    def mousePressEvent(self, event: QMouseEvent) -> None:
        if self._starts_pan(event):
            self.auto_fit = False
        super().mousePressEvent(event)

    def resizeEvent(self, event: QResizeEvent) -> None:
        super().resizeEvent(event)
        if self.auto_fit and self.viewport().width() > 50 and self.viewport().height() > 50:
            self.fit_scene()

    def _sync_scale(self) -> None:
        self.editor.set_grid_step(self.grid_step())
        self.editor.snap_tolerance = PICK_PX * self.metres_per_pixel()

    def refresh(self) -> None:
        ed = self.editor
        layer = self.layer
        layer.scene_value = ed.scene
        layer.selection = ed.selection()
        sel = ed.selection()
        single = sel[0] if len(sel) == 1 else None
        from arena_studio.editing.edits import find

        obj = find(ed.scene, single) if single else None
        layer.handles_for = single if obj is not None and outline_of(obj) else None
        av = ed.active_vertex
        layer.active_vertex = av[1] if av is not None and av[0] == single else None
        layer.preview = ed.tool.preview()
        index = {lm.id: i for i, lm in enumerate(ed.scene.landmarks)}
        layer.picked = tuple(index[i] for i in ed.goal_picks if i in index)
        layer.update()
        self.viewport().update()

    def _event(self, event: QMouseEvent) -> ToolEvent:
        mods = event.modifiers()
        return ToolEvent(
            pos=self.world_at(event.position()),
            shift=bool(mods & Qt.KeyboardModifier.ShiftModifier),
            bypass=bool(mods & BYPASS),
            tol=PICK_PX * self.metres_per_pixel(),
        )

    def canvas_press(self, event: QMouseEvent) -> None:
        if event.button() != Qt.MouseButton.LeftButton:
            return
        self._sync_scale()
        self.editor.tool.press(self._event(event))
        self.refresh()

    def canvas_move(self, event: QMouseEvent) -> None:
        self.editor.tool.move(self._event(event))
        self.refresh()

    def canvas_release(self, event: QMouseEvent) -> None:
        if event.button() != Qt.MouseButton.LeftButton:
            return
        self.editor.tool.release(self._event(event))
        self.refresh()

    def canvas_double_click(self, event: QMouseEvent) -> None:
        self.editor.tool.double_click(self._event(event))
        self.refresh()

    def keyPressEvent(self, event: QKeyEvent) -> None:
        name = KEY_NAMES.get(Qt.Key(event.key()))
        if name is not None and self.editor.tool.key(name):
            self.refresh()
            event.accept()
            return
        if name == "backspace" and self.editor.delete_selection():
            event.accept()
            return
        if name == "escape":
            self.editor.set_selection(())
            event.accept()
            return
        step = ARROWS.get(Qt.Key(event.key()))
        if step is not None and self.editor.selection():
            self.editor.nudge(*step, fine=bool(event.modifiers() & FINE))
            event.accept()
            return
        super().keyPressEvent(event)
