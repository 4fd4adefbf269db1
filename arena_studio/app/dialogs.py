"""Every question the window asks the user, in one replaceable object (tests answer them)."""

from __future__ import annotations

import time

from PySide6.QtWidgets import QFileDialog, QMessageBox, QWidget

from .recovery import RecoveryCopy

SCENE_FILTER = (
    "Scenes (*.scene.json *.scene.msgpack *.json *.msgpack);;Tapes (*.tape);;All files (*)"
)


class Dialogs:
    def __init__(self, parent: QWidget) -> None:
        self.parent = parent

    def error(self, title: str, text: str) -> None:
        QMessageBox.warning(self.parent, title, text)

    def info(self, title: str, text: str) -> None:
        QMessageBox.information(self.parent, title, text)

    def ask_unsaved(self, name: str) -> str:
        """``"save"``, ``"discard"`` or ``"cancel"``."""
        box = QMessageBox(self.parent)
        box.setIcon(QMessageBox.Icon.Question)
        box.setWindowTitle("Unsaved changes")
        box.setText(f"“{name}” has changes that are not saved.")
        box.setInformativeText("Save them before closing?")
        box.setStandardButtons(
            QMessageBox.StandardButton.Save
            | QMessageBox.StandardButton.Discard
            | QMessageBox.StandardButton.Cancel
        )
        box.setDefaultButton(QMessageBox.StandardButton.Save)
        answer = box.exec()
        if answer == QMessageBox.StandardButton.Save:
            return "save"
        if answer == QMessageBox.StandardButton.Discard:
            return "discard"
        return "cancel"

    def ask_restore(self, copy: RecoveryCopy) -> bool:
        when = time.strftime("%Y-%m-%d %H:%M", time.localtime(copy.saved_at))
        origin = str(copy.original) if copy.original else "a scene that was never saved"
        answer = QMessageBox.question(
            self.parent,
            "Restore unsaved work?",
            f"arena_studio did not close cleanly last time. A recovery copy of "
            f"“{copy.name}” ({origin}) from {when} is available.\n\nRestore it? "
            "If you choose No, the copy is deleted.",
        )
        return answer == QMessageBox.StandardButton.Yes

    def open_path(self, start: str) -> str | None:
        path, _ = QFileDialog.getOpenFileName(self.parent, "Open", start, SCENE_FILTER)
        return path or None

    def save_path(self, suggestion: str) -> str | None:
        path, _ = QFileDialog.getSaveFileName(
            self.parent, "Save scene as", suggestion, "Scenes (*.scene.json *.scene.msgpack)"
        )
        return path or None
