"""The main window: layout editor page, panels, menus and toolbars built from the action table.

``open_path`` dispatches by file type: scenes open in the layout editor; ``.tape`` files go
to the replay mode (``arena_studio.app.replay``, loaded lazily through :meth:`open_tape`).
Other modes add a page with :meth:`add_mode`.
"""

from __future__ import annotations

import contextlib
import sys
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

from PySide6.QtCore import QByteArray, QSettings, QStandardPaths, Qt, QTimer, Signal
from PySide6.QtGui import (
    QAction,
    QActionGroup,
    QCloseEvent,
    QDragEnterEvent,
    QDropEvent,
    QShowEvent,
)
from PySide6.QtWidgets import (
    QApplication,
    QDockWidget,
    QFrame,
    QLabel,
    QMainWindow,
    QMenu,
    QScrollArea,
    QStackedWidget,
    QToolBar,
    QWidget,
)

from arena_studio.app.actions import ACTIONS, MENUS, ActionSpec, key_sequences
from arena_studio.app.appearance import apply_theme
from arena_studio.app.canvas import SceneCanvas
from arena_studio.app.dialogs import Dialogs
from arena_studio.app.editor.checking import CheckRunner
from arena_studio.app.editor.document import SceneDocument
from arena_studio.app.editor.editor_canvas import EditorCanvas
from arena_studio.app.editor.editor_view import Editor
from arena_studio.app.editor.findings_panel import FindingsPanel
from arena_studio.app.editor.goals_panel import GoalsPanel
from arena_studio.app.editor.properties_panel import PropertiesPanel
from arena_studio.app.editor.recovery import RecoveryStore
from arena_studio.app.icons import themed_icon
from arena_studio.app.window_files import FileCommands
from arena_studio.app.window_modes import ModePages
from arena_studio.app.window_robot import RobotCommands
from arena_studio.core.errors import ArenaError
from arena_studio.core.resources import DEFAULT_DEMO_SCENE, demo_path
from arena_studio.core.scene.model import Scene
from arena_studio.editing import edits as edits
from arena_studio.render.theme import THEMES, Theme, load_theme

if TYPE_CHECKING:
    from arena_studio.app.editor.export_dialog import ExportDialog

AUTOSAVE_MS = 30_000


def default_recovery_dir() -> Path:
    base = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.AppDataLocation)
    return Path(base or Path.home() / ".arena_studio") / "recovery"


class MainWindow(RobotCommands, QMainWindow):
    """The window: owns the document, editor, canvas, panels and actions; file commands
    live in ``self.files`` (:class:`FileCommands`), the pages in ``self.pages``
    (:class:`ModePages`)."""

    sceneOpened = Signal(object)  # Path of a scene file just opened in the layout editor

    def __init__(
        self,
        settings: QSettings | None = None,
        recovery_dir: Path | None = None,
        dialogs: Dialogs | None = None,
        theme: str | None = None,
    ) -> None:
        super().__init__()
        self.setObjectName("arena_studio_main")
        self.settings = settings if settings is not None else QSettings()
        self.dialogs = dialogs if dialogs is not None else Dialogs(self)
        self.recovery = RecoveryStore(recovery_dir or default_recovery_dir())
        name = theme or str(self.settings.value("prefs/theme", "light"))
        self.theme: Theme = load_theme(name if name in THEMES else "light")

        self.document = SceneDocument(Scene(name="Untitled scene"))
        self.document.setParent(self)
        self.editor = Editor(self.document)
        self.editor.setParent(self)
        self.canvas = EditorCanvas(self.theme, self.editor)
        self.modes = QStackedWidget()
        self.modes.addWidget(self.canvas)
        self.mode = "layout"
        self.pages = ModePages(self)
        self.files = FileCommands(self)
        self.setCentralWidget(self.modes)
        self.setAcceptDrops(True)

        self.checks = CheckRunner()
        self.checks.setParent(self)
        self.findings: list[object] = []
        self._build_panels()
        self.actions_by_id: dict[str, QAction] = {}
        self._conditions: dict[str, Callable[[], bool]] = {
            "can_undo": self.document.undo_stack.canUndo,
            "can_redo": self.document.undo_stack.canRedo,
            "has_selection": lambda: bool(self.editor.selection() or self.editor.active_vertex),
            "is_dirty_or_unnamed": lambda: self.document.dirty or self.document.path is None,
            "has_replay": lambda: self.pages.has("replay"),
            "has_runs": lambda: self.pages.has("runs"),
        }
        self._build_actions()
        self._build_status_bar()
        self._connect()
        self._init_robot()

        self._autosave = QTimer(self)
        self._autosave.setInterval(AUTOSAVE_MS)
        self._autosave.timeout.connect(self.autosave_now)
        self._autosave.start()
        self.autosaved_scene: Scene | None = None

        from arena_studio.app.window_size import place_on_screen

        place_on_screen(self)  # fits the screen's free area; saved geometry wins below
        self._restore_settings()
        self.apply_theme(self.theme.name)
        self._on_document_changed()

    # -- construction ------------------------------------------------------------------
    def _build_panels(self) -> None:
        self.properties = PropertiesPanel(self.editor)
        self.goals_panel = GoalsPanel(self.editor)
        self.findings_panel = FindingsPanel(self.theme)
        self.docks: dict[str, QDockWidget] = {}
        goals_scroll = QScrollArea()  # a short window scrolls the panel instead of clipping it
        goals_scroll.setWidgetResizable(True)
        goals_scroll.setFrameShape(QFrame.Shape.NoFrame)
        goals_scroll.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        goals_scroll.setWidget(self.goals_panel)
        right, bottom = (
            Qt.DockWidgetArea.RightDockWidgetArea,
            Qt.DockWidgetArea.BottomDockWidgetArea,
        )
        # Findings are one-line messages: a wide, low strip under the canvas suits them and
        # leaves the right column's full height to Properties and Goals.
        for key, title, widget, area in (
            ("properties", "Properties", self.properties, right),
            ("goals", "Goals", goals_scroll, right),
            ("findings", "Findings", self.findings_panel, bottom),
        ):
            dock = QDockWidget(title, self)
            dock.setObjectName(f"dock_{key}")
            dock.setWidget(widget)
            dock.setFeatures(
                QDockWidget.DockWidgetFeature.DockWidgetMovable
                | QDockWidget.DockWidgetFeature.DockWidgetFloatable
                | QDockWidget.DockWidgetFeature.DockWidgetClosable
            )
            self.addDockWidget(area, dock)
            self.docks[key] = dock
        self.setCorner(Qt.Corner.BottomRightCorner, right)
        self.tabifyDockWidget(self.docks["properties"], self.docks["goals"])
        self.docks["properties"].raise_()
        self._docks_sized = False  # sized on first show (sizes set earlier are lost)

    def _build_actions(self) -> None:
        menus = {name: self.menuBar().addMenu(f"&{name}") for name in MENUS}
        self.toolbars = {
            "file": QToolBar("File and view"),
            "modes": QToolBar("Layout editor or replay"),
            "tools": QToolBar("Drawing tools"),
        }
        for key, bar in self.toolbars.items():
            bar.setObjectName(key)
        self.addToolBar(Qt.ToolBarArea.TopToolBarArea, self.toolbars["file"])
        self.addToolBar(Qt.ToolBarArea.TopToolBarArea, self.toolbars["modes"])
        self.toolbars["modes"].setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextOnly)
        self.addToolBar(Qt.ToolBarArea.LeftToolBarArea, self.toolbars["tools"])
        for tb in self.toolbars.values():
            tb.setMovable(False)
            tb.setIconSize(tb.iconSize().scaled(22, 22, Qt.AspectRatioMode.KeepAspectRatio))
        tool_group = QActionGroup(self)
        tool_group.setExclusive(True)
        mode_group = QActionGroup(self)
        mode_group.setExclusive(True)
        previous_menu = ""
        for spec in ACTIONS:
            act = QAction(spec.title.replace("&", "") if not spec.menu else spec.title, self)
            act.setObjectName(spec.id)
            keys = key_sequences(spec)
            if keys:
                act.setShortcuts(keys)
                act.setShortcutContext(Qt.ShortcutContext.WindowShortcut)
            act.setCheckable(spec.checkable)
            tip = spec.tip or spec.title.replace("&", "").replace("…", "")
            first = act.shortcut().toString()
            act.setToolTip(f"{tip} ({first})" if first else tip)
            act.setStatusTip(tip)
            if spec.id.startswith("tool."):
                tool_group.addAction(act)
                act.triggered.connect(lambda _c=False, s=spec: self.editor.set_tool(s.id))
            elif spec.id.startswith("mode."):
                mode_group.addAction(act)
                act.setText(spec.title)
                act.triggered.connect(lambda _c=False, s=spec: self.set_mode(s.id[5:]))
            else:
                act.triggered.connect(self._handler(spec))
            if spec.menu:
                menu = menus[spec.menu]
                if spec.menu == previous_menu and spec.id in (
                    "file.import_map",
                    "file.quit",
                    "edit.delete",
                    "edit.snap",
                    "view.dark",
                    "mode.layout",
                    "tool.goal_pick",
                ):
                    menu.addSeparator()
                menu.addAction(act)
                if spec.id == "file.open":
                    self.recent_menu = QMenu("Open &Recent", self)
                    menu.addMenu(self.recent_menu)
                previous_menu = spec.menu
            if spec.toolbar:
                self.toolbars[spec.toolbar].addAction(act)
                if spec.id in ("file.save", "edit.redo", "edit.snap"):
                    self.toolbars[spec.toolbar].addSeparator()
            self.actions_by_id[spec.id] = act
            self.addAction(act)
        self.actions_by_id["tool.select"].setChecked(True)
        self.actions_by_id["edit.snap"].setChecked(True)
        self.actions_by_id["mode.layout"].setChecked(True)
        view = menus["View"]
        view.addSeparator()
        for dock in self.docks.values():
            view.addAction(dock.toggleViewAction())
        self.files.rebuild_recent_menu()

    def _handler(self, spec: ActionSpec) -> Callable[[], None]:
        table: dict[str, Callable[[], object]] = {
            "file.new": self.files.new_scene,
            "file.open": self.files.open_dialog,
            "file.open_folder": self.files.open_folder_dialog,
            "file.save": self.files.save,
            "file.save_as": self.files.save_as,
            "file.export": self.files.export_dialog,
            "file.quit": self.close,
            "edit.undo": self.document.undo_stack.undo,
            "edit.redo": self.document.undo_stack.redo,
            "edit.delete": self.editor.delete_selection,
            "edit.select_all": self.editor.select_all,
            "edit.snap": self._toggle_snap,
            "view.zoom_in": lambda: self.visible_canvas().zoom_in(),
            "view.zoom_out": lambda: self.visible_canvas().zoom_out(),
            "view.fit": self.pages.fit_visible,
            "view.reset_layout": self.reset_layout,
            "view.dark": lambda: self.apply_theme(
                "dark" if self.actions_by_id["view.dark"].isChecked() else "light"
            ),
            **self.robot_handlers(),
        }
        fn = table[spec.id]
        return lambda *_: (fn(), None)[1]

    def _build_status_bar(self) -> None:
        bar = self.statusBar()
        self.message_label = QLabel("")
        self.coords_label = QLabel("x —  y —")
        self.zoom_label = QLabel("")
        self.coords_label.setMinimumWidth(170)
        bar.addWidget(self.message_label, 1)
        bar.addPermanentWidget(self.zoom_label)
        bar.addPermanentWidget(self.coords_label)
        from arena_studio.render.paint_guard import set_reporter

        set_reporter(self._drawing_problem)  # a part that cannot be drawn: said here, once

    def _drawing_problem(self, message: str) -> None:
        """Show a paint failure after the paint event (never from inside it); stderr too,
        for runs nobody watches (screenshots)."""
        print(f"arena-studio: warning: {message}", file=sys.stderr)

        def show() -> None:
            with contextlib.suppress(RuntimeError):  # the window may be gone by then
                self.show_message(f"Drawing problem: {message}")

        QTimer.singleShot(0, show)

    def _connect(self) -> None:
        doc = self.document
        doc.changed.connect(self._on_document_changed)
        doc.pathChanged.connect(self.update_title)
        doc.undo_stack.cleanChanged.connect(self.update_title)
        doc.undo_stack.indexChanged.connect(self.update_actions)
        self.editor.selectionChanged.connect(self.update_actions)
        self.editor.statusMessage.connect(self.show_message)
        self.editor.toolChanged.connect(lambda name: self.actions_by_id[name].setChecked(True))
        self.connect_canvas(self.canvas)
        self.checks.results.connect(self._on_check_results)
        self.checks.plansReady.connect(self._on_plans)
        self.findings_panel.activated.connect(self.focus_finding)
        self.goals_panel.highlight.connect(self._highlight_goal)

    # -- document ----------------------------------------------------------------------
    def _on_document_changed(self) -> None:
        self.checks.schedule(self.document.scene)
        self.update_title()
        self.update_actions()

    def update_title(self, *_args: object) -> None:
        mark = " •" if self.document.dirty else ""
        if self.mode == "layout":  # another page shows its own title
            self.setWindowTitle(f"{self.document.display_name}{mark} — arena_studio")
        self.update_actions()

    def connect_canvas(self, canvas: SceneCanvas) -> None:
        """Status bar readouts for a canvas (the editor's, or a mode page's)."""
        canvas.cursorMoved.connect(
            lambda x, y: self.coords_label.setText(f"x {x:8.2f} m   y {y:8.2f} m")
        )
        canvas.cursorLeft.connect(lambda: self.coords_label.setText("x —  y —"))
        canvas.zoomChanged.connect(lambda ppm, c=canvas: self.pages.show_zoom(c, ppm))

    def update_actions(self, *_args: object) -> None:
        for spec in ACTIONS:
            works_here = not spec.modes or self.mode in spec.modes
            condition = self._conditions[spec.enabled]() if spec.enabled else True
            self.actions_by_id[spec.id].setEnabled(works_here and condition)
        stack = self.document.undo_stack
        self.actions_by_id["edit.undo"].setText(
            f"&Undo {stack.undoText()}".rstrip() if stack.canUndo() else "&Undo"
        )
        self.actions_by_id["edit.redo"].setText(
            f"&Redo {stack.redoText()}".rstrip() if stack.canRedo() else "&Redo"
        )

    def _on_check_results(self, scene: Scene, findings: object, error: object) -> None:
        if scene != self.document.scene:
            return
        self.findings = list(findings or [])  # type: ignore[call-overload]
        self.canvas.layer.findings = self.findings
        self.canvas.viewport().update()
        self.findings_panel.set_findings(self.findings, error)  # type: ignore[arg-type]
        self.goals_panel.set_findings(self.findings)
        n_err = sum(1 for f in self.findings if getattr(f, "severity", "") == "error")
        title = "Findings" if not self.findings else f"Findings ({len(self.findings)})"
        self.docks["findings"].setWindowTitle(title + (" — errors" if n_err else ""))

    def _on_plans(self, scene: Scene, plans: object) -> None:
        if scene == self.document.scene:
            self.goals_panel.set_plans(plans)  # type: ignore[arg-type]

    def run_checks_now(self) -> None:
        self.checks.run_now(self.document.scene)

    def focus_finding(self, finding: object) -> None:
        oid = getattr(finding, "object_id", None)
        if oid:
            for key in edits.keys_of(self.document.scene):
                if key[1] == oid:
                    self.editor.set_selection([key])
                    break
        point = getattr(finding, "point", None)
        if point is not None:
            self.canvas.centre_on(point)
        self.canvas.refresh()

    def _highlight_goal(self, targets: tuple[int, ...]) -> None:
        self.canvas.layer.highlight = targets
        self.canvas.viewport().update()

    def show_message(self, text: str) -> None:
        self.message_label.setText(text)

    def _toggle_snap(self) -> None:
        on = self.actions_by_id["edit.snap"].isChecked()
        from dataclasses import replace

        self.editor.snap_settings = replace(self.editor.snap_settings, enabled=on)
        self.settings.setValue("prefs/snap", on)
        self.show_message("Snapping on (hold Ctrl to bypass)" if on else "Snapping off")

    # -- never lose work ---------------------------------------------------------------
    def autosave_now(self) -> bool:
        """Write a recovery copy when there are unsaved changes not yet copied."""
        scene = self.document.scene
        if not self.document.dirty or scene == self.autosaved_scene:
            return False
        try:
            self.recovery.save(scene, self.document.path)
        except (OSError, ArenaError) as exc:
            self.show_message(f"Recovery copy could not be written: {exc}")
            return False
        self.autosaved_scene = scene
        return True

    def offer_recovery(self) -> bool:
        """After a crash: offer the newest recovery copy; True when one was restored."""
        copies = self.recovery.orphans()
        if not copies:
            return False
        newest, older = copies[0], copies[1:]
        restored = False
        if self.dialogs.ask_restore(newest):
            try:
                scene = self.recovery.load(newest)
            except ArenaError as exc:
                self.dialogs.error("Recovery copy unreadable", str(exc))
            else:
                self.document.reset(scene, newest.original, dirty=True)
                self.canvas.fit_scene()
                restored = True
                self.autosave_now()
        for copy in (newest, *older):
            self.recovery.remove(copy)
        if self.isVisible():  # keys go back to this window (window-wide shortcuts need it)
            self.activateWindow()
        return restored

    # -- theme and settings ------------------------------------------------------------
    def apply_theme(self, name: str) -> None:
        self.theme = load_theme(name)
        app = QApplication.instance()
        if isinstance(app, QApplication):
            apply_theme(app, self.theme)
        self.canvas.set_theme(self.theme)
        self.underlay_view.set_theme(self.theme)
        self.findings_panel.set_theme(self.theme)
        self.actions_by_id["view.dark"].setChecked(name == "dark")
        for spec in ACTIONS:
            if spec.icon:
                self.actions_by_id[spec.id].setIcon(
                    themed_icon(
                        spec.icon, self.theme.hex("text")[:7], self.theme.hex("text_muted")[:7]
                    )
                )
        self.settings.setValue("prefs/theme", name)

    def _restore_settings(self) -> None:
        geometry = self.settings.value("window/geometry")
        if isinstance(geometry, QByteArray | bytes):
            self.restoreGeometry(QByteArray(geometry))
        state = self.settings.value("window/state")
        if isinstance(state, QByteArray | bytes):
            self._docks_sized = self.restoreState(QByteArray(state))  # the user's sizes
        # Places and sizes come back; hidden bars and panels never do: a run that ended
        # with them hidden (a crash, a test) must not leave the next window without them.
        self._show_all_panels()
        snap = self.settings.value("prefs/snap", True)
        on = snap not in (False, "false", "0", 0)
        self.actions_by_id["edit.snap"].setChecked(on)
        from dataclasses import replace

        self.editor.snap_settings = replace(self.editor.snap_settings, enabled=on)

    def _show_all_panels(self) -> None:
        for key, bar in self.toolbars.items():
            bar.setVisible(key != "tools" or self.mode == "layout")
        for dock in self.docks.values():
            dock.setVisible(self.mode == "layout")

    def reset_layout(self) -> None:
        """View > Reset Layout: every bar and panel shown, docked where a first start puts
        them (Properties and Goals tabbed on the right, Findings below), first sizes."""
        right, bottom = (
            Qt.DockWidgetArea.RightDockWidgetArea,
            Qt.DockWidgetArea.BottomDockWidgetArea,
        )
        for key, area in (("properties", right), ("goals", right), ("findings", bottom)):
            dock = self.docks[key]
            dock.setFloating(False)
            self.addDockWidget(area, dock)
        self.tabifyDockWidget(self.docks["properties"], self.docks["goals"])
        self.pages.layout_state = None
        self._show_all_panels()
        self.docks["properties"].raise_()
        self._size_docks()
        self.show_message("Layout reset: every tool bar and panel is shown.")

    def save_settings(self) -> None:
        self.settings.setValue("window/geometry", self.saveGeometry())
        # In another mode the editor's docks are hidden: keep the layout they had.
        state = self.pages.layout_state if self.pages.layout_state is not None else self.saveState()
        self.settings.setValue("window/state", state)
        self.settings.sync()

    # -- Qt events ---------------------------------------------------------------------
    def showEvent(self, event: QShowEvent) -> None:
        super().showEvent(event)
        if not self._docks_sized:
            self._docks_sized = True
            self._size_docks()  # in the first frame already (the window paints, then loads)
            QTimer.singleShot(0, self._size_docks)  # again once the layout has settled

    def _size_docks(self) -> None:
        """Right column about 30 % of the width (320-440 px), findings strip about 150 px."""
        width = min(max(int(self.width() * 0.3), 320), 440)
        self.resizeDocks([self.docks["properties"]], [width], Qt.Orientation.Horizontal)
        self.resizeDocks([self.docks["findings"]], [150], Qt.Orientation.Vertical)

    def closeEvent(self, event: QCloseEvent) -> None:
        if not self.maybe_keep_changes():
            event.ignore()
            return
        self.save_settings()
        self.recovery.discard()
        self._autosave.stop()
        self.checks.shutdown()
        for name, page in self.pages.pages().items():
            if name != "layout":
                page.close()  # other modes stop their background work (e.g. tape loading)
        event.accept()

    def dragEnterEvent(self, event: QDragEnterEvent) -> None:
        urls = event.mimeData().urls()
        if urls and urls[0].isLocalFile():
            event.acceptProposedAction()

    def dropEvent(self, event: QDropEvent) -> None:
        urls = event.mimeData().urls()
        if urls and urls[0].isLocalFile():
            event.acceptProposedAction()
            self.open_path(urls[0].toLocalFile())

    def open_demo(self) -> bool:
        return self.open_path(demo_path(DEFAULT_DEMO_SCENE))

    # -- the window's interface to modes and file commands (used by the pages) ---------
    def open_path(self, path: str | Path) -> bool:
        return self.files.open_path(path)

    def open_tape(self, path: Path) -> bool:
        return self.files.open_tape(path)

    def maybe_keep_changes(self) -> bool:
        return self.files.maybe_keep_changes()

    def new_scene(self) -> None:
        self.files.new_scene()

    def save(self) -> bool:
        return self.files.save()

    def save_as(self) -> bool:
        return self.files.save_as()

    def save_to(self, path: Path) -> bool:
        return self.files.save_to(path)

    def recent_files(self) -> list[str]:
        return self.files.recent_files()

    def make_export_dialog(self) -> ExportDialog:
        return self.files.make_export_dialog()

    def set_mode(self, name: str) -> None:
        self.pages.set_mode(name)

    def add_mode(self, name: str, widget: QWidget) -> None:
        self.pages.add_mode(name, widget)

    def visible_canvas(self) -> SceneCanvas:
        return self.pages.visible_canvas()

    def fit_visible(self) -> None:
        self.pages.fit_visible()
