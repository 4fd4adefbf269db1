"""Every question the window asks the user, in one replaceable object (tests answer them).

:class:`QuietDialogs` is the stand-in for runs nobody watches (``--screenshot``, an offscreen
platform): it never opens a modal box, it writes each error as one line on stderr.
"""

from __future__ import annotations

import sys
import time
from typing import TextIO, cast

from PySide6.QtWidgets import QFileDialog, QMessageBox, QWidget

from arena_studio.app.editor.recovery import RecoveryCopy

SCENE_FILTER = (
    "Scenes (*.scene.json *.scene.msgpack *.json *.msgpack);;"
    "Tapes (*.tape *.tape.partial);;All files (*)"
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


def one_line(text: str) -> str:
    """The first paragraph of a message, on one line (the rest only says nothing changed)."""
    first = text.strip().split("\n\n", 1)[0]
    return " ".join(first.split())


class QuietDialogs:
    """Answers without asking: errors go to stderr, unsaved work is left alone, no restore.

    ``errors`` keeps every line so the launcher can exit 2 after a failed open.
    """

    def __init__(self, stream: object = None) -> None:
        self.stream = stream
        self.errors: list[str] = []

    def _say(self, text: str) -> None:
        line = one_line(text)
        self.errors.append(line)
        stream = cast("TextIO", self.stream or sys.stderr)
        print(f"arena-studio: {line}", file=stream)

    def error(self, title: str, text: str) -> None:
        self._say(text)

    def info(self, title: str, text: str) -> None:
        self._say(text)

    def ask_unsaved(self, name: str) -> str:
        return "cancel"  # nothing the user made is dropped by a run nobody watches

    def ask_restore(self, copy: RecoveryCopy) -> bool:
        return False

    def open_path(self, start: str) -> str | None:
        return None

    def save_path(self, suggestion: str) -> str | None:
        return None
