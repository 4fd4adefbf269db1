"""The main window's real-robot commands: Import Map, Import Robot Run, the underlay.

A mixin of :class:`~arena_studio.app.main_window.MainWindow`. File questions and the modal
runs go through small methods (``ask_open_file``, ``ask_save_file``, ``run_dialog``,
``ask_underlay_distance``) that tests replace.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication, QDialog, QFileDialog, QInputDialog, QProgressDialog

from arena_studio.app.underlay_view import UnderlayView
from arena_studio.core.errors import ArenaError
from arena_studio.core.scene import Scene
from arena_studio.core.wording import count

MAP_FILTER = "Map descriptions (*.yaml *.yml);;All files (*)"
BAG_FILTER = "ROS 2 bags (metadata.yaml *.mcap *.db3);;All files (*)"


class ImportCancelled(BaseException):
    """Raised from the progress callback; a BaseException so no reader mistakes it for
    damage in the bag and carries on."""


class RobotCommands:
    document: Any
    editor: Any
    canvas: Any
    dialogs: Any
    recovery: Any
    theme: Any
    underlay_view: UnderlayView

    def _init_robot(self) -> None:
        self.underlay_view = UnderlayView(self.canvas, self.document, self.show_message)
        self.editor.tools["tool.calibrate_underlay"].ask = self.ask_underlay_distance

    def robot_handlers(self) -> dict[str, Any]:
        return {
            "file.import_map": self.import_map,
            "file.import_run": self.import_run,
            "view.underlay": self.edit_underlay,
        }

    # -- questions (tests replace these) -------------------------------------------------
    def ask_open_file(self, title: str, filter_text: str) -> str | None:
        path, _ = QFileDialog.getOpenFileName(self, title, str(self._folder()), filter_text)
        return path or None

    def ask_save_file(self, title: str, suggestion: str, filter_text: str) -> str | None:
        path, _ = QFileDialog.getSaveFileName(self, title, suggestion, filter_text)
        return path or None

    def run_dialog(self, dialog: QDialog) -> bool:
        return dialog.exec() == QDialog.DialogCode.Accepted

    def ask_underlay_distance(self, measured: float) -> float | None:
        value, ok = QInputDialog.getDouble(
            self,
            "Calibrate underlay",
            f"The two points are {measured:.3f} m apart as drawn.\nTheir true distance (m):",
            measured,
            1e-6,
            1e6,
            3,
        )
        return value if ok else None

    def _folder(self) -> Path:
        path = self.document.path
        return path.parent if path is not None else Path.cwd()

    # -- File > Import Map -----------------------------------------------------------------
    def import_map(self, path: str | Path | None = None) -> bool:
        from arena_studio.app.map_import_dialog import MapImportDialog
        from arena_studio.core.robot.map_yaml import read_map

        chosen = path or self.ask_open_file("Import map", MAP_FILTER)
        if not chosen:
            return False
        try:
            omap = read_map(chosen)
        except ArenaError as exc:
            self.dialogs.error("Cannot import map", f"{exc}\n\nNothing was changed.")
            return False
        dialog = MapImportDialog(omap, Path(chosen), self.theme, self)
        self.last_map_dialog = dialog
        if not self.run_dialog(dialog):
            return False
        return self.adopt_scene(dialog.scene(), f"Imported {Path(chosen).name}")

    def adopt_scene(self, scene: Scene, message: str) -> bool:
        """A new unsaved document (after asking about unsaved changes)."""
        if not self.maybe_keep_changes():
            return False
        self.recovery.discard()
        self.document.reset(scene, None, dirty=True)
        self.editor.set_selection(())
        self.set_mode("layout")
        self.canvas.fit_scene()
        self.show_message(f"{message}: place landmarks and start poses, then save.")
        return True

    # -- View > Underlay -------------------------------------------------------------------
    def edit_underlay(self) -> bool:
        from arena_studio.app.underlay_dialog import UnderlayDialog

        scene = self.document.scene
        dialog = UnderlayDialog(scene.underlay, self.document.path, self)
        self.last_underlay_dialog = dialog
        if not self.run_dialog(dialog):
            return False
        new = dialog.result_underlay()
        if new == scene.underlay:
            return False
        text = "Remove underlay" if new is None else "Set underlay"
        self.document.apply(scene.with_changes(underlay=new), text)
        return True

    # -- File > Import Robot Run -----------------------------------------------------------
    def import_run(self, path: str | Path | None = None) -> bool:
        from arena_studio.app.run_import_dialog import RunImportDialog
        from arena_studio.core.robot.bag_read import bag_topics, find_bags, list_sources

        chosen = path or self.ask_open_file("Import robot run", BAG_FILTER)
        if not chosen:
            return False
        p = Path(chosen)
        if p.name == "metadata.yaml" or (
            p.suffix in (".mcap", ".db3") and (p.parent / "metadata.yaml").is_file()
        ):
            p = p.parent
        scene = self.document.scene
        if not scene.agents:
            self.dialogs.error("Cannot import run", "The scene has no agents to give poses to.")
            return False
        try:
            bags = find_bags(p)
            sources = list_sources(bags)
            topics = [t for t, _ in bag_topics(bags)]
        except (ArenaError, ImportError) as exc:
            self.dialogs.error("Cannot read the run", f"{exc}\n\nNothing was changed.")
            return False
        dialog = RunImportDialog(scene, bags, sources, topics, self)
        self.last_run_dialog = dialog
        if not self.run_dialog(dialog):
            return False
        out = self.ask_save_file(
            "Save the run as a tape", str(p.with_suffix(".tape")), "Tapes (*.tape)"
        )
        if not out:
            return False
        return self._write_run(bags, scene, Path(out), dialog)

    def _write_run(self, bags: list[Path], scene: Scene, out: Path, dialog: Any) -> bool:
        from arena_studio.core.robot.bag_read import count_messages
        from arena_studio.core.robot.bags import import_bags

        progress = QProgressDialog("Reading the bags…", "Cancel", 0, 0, self)
        progress.setWindowTitle("Import Robot Run")
        progress.setWindowModality(Qt.WindowModality.WindowModal)
        progress.setMinimumDuration(500)
        progress.setMaximum(max(count_messages(bags), 1))
        done = [0]

        def advance(n: int) -> None:
            done[0] += n
            if done[0] % 200 == 0:
                progress.setValue(min(done[0], progress.maximum()))
                QApplication.processEvents()
                if progress.wasCanceled():
                    raise ImportCancelled

        QApplication.setOverrideCursor(Qt.CursorShape.WaitCursor)
        try:
            report = import_bags(bags, scene, out, dialog.options(), advance=advance)
        except ImportCancelled:
            self.show_message("Import cancelled; no tape was written.")
            return False
        except ArenaError as exc:
            self.dialogs.error("Import failed", f"{exc}\n\nNo tape was written.")
            return False
        finally:
            QApplication.restoreOverrideCursor()
            progress.close()
        skipped = [u for u in report.topics.values() if u.skipped]
        lines = [
            f"{count(len(report.episodes), 'episode')} from {count(report.bags, 'bag')} "
            f"into {out.name}."
        ]
        lines += [f"{u.topic}: {u.skipped} of {u.messages} skipped ({u.note})" for u in skipped]
        lines += list(dict.fromkeys(report.warnings))[:8]
        self.last_run_report = report
        self.show_message(lines[0])
        if len(lines) > 1:
            self.dialogs.info("Robot run imported", "\n".join(lines))
        return bool(self.open_tape(out))


__all__ = ["RobotCommands"]
