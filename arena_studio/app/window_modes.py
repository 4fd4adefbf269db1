"""The main window's pages (the layout editor, the replay): switching between them, and the
view actions that act on the canvas the user sees. A mixin of
:class:`~arena_studio.app.main_window.MainWindow`.
"""

from __future__ import annotations

from typing import Any

from PySide6.QtCore import QByteArray
from PySide6.QtWidgets import QSizePolicy, QWidget

from arena_studio.app.canvas import SceneCanvas


class ModePages:
    """Pages in ``self.modes`` (a QStackedWidget) keyed by name; ``"layout"`` is the editor."""

    modes: Any
    canvas: SceneCanvas
    docks: dict[str, Any]
    toolbars: dict[str, Any]
    actions_by_id: dict[str, Any]
    coords_label: Any
    zoom_label: Any
    mode: str
    mode_shown: str
    _mode_pages: dict[str, QWidget]
    _layout_state: QByteArray | None

    def _show_zoom(self, canvas: SceneCanvas, ppm: float) -> None:
        if canvas.isVisible() or (canvas is self.canvas and self.mode == "layout"):
            self.zoom_label.setText(f"{ppm:.0f} px/m   grid {canvas.grid_step():g} m")

    def visible_canvas(self) -> SceneCanvas:
        """The canvas of the page shown now (view actions act on what the user sees)."""
        page = self.modes.currentWidget()
        canvas = page if isinstance(page, SceneCanvas) else getattr(page, "canvas", None)
        return canvas if isinstance(canvas, SceneCanvas) else self.canvas

    def fit_visible(self) -> None:
        page = self.modes.currentWidget()
        fit = getattr(page, "fit_views", None)  # a page with several canvases fits them all
        if callable(fit):
            fit()
        else:
            self.visible_canvas().fit_scene()

    def add_mode(self, name: str, widget: QWidget) -> None:
        """Add a page (e.g. replay) to the central area; switch with :meth:`set_mode`."""
        self._mode_pages[name] = widget
        widget.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Ignored)
        self.modes.addWidget(widget)
        canvas = getattr(widget, "canvas", None)
        if isinstance(canvas, SceneCanvas):
            self._connect_canvas(canvas)
        self._update_actions()

    def set_mode(self, name: str) -> None:
        """Show page ``name``; actions that do not work there are disabled."""
        if name not in self._mode_pages:
            return
        editing = name == "layout"
        if not editing and self.mode_shown == "layout" and self.isVisible():
            # Docks hidden and shown again come back at their minimum size: keep the layout.
            self._layout_state = self.saveState()
        self.mode = name
        for page_name, page in self._mode_pages.items():
            # A stacked widget is as large as its largest page's minimum, hidden or not;
            # hidden pages must not squeeze the docks of the page on screen.
            policy = (
                QSizePolicy.Policy.Preferred if page_name == name else QSizePolicy.Policy.Ignored
            )
            page.setSizePolicy(policy, policy)
        self.modes.setCurrentWidget(self._mode_pages[name])
        self.toolbars["tools"].setVisible(editing)
        for key in ("properties", "goals", "findings"):
            self.docks[key].setVisible(editing)
        if editing and self._layout_state is not None:
            self.restoreState(self._layout_state)
            self._layout_state = None
        self.mode_shown = name
        self.actions_by_id[f"mode.{name}"].setChecked(True)
        self.coords_label.setText("x —  y —")
        self.show_message("")  # the last message was about the other page
        self._show_zoom(self.visible_canvas(), self.visible_canvas().pixels_per_metre())
        self._update_actions()
        if editing:
            self._update_title()
        else:
            self.setWindowTitle(f"{self.modes.currentWidget().windowTitle()} — arena_studio")
        self.visible_canvas().setFocus()
