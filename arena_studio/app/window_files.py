"""The main window's file commands: new, open (scenes here, tapes to the replay mode), save,
save as, export, recent files: :class:`FileCommands`, held by
:class:`~arena_studio.app.main_window.MainWindow` as ``window.files``.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from arena_studio.core.errors import ArenaError
from arena_studio.core.resources import demo_path
from arena_studio.core.scene.model import Scene, load_scene, save_scene

if TYPE_CHECKING:
    from arena_studio.app.editor.export_dialog import ExportDialog
    from arena_studio.app.main_window import MainWindow

MAX_RECENT = 10
DEFAULT_SCENE_NAME = "Untitled scene"
SCENE_SUFFIXES = (".json", ".msgpack", ".mpk")


def is_bundled_demo(path: Path) -> bool:
    """True for the demo scenes shipped with the package (never overwritten by Save)."""
    try:
        return path.resolve().parent == demo_path().resolve()
    except OSError:
        return False


def scene_stem(path: Path) -> str:
    """``my.scene.json`` -> ``my``: the file name without the scene endings."""
    stem = path.name
    for ending in (".json", ".msgpack", ".mpk", ".scene"):
        if stem.lower().endswith(ending):
            stem = stem[: -len(ending)]
    return stem or path.name


class FileCommands:
    """File menu behaviour for one window; every failure is told through the window's
    dialogs and changes nothing. The window owns the document, editor, canvas, dialogs,
    settings and recovery store; this object only acts on them."""

    def __init__(self, window: MainWindow) -> None:
        self.window = window

    def maybe_keep_changes(self) -> bool:
        """True when it is fine to replace the document (saved, discarded or unchanged)."""
        if not self.window.document.dirty:
            return True
        answer = self.window.dialogs.ask_unsaved(self.window.document.display_name)
        if answer == "save":
            return self.save()
        return answer == "discard"

    def new_scene(self) -> None:
        if not self.maybe_keep_changes():
            return
        self.window.recovery.discard()
        self.window.document.reset(Scene(name=DEFAULT_SCENE_NAME), None)
        self.window.editor.set_selection(())
        self.window.set_mode("layout")
        self.window.canvas.fit_scene()

    def open_dialog(self) -> None:
        start = (
            str(self.window.document.path.parent) if self.window.document.path else str(Path.cwd())
        )
        path = self.window.dialogs.open_path(start)
        if path:
            self.open_path(path)

    def open_path(self, path: str | Path) -> bool:
        """Open a scene in the layout editor or a ``.tape`` in the replay mode."""
        p = Path(path)
        if p.is_dir():
            return self.open_sweep(p)
        if p.name.lower().endswith((".tape", ".tape.partial")):  # .partial: still written
            return self.open_tape(p)
        if p.suffix.lower() not in SCENE_SUFFIXES:
            self.window.dialogs.error("Cannot open file", f"{p.name}: not a scene or tape file.")
            return False
        try:
            scene = load_scene(p)
        except ArenaError as exc:
            self.window.dialogs.error(
                "Cannot open scene", f"{exc}\n\nThe current scene was left as it was."
            )
            return False
        if not self.maybe_keep_changes():
            return False
        self.window.recovery.discard()
        self.window.document.reset(scene, p.resolve())
        self.window.editor.set_selection(())
        self.window.set_mode("layout")
        self.window.canvas.fit_scene()
        self.add_recent(p.resolve())
        self.window.show_message(f"Opened {p.name}")
        self.window.sceneOpened.emit(p.resolve())
        return True

    def open_folder_dialog(self) -> None:
        from PySide6.QtWidgets import QFileDialog

        start = (
            str(self.window.document.path.parent) if self.window.document.path else str(Path.cwd())
        )
        folder = QFileDialog.getExistingDirectory(self.window, "Open Folder of Tapes", start)
        if folder:
            self.open_sweep(Path(folder))

    def open_sweep(self, path: Path) -> bool:
        """Hand a folder of tapes to the runs page (``arena_studio.app.runs``)."""
        from arena_studio.app.runs import open_sweep  # lazy: the runs page loads pyqtgraph

        return bool(open_sweep(self.window, path))

    def open_tape(self, path: Path) -> bool:
        """Hand a tape to the replay mode (``arena_studio.app.replay.open_tape(window, path)``)."""
        from arena_studio.app.replay import open_tape  # lazy: the replay page loads pyqtgraph

        ok = bool(open_tape(self.window, path))
        if ok:
            self.add_recent(path.resolve())
            self._editor_shows_tape_scene()
        return ok

    def _editor_shows_tape_scene(self) -> None:
        """An editor that holds nothing yet (the untouched empty scene of a start with a
        tape) gets the tape's own scene, so the Layout Editor never shows an empty scene
        with errors beside a replay. Its file is the tape: saving asks for a new name."""
        doc = self.window.document
        untouched = doc.path is None and not doc.dirty and not doc.undo_stack.count()
        if not untouched or doc.scene != Scene(name=DEFAULT_SCENE_NAME):
            return
        page = getattr(self.window, "replay_page", None)
        session = getattr(page, "session", None)
        scene = getattr(session, "scene", None)
        if isinstance(scene, Scene):
            doc.reset(scene, None)
            self.window.editor.set_selection(())
            self.window.canvas.fit_scene()

    def save(self) -> bool:
        path = self.window.document.path
        if path is None or path.suffix.lower() not in (".json", ".msgpack", ".mpk"):
            return self.save_as()
        if is_bundled_demo(path):  # the demos stay as shipped: the user's copy goes elsewhere
            self.window.show_message(
                "The bundled demo stays as it is: save your copy under a new name."
            )
            return self.save_as()
        return self.save_to(path)

    def save_as(self) -> bool:
        path = self.window.document.path
        folder = path.parent if path and not is_bundled_demo(path) else Path.cwd()
        stem = (
            self.window.document.path.name if self.window.document.path else "untitled.scene.json"
        )
        path = self.window.dialogs.save_path(str(folder / stem))
        if not path:
            return False
        p = Path(path)
        if not p.name.lower().endswith((".json", ".msgpack", ".mpk")):
            p = p.with_name(p.name + ".scene.json")
        if self.window.document.scene.name.strip() in ("", DEFAULT_SCENE_NAME):
            # the file name names the scene: my.scene.json -> "my" (one undoable edit)
            from dataclasses import replace

            named = replace(self.window.document.scene, name=scene_stem(p))
            self.window.document.apply(named, "Name the scene after its file")
        return self.save_to(p)

    def save_to(self, path: Path) -> bool:
        from arena_studio.core.robot.underlay import rebase

        try:  # an underlay image path is kept relative to where the scene file goes
            save_scene(rebase(self.window.document.scene, self.window.document.path, path), path)
        except (OSError, ArenaError) as exc:
            self.window.dialogs.error(
                "Could not save", f"{path}: {exc}\n\nNothing was overwritten."
            )
            return False
        self.window.document.mark_saved(path.resolve())
        self.window.recovery.discard()
        self.window.autosaved_scene = None
        self.add_recent(path.resolve())
        self.window.show_message(f"Saved {path.name}")
        return True

    def export_dialog(self) -> None:
        """File > Export for Simulator…: the command's exports for the scene shown."""
        self.make_export_dialog().exec()

    def make_export_dialog(self) -> ExportDialog:
        """The dialog for the current scene; outputs go next to a saved scene, else home
        (never into the bundled demo folder)."""
        from arena_studio.app.editor.export_dialog import ExportDialog

        path = self.window.document.path
        folder = path.parent if path and not is_bundled_demo(path) else Path.home()
        return ExportDialog(
            self.window,
            self.window.document.scene,
            path,
            folder,
            self.window.theme.hex("error")[:7],
        )

    # -- recent files ------------------------------------------------------------------
    def recent_files(self) -> list[str]:
        value = self.window.settings.value("recent/files", [])
        if isinstance(value, str):
            return [value]
        return [str(v) for v in value] if isinstance(value, list | tuple) else []

    def add_recent(self, path: Path) -> None:
        files = [str(path), *[f for f in self.recent_files() if f != str(path)]][:MAX_RECENT]
        self.window.settings.setValue("recent/files", files)
        self.rebuild_recent_menu()

    def rebuild_recent_menu(self) -> None:
        self.window.recent_menu.clear()
        files = self.recent_files()
        for f in files:
            act = self.window.recent_menu.addAction(Path(f).name)
            act.setToolTip(f)
            act.setStatusTip(f)
            act.triggered.connect(lambda _c=False, f=f: self.open_path(f))
        if not files:
            empty = self.window.recent_menu.addAction("No recent files")
            empty.setEnabled(False)
        else:
            self.window.recent_menu.addSeparator()
            clear = self.window.recent_menu.addAction("Clear List")
            clear.triggered.connect(self._clear_recent)

    def _clear_recent(self) -> None:
        self.window.settings.setValue("recent/files", [])
        self.rebuild_recent_menu()
