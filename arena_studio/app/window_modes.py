"""The main window's pages (the layout editor, the replay): switching between them, and the
view actions that act on the canvas the user sees: :class:`ModePages`, held by
:class:`~arena_studio.app.main_window.MainWindow` as ``window.pages``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from PySide6.QtCore import QByteArray
from PySide6.QtWidgets import QSizePolicy, QWidget

from arena_studio.app.canvas import SceneCanvas

if TYPE_CHECKING:
    from arena_studio.app.main_window import MainWindow


class ModePages:
    """Pages in the window's ``modes`` stack keyed by name; ``"layout"`` is the editor.
    ``layout_state`` keeps the editor's dock layout while another page hides the docks."""

    def __init__(self, window: MainWindow) -> None:
        self.window = window
        self._pages: dict[str, QWidget] = {"layout": window.canvas}
        self.shown = "layout"
        self.layout_state: QByteArray | None = None

    def has(self, name: str) -> bool:
        return name in self._pages

    def pages(self) -> dict[str, QWidget]:
        return dict(self._pages)

    def show_zoom(self, canvas: SceneCanvas, ppm: float) -> None:
        if canvas.isVisible() or (canvas is self.window.canvas and self.window.mode == "layout"):
            self.window.zoom_label.setText(f"{ppm:.0f} px/m   grid {canvas.grid_step():g} m")

    def visible_canvas(self) -> SceneCanvas:
        """The canvas of the page shown now (view actions act on what the user sees)."""
        page = self.window.modes.currentWidget()
        canvas = page if isinstance(page, SceneCanvas) else getattr(page, "canvas", None)
        return canvas if isinstance(canvas, SceneCanvas) else self.window.canvas

    def fit_visible(self) -> None:
        page = self.window.modes.currentWidget()
        fit = getattr(page, "fit_views", None)  # a page with several canvases fits them all
        if callable(fit):
            fit()
        else:
            self.visible_canvas().fit_scene()

    def add_mode(self, name: str, widget: QWidget) -> None:
        """Add a page (e.g. replay) to the central area; switch with :meth:`set_mode`."""
        self._pages[name] = widget
        widget.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Ignored)
        self.window.modes.addWidget(widget)
        canvas = getattr(widget, "canvas", None)
        if isinstance(canvas, SceneCanvas):
            self.window.connect_canvas(canvas)
        self.window.update_actions()

    def set_mode(self, name: str) -> None:
        """Show page ``name``; actions that do not work there are disabled."""
        if name not in self._pages:
            return
        editing = name == "layout"
        if not editing and self.shown == "layout" and self.window.isVisible():
            # Docks hidden and shown again come back at their minimum size: keep the layout.
            self.layout_state = self.window.saveState()
        self.window.mode = name
        for page_name, page in self._pages.items():
            # A stacked widget is as large as its largest page's minimum, hidden or not;
            # hidden pages must not squeeze the docks of the page on screen.
            policy = (
                QSizePolicy.Policy.Preferred if page_name == name else QSizePolicy.Policy.Ignored
            )
            page.setSizePolicy(policy, policy)
        self.window.modes.setCurrentWidget(self._pages[name])
        self.window.toolbars["tools"].setVisible(editing)
        for key in ("properties", "goals", "findings"):
            self.window.docks[key].setVisible(editing)
        if editing and self.layout_state is not None:
            self.window.restoreState(self.layout_state)
            self.layout_state = None
        self.shown = name
        self.window.actions_by_id[f"mode.{name}"].setChecked(True)
        self.window.coords_label.setText("x —  y —")
        self.window.show_message("")  # the last message was about the other page
        self.show_zoom(self.visible_canvas(), self.visible_canvas().pixels_per_metre())
        self.window.update_actions()
        if editing:
            self.window.update_title()
        else:
            self.window.setWindowTitle(f"{self._pages[name].windowTitle()} — arena_studio")
        self.visible_canvas().setFocus()
