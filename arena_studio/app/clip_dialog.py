"""The "Export clip" dialog: a clip (.mp4, .gif, PNG folder) or a still (.png, .svg) of a tape.

It only gathers options and calls :func:`arena_studio.render.clip.export_clip` or the still
writers; frames are the same as the command line's. Export runs on the UI thread with events
processed between frames, so the progress bar moves and Cancel stops at the next frame
(leaving nothing written, as export_clip promises).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QApplication,
    QCheckBox,
    QComboBox,
    QDialog,
    QDoubleSpinBox,
    QFileDialog,
    QFormLayout,
    QGroupBox,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QMessageBox,
    QProgressBar,
    QPushButton,
    QSpinBox,
    QVBoxLayout,
    QWidget,
)

from arena_studio.core import limits
from arena_studio.render.clip import SIZE_PRESETS, ClipCancelled, ClipError, ClipSpec, export_clip
from arena_studio.render.episode_painter import FrameOptions
from arena_studio.render.theme import load_theme

KINDS = (
    ("MP4 video (H.264)", ".mp4"),
    ("GIF animation", ".gif"),
    ("Folder of PNG frames", ""),
    ("PNG still (this moment)", ".png"),
    ("SVG still (this moment)", ".svg"),
)
EPISODE_MODES = ("This episode", "Episodes in sequence", "Compare side by side")
HINT = "Choose where to save, then Export."


def default_folder(tape_path: Path | None) -> Path:
    """Beside the tape, unless the tape is a bundled demo (or its folder cannot be written):
    then the user's Videos, Pictures or home folder, never inside the package."""
    import os

    from PySide6.QtCore import QStandardPaths

    from arena_studio.core.resources import demo_path

    if tape_path is not None:
        folder = tape_path.parent
        try:
            bundled = folder.resolve() == demo_path().resolve()
        except OSError:
            bundled = True
        if not bundled and os.access(folder, os.W_OK):
            return folder
    for kind in (
        QStandardPaths.StandardLocation.MoviesLocation,
        QStandardPaths.StandardLocation.PicturesLocation,
    ):
        place = QStandardPaths.writableLocation(kind)
        if place and Path(place).is_dir() and os.access(place, os.W_OK):
            return Path(place)
    return Path.home()


class ClipDialog(QDialog):
    """Options, progress and cancel for exporting one tape's episodes."""

    def __init__(
        self, parent: QWidget | None, tape: Any, episode_index: int = 0, time: float = 0.0
    ) -> None:
        super().__init__(parent)
        self.setWindowTitle("Export Clip or Still")
        self.tape = tape
        self._cancel = False
        self._busy = False
        self.last_result: Any = None
        count = max(len(tape), 1)
        duration = self._duration(episode_index)
        failed_at = self._diagnosis_time(episode_index)
        if failed_at is not None:  # a failed episode: the still shows the moment it failed
            time = failed_at

        self.kind = QComboBox()
        for label, _ext in KINDS:
            self.kind.addItem(label)
        tape_path = getattr(tape, "path", None)
        folder = default_folder(Path(tape_path) if tape_path else None)
        stem = Path(tape_path).stem if tape_path else "episode"
        self.path = QLineEdit(str(folder / f"{stem}-episode-{episode_index}.mp4"))
        choose = QPushButton("Choose…")
        choose.clicked.connect(self._choose)
        where = QHBoxLayout()
        where.addWidget(self.path, 1)
        where.addWidget(choose)
        self.kind.currentIndexChanged.connect(self._kind_changed)

        self.mode = QComboBox()
        self.mode.addItems(EPISODE_MODES)
        self.mode.currentIndexChanged.connect(lambda i: self.more.setEnabled(i != 0))
        self.episode = QSpinBox()
        self.episode.setRange(0, count - 1)
        self.episode.setValue(min(max(episode_index, 0), count - 1))
        self.more = QLineEdit()
        self.more.setPlaceholderText("more episodes, e.g. 4, 9  (sequence) or one (compare)")
        self.more.setEnabled(False)
        self.start = _seconds(0.0)
        self.end = _seconds(duration)
        self.moment = _seconds(time)

        self.size_choice = QComboBox()
        for name, (w, h) in SIZE_PRESETS.items():
            self.size_choice.addItem(f"{w} x {h} ({name})", (w, h))
        self.size_choice.addItem("Custom", None)
        self.width_box, self.height_box = QSpinBox(), QSpinBox()
        for box, value in ((self.width_box, 1280), (self.height_box, 720)):
            box.setRange(int(limits.FRAME_SIDE.low), int(limits.FRAME_SIDE.high))
            box.setValue(value)
            box.setEnabled(False)
        self.size_choice.currentIndexChanged.connect(self._size_changed)
        custom = QHBoxLayout()
        custom.addWidget(self.width_box)
        custom.addWidget(QLabel("x"))
        custom.addWidget(self.height_box)
        self.fps = QDoubleSpinBox()
        self.fps.setRange(limits.FPS.low, limits.FPS.high)
        self.fps.setValue(30)
        self.speed = QDoubleSpinBox()
        self.speed.setRange(limits.SPEED.low, limits.SPEED.high)
        self.speed.setSingleStep(0.5)
        self.speed.setValue(1.0)
        self.speed.setSuffix(" x")

        self.theme = QComboBox()
        self.theme.addItems(["light", "dark"])
        self.roles = QComboBox()
        self.roles.addItems(["auto", "derived", "tape", "none"])
        self.trail = _seconds(4.0, limits.TRAIL)
        self.trail.setSpecialValueText("off")
        self.checks: dict[str, QCheckBox] = {}
        overlays = QHBoxLayout()
        for key, text, on in (
            ("team_goal", "targets", True),
            ("pursued", "pursued goals", True),
            ("par_paths", "par-time paths", False),
            ("collisions", "contacts", True),
            ("legend", "legend", True),
            ("clock", "clock", True),
        ):
            box = QCheckBox(text)
            box.setChecked(on)
            self.checks[key] = box
            overlays.addWidget(box)
        self.title = QLineEdit()
        self.title.setPlaceholderText("optional title line (and a title card in clips)")
        self.title_seconds = _seconds(2.0, limits.TITLE_SECONDS)
        self.caption = QLineEdit()
        self.caption.setPlaceholderText("optional caption line")
        self.statement = QCheckBox("Say how the episode went and who went where")
        self.statement.setChecked(True)
        self.statement.setToolTip(
            "The replay's outcome line (what failed, and when) and who went where, drawn "
            "under each episode's frame"
        )

        out_box = QGroupBox("Output")
        out_form = QFormLayout(out_box)
        out_form.addRow("Type", self.kind)
        out_form.addRow("File or folder", where)
        what_box = QGroupBox("What")
        what_form = QFormLayout(what_box)
        what_form.addRow("Episodes", self.mode)
        what_form.addRow("Episode", self.episode)
        what_form.addRow("Others", self.more)
        span = QHBoxLayout()
        span.addWidget(self.start)
        span.addWidget(QLabel("to"))
        span.addWidget(self.end)
        what_form.addRow("Time range", span)
        what_form.addRow("Still at", self.moment)
        look_box = QGroupBox("Look")
        look_form = QFormLayout(look_box)
        look_form.addRow("Size", self.size_choice)
        look_form.addRow("Custom size", custom)
        look_form.addRow("Frames per second", self.fps)
        look_form.addRow("Playback speed", self.speed)
        look_form.addRow("Theme", self.theme)
        look_form.addRow("Role marks", self.roles)
        look_form.addRow("Trail length", self.trail)
        look_form.addRow("Show", overlays)
        look_form.addRow("Title", self.title)
        look_form.addRow("Title card", self.title_seconds)
        look_form.addRow("Caption", self.caption)
        look_form.addRow("", self.statement)

        self.progress = QProgressBar()
        self.progress.setRange(0, 1)
        self.progress.setValue(0)
        self.status = QLabel("")
        self.status.setWordWrap(True)
        self.path.textChanged.connect(self._hint)
        self.status.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.export_button = QPushButton("Export")
        self.export_button.setDefault(True)
        self.export_button.clicked.connect(self.export)
        self.close_button = QPushButton("Close")
        self.close_button.clicked.connect(self._close_or_cancel)
        buttons = QHBoxLayout()
        buttons.addWidget(self.progress, 1)
        buttons.addWidget(self.export_button)
        buttons.addWidget(self.close_button)

        layout = QVBoxLayout(self)
        layout.addWidget(out_box)
        layout.addWidget(what_box)
        layout.addWidget(look_box)
        layout.addWidget(self.status)
        layout.addLayout(buttons)
        self._kind_changed(0)
        self._hint()

    # -- helpers -------------------------------------------------------------------------
    def _hint(self, *_args: object) -> None:
        """The "where to save" hint only while no path is set (other messages stay)."""
        empty = not self.path.text().strip()
        if empty:
            self._say(HINT, error=False)
        elif self.status.text() == HINT:
            self._say("", error=False)

    def _metrics(self, index: int) -> Any:
        """The episode's metrics (success, diagnosis), or None when they cannot be had."""
        try:
            from arena_studio.core.analysis.metrics import episode_metrics

            return episode_metrics(self.tape.scene, self.tape.episode(index))
        except Exception:  # a damaged episode: the dialog still opens, without a statement
            return None

    def _diagnosis_time(self, index: int) -> float | None:
        m = self._metrics(index)
        step = getattr(m, "diagnosis_step", None)
        if m is None or getattr(m, "success", True) or step is None:
            return None
        return float(step) * float(self.tape.dt)

    def caption_text(self) -> str | None:
        """The typed caption line; how the episode went is the statement's (under the frame,
        render.frame.paint_statement), so it is said once per episode, also side by side."""
        return self.caption.text().strip() or None

    def _duration(self, index: int) -> float:
        try:
            steps = self.tape.episode_steps(index)
            return max(steps - 1, 0) * float(self.tape.dt)
        except Exception:  # a tape without the fast lookup, or an index out of range
            return 10.0

    def _choose(self) -> None:
        ext = KINDS[self.kind.currentIndex()][1]
        if ext == "":
            folder = QFileDialog.getExistingDirectory(self, "Folder for PNG frames")
            if folder:
                self.path.setText(str(Path(folder) / "frames"))
            return
        name, _ = QFileDialog.getSaveFileName(
            self,
            "Export to",
            self.path.text(),
            f"{self.kind.currentText()} (*{ext})",
            # export asks itself, and only about files it did not write (core.outputs)
            options=QFileDialog.Option.DontConfirmOverwrite,
        )
        if name:
            self.path.setText(name if name.lower().endswith(ext) else name + ext)

    def _kind_changed(self, index: int) -> None:
        ext = KINDS[index][1]
        text = Path(self.path.text())
        stem = text.with_suffix("") if text.suffix else text
        self.path.setText(str(stem) + ext)
        still = ext in (".png", ".svg")
        for w in (self.start, self.end, self.fps, self.speed, self.title_seconds):
            w.setEnabled(not still)
        self.moment.setEnabled(still)

    def _size_changed(self, index: int) -> None:
        custom = self.size_choice.itemData(index) is None
        self.width_box.setEnabled(custom)
        self.height_box.setEnabled(custom)

    def frame_size(self) -> tuple[int, int]:
        data = self.size_choice.currentData()
        return tuple(data) if data else (self.width_box.value(), self.height_box.value())

    def frame_options(self) -> FrameOptions:
        c = {k: box.isChecked() for k, box in self.checks.items()}
        return FrameOptions(
            theme=self.theme.currentText(),
            trails=self.trail.value() > 0,
            trail_seconds=self.trail.value() or 4.0,
            roles=self.roles.currentText(),
            title=self.title.text().strip() or None,
            caption=self.caption_text(),
            statement=self.statement.isChecked(),  # who went where, under the frame
            **c,
        )

    def episode_indices(self) -> list[int]:
        first = self.episode.value()
        mode = self.mode.currentIndex()
        if mode == 0:
            return [first]
        try:
            extra = [int(v) for v in self.more.text().replace(",", " ").split()]
        except ValueError:
            raise ClipError("Others: list episode numbers separated by commas") from None
        if mode == 2 and len(extra) != 1:
            raise ClipError("Compare side by side: give exactly one other episode")
        for i in extra:
            if not 0 <= i < len(self.tape):
                raise ClipError(f"Others: there is no episode {i} (the tape has {len(self.tape)})")
        return [first, *extra]

    # -- export --------------------------------------------------------------------------
    def export(self) -> bool:
        """Run the export; True when a file was written (errors shown in the dialog)."""
        if self._busy:
            return False
        self._cancel = False
        self._set_busy(True)
        try:
            self.last_result = self._export()
        except ClipCancelled as exc:
            self._say(str(exc), error=False)
            return False
        except (ClipError, OSError, ValueError) as exc:
            self._say(str(exc), error=True)
            return False
        finally:
            self._set_busy(False)
        notes = getattr(self.last_result, "notes", [])
        self._say(" ".join([f"Saved {self.path.text()}.", *notes]), error=False)
        return True

    def _export(self) -> Any:
        target = Path(self.path.text().strip()).expanduser()
        if not str(target):
            raise ClipError("choose a file or folder to export to")
        self._check_target(target)
        indices = self.episode_indices()
        episodes = [self.tape.episode(i) for i in indices]
        options = self.frame_options()
        size = self.frame_size()
        if target.suffix.lower() in (".png", ".svg"):
            from arena_studio.render.compare_still import save_compare_png, save_compare_svg
            from arena_studio.render.frame import save_png_still, save_svg_still

            if not target.parent.is_dir():
                raise ClipError(f"{target.parent}: folder does not exist")
            step = episodes[0].step_at(self.moment.value())
            png = target.suffix.lower() == ".png"
            if self.mode.currentIndex() == 2:  # both at the same moment, side by side
                steps = [step, episodes[1].step_at(self.moment.value())]
                compare_writer = save_compare_png if png else save_compare_svg
                compare_writer(target, self.tape.scene, episodes, steps, options, size)
            elif len(episodes) > 1:
                raise ClipError("a still shows this episode, or two compared side by side")
            else:
                writer = save_png_still if png else save_svg_still
                writer(target, self.tape.scene, episodes[0], step, options, size)
            self.progress.setRange(0, 1)
            self.progress.setValue(1)
            return None
        spec = ClipSpec(
            start=self.start.value(),
            end=self.end.value(),
            speed=self.speed.value(),
            fps=self.fps.value(),
            size=size,
            compare=self.mode.currentIndex() == 2,
            frame=options,
            title_seconds=self.title_seconds.value() if options.title else 0.0,
        )
        return export_clip(
            self.tape.scene, episodes, target, spec, progress=self._progress, cancel=self._cancelled
        )

    def _check_target(self, target: Path) -> None:
        """Never the tape itself; a file we did not write there only when the user says so.
        Leftovers of killed exports in that folder are removed."""
        from arena_studio.core.outputs import OutputClash, prepare_outputs, render_outputs

        tape_path = getattr(self.tape, "path", None)
        inputs = [tape_path] if tape_path else []
        try:
            prepare_outputs(render_outputs(target), inputs)
        except OutputClash as exc:
            if not exc.needs_force:
                raise ClipError(str(exc)) from None
            if not self.confirm_replace(target):
                raise ClipCancelled(f"{target.name} was kept; nothing was written") from None
            prepare_outputs(render_outputs(target), inputs, force=True)

    def confirm_replace(self, target: Path) -> bool:
        """Ask before replacing a file that is not an earlier export (tests replace this)."""
        answer = QMessageBox.question(
            self,
            "Replace file?",
            f"“{target.name}” already exists and was not exported by arena-studio. Replace it?",
            QMessageBox.StandardButton.Yes | QMessageBox.StandardButton.No,
            QMessageBox.StandardButton.No,
        )
        return answer == QMessageBox.StandardButton.Yes

    def _progress(self, done: int, total: int) -> None:
        self.progress.setRange(0, total)
        self.progress.setValue(done)
        self.status.setText(f"Rendering frame {done} of {total}…")
        QApplication.processEvents()

    def _cancelled(self) -> bool:
        return self._cancel

    def cancel(self) -> None:
        self._cancel = True

    def _close_or_cancel(self) -> None:
        if self._busy:
            self.cancel()
        else:
            self.reject()

    def reject(self) -> None:
        if self._busy:  # Escape while exporting cancels the export first
            self.cancel()
            return
        super().reject()

    def _set_busy(self, busy: bool) -> None:
        self._busy = busy
        self.export_button.setEnabled(not busy)
        self.close_button.setText("Cancel" if busy else "Close")

    def _say(self, text: str, error: bool) -> None:
        self.status.setText(text)
        color = load_theme(self.theme.currentText()).hex("error")
        self.status.setStyleSheet(f"color: {color};" if error else "")


def _seconds(value: float, limit: limits.Range = limits.TIME) -> QDoubleSpinBox:
    """A seconds box with the range the command line accepts for the same value."""
    box = QDoubleSpinBox()
    box.setRange(limit.low, limit.high)
    box.setDecimals(2)
    box.setSuffix(" s")
    box.setValue(value)
    return box


def open_clip_dialog(
    parent: QWidget | None, tape: Any, episode_index: int = 0, time: float = 0.0
) -> ClipDialog:
    """The dialog, ready for ``exec()`` (the replay window calls this from its menu)."""
    return ClipDialog(parent, tape, episode_index, time)
