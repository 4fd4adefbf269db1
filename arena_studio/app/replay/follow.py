"""Following a tape in the replay while a trainer writes it: polling and the "recording" strip.

A ``*.tape.partial`` (or a tape whose ``.partial`` is all there is) opens as a
:class:`~arena_studio.core.tape.follow.GrowingTape`. A timer polls it (no file watching:
network and container file systems often send no events); newly finished episodes are
appended to the list and summarised like the others. A strip above the canvas says that
the tape is being recorded, how many episodes are finished and how far the current one
got, and turns quiet when the writer closes the tape.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from PySide6.QtCore import QObject, Qt, QTimer, Signal
from PySide6.QtWidgets import QLabel, QWidget

from arena_studio.core.tape.follow import GrowingTape, final_path, follow_tape
from arena_studio.core.tape.writer import partial_path
from arena_studio.render.theme import Theme

#: how often a growing tape is read again
POLL_MS = 1000


def is_growing(path: str | Path) -> bool:
    """True for a ``.partial`` file, or a tape name whose ``.partial`` exists on its own."""
    p = Path(path)
    if p.name.endswith(".partial"):
        return True
    return not p.exists() and partial_path(p).exists()


def open_growing(path: str | Path) -> GrowingTape:
    """The growing tape with the episodes finished so far already listed."""
    tape = follow_tape(path)
    tape.poll()
    return tape


class TapeFollowing(QObject):
    """Polls a growing tape on a timer; reports new episodes and state changes."""

    episodesAdded = Signal(object)  # list[int]
    stateChanged = Signal()

    def __init__(self, tape: GrowingTape, interval_ms: int = POLL_MS, parent: Any = None):
        super().__init__(parent)
        self.tape = tape
        self.timer = QTimer(self)
        self.timer.setInterval(interval_ms)
        self.timer.timeout.connect(self.tick)
        if tape.recording:
            self.timer.start()

    def tick(self) -> list[int]:
        """Read what the writer added (never raises); returns the new episode indices."""
        steps = self.tape.open_steps
        new = self.tape.poll()
        if new:
            self.episodesAdded.emit(new)
        if new or steps != self.tape.open_steps or not self.tape.recording:
            self.stateChanged.emit()
        if not self.tape.recording:
            self.timer.stop()
        return new

    def stop(self) -> None:
        self.timer.stop()


def recording_text(tape: GrowingTape) -> tuple[str, str]:
    """(state, text): state is ``recording``, ``finished`` or ``stopped``."""
    n = len(tape)
    done = f"{n} episode{'s' if n != 1 else ''} finished"
    if tape.recording:
        now = f"; episode {n} at step {tape.open_steps}" if tape.open_steps else ""
        return "recording", f"● Recording {final_path(tape.path).name}: {done}{now}"
    if tape.finished:
        return "finished", f"Recording finished: {done}."
    return "stopped", f"Stopped following: {tape.problem}"


class RecordingLine(QLabel):
    """The strip above the canvas while a growing tape is open (hidden otherwise)."""

    def __init__(self, theme: Theme, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.theme = theme
        self.state = "none"
        self.setObjectName("recordingLine")
        self.setTextFormat(Qt.TextFormat.PlainText)
        self.setContentsMargins(10, 3, 10, 3)
        self.setVisible(False)

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self._apply_style()

    def show_tape(self, tape: GrowingTape | None) -> None:
        if tape is None:
            self.state = "none"
            self.setVisible(False)
            return
        self.state, text = recording_text(tape)
        self.setText(text)
        self._apply_style()
        self.setVisible(True)

    def _apply_style(self) -> None:
        t = self.theme
        role = {"recording": "error", "stopped": "warning"}.get(self.state, "info")
        self.setStyleSheet(
            f"QLabel {{ background: {t.hex('room_fill')[:7]}; color: {t.hex('text')[:7]};"
            f" border-left: 5px solid {t.hex(role)[:7]};"
            f" border-bottom: 1px solid {t.hex('grid_major')[:7]}; padding: 2px 6px;"
            f" font-weight: {'bold' if self.state == 'recording' else 'normal'}; }}"
        )
