"""File > Export for Simulator…: the six scene exports of ``arena-studio export`` in a dialog.

It gathers the same options as the command (format, output, grid resolution and clearance),
lists every file the export will write (sidecars included, from ``core.outputs``), checks
them before anything is written (the scene itself is refused, a file we did not write is
replaced only after asking) and calls :func:`arena_studio.core.export.export_scene`, so the
files are byte for byte what the command writes.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtWidgets import (
    QApplication,
    QComboBox,
    QDialog,
    QDoubleSpinBox,
    QFileDialog,
    QFormLayout,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QMessageBox,
    QPushButton,
    QVBoxLayout,
    QWidget,
)

from arena_studio.core import limits
from arena_studio.core.errors import ArenaError
from arena_studio.core.export import CAUTION, DEFAULT_RESOLUTION, FORMATS, export_scene
from arena_studio.core.outputs import OutputClash, export_outputs, prepare_outputs
from arena_studio.core.scene.model import Scene
from arena_studio.core.wording import count

#: What each format is for, and the name ending its output gets by default.
FORMAT_INFO: dict[str, tuple[str, str]] = {
    "json": ("Scene file, canonical JSON (with an .about.json sidecar)", "-export.scene.json"),
    "msgpack": ("Scene file, msgpack (with an .about.json sidecar)", "-export.scene.msgpack"),
    "npz": ("NumPy arrays: walls, landmarks, starts, goals, par times", ".npz"),
    "wkt": ("Labelled WKT geometry lines", ".wkt"),
    "svg": ("Vector drawing in millimetres", ".svg"),
    "grid": ("Occupancy grid: .npy + .png preview + .json sidecar", "-grid"),
}


def default_output(scene_path: Path | None, folder: Path, fmt: str) -> Path:
    """``<scene stem><ending>`` in ``folder`` (a scene's stem drops ``.scene``)."""
    stem = scene_path.name if scene_path else "untitled"
    for ending in (".json", ".msgpack", ".mpk", ".scene"):
        if stem.lower().endswith(ending):
            stem = stem[: -len(ending)]
    return folder / f"{stem or 'scene'}{FORMAT_INFO[fmt][1]}"


class ExportDialog(QDialog):
    """Options and one Export button for the scene shown in the layout editor."""

    def __init__(
        self,
        parent: QWidget | None,
        scene: Scene,
        scene_path: Path | None,
        folder: Path,
        error_color: str = "#c62828",
    ) -> None:
        super().__init__(parent)
        self._error_color = error_color
        self.setWindowTitle("Export for Simulator")
        self.scene = scene
        self.scene_path = scene_path
        self.written: list[Path] = []
        self.format = QComboBox()
        for fmt in FORMATS:
            self.format.addItem(f"{fmt} — {FORMAT_INFO[fmt][0]}", fmt)
        self.path = QLineEdit(str(default_output(scene_path, folder, FORMATS[0])))
        self._auto_path = self.path.text()  # replaced on a format change unless edited
        choose = QPushButton("Choose…")
        choose.clicked.connect(self._choose)
        where = QHBoxLayout()
        where.addWidget(self.path, 1)
        where.addWidget(choose)
        self.resolution = _metres(DEFAULT_RESOLUTION, limits.RESOLUTION, 3)
        self.clearance = _metres(0.0, limits.CLEARANCE, 2)
        self.clearance.setToolTip(
            "A free cell's centre stays this far from walls and obstacles, e.g. the robot "
            "radius. Not a safety margin for real robots."
        )
        form = QFormLayout()
        form.addRow("Format", self.format)
        form.addRow("Save to", where)
        form.addRow("Grid cell size", self.resolution)
        form.addRow("Grid clearance", self.clearance)
        self.files = QLabel()
        self.files.setWordWrap(True)
        caution = QLabel(CAUTION)
        caution.setWordWrap(True)
        caution.setEnabled(False)  # muted: read once, not in the way
        self.status = QLabel("")
        self.status.setWordWrap(True)
        self.export_button = QPushButton("Export")
        self.export_button.setDefault(True)
        self.export_button.clicked.connect(self.export)
        close = QPushButton("Close")
        close.clicked.connect(self.reject)
        buttons = QHBoxLayout()
        buttons.addStretch(1)
        buttons.addWidget(self.export_button)
        buttons.addWidget(close)
        layout = QVBoxLayout(self)
        layout.addLayout(form)
        layout.addWidget(self.files)
        layout.addWidget(caution)
        layout.addWidget(self.status)
        layout.addLayout(buttons)
        self.format.currentIndexChanged.connect(self._format_changed)
        self.path.textChanged.connect(self._show_files)
        self._format_changed()
        self.setMinimumWidth(560)

    def chosen_format(self) -> str:
        return str(self.format.currentData())

    def _format_changed(self, *_args: object) -> None:
        fmt = self.chosen_format()
        if self.path.text() == self._auto_path:
            folder = Path(self.path.text()).parent
            self._auto_path = str(default_output(self.scene_path, folder, fmt))
            self.path.setText(self._auto_path)
        grid = fmt == "grid"
        self.resolution.setEnabled(grid)
        self.clearance.setEnabled(grid)
        self._show_files()

    def _show_files(self, *_args: object) -> None:
        text = self.path.text().strip()
        if not text:
            self.files.setText("Choose where to save, then Export.")
            return
        try:
            names = [o.path.name for o in export_outputs(self.chosen_format(), text)]
        except ArenaError as exc:
            self.files.setText(str(exc))
            return
        self.files.setText("Will write: " + ", ".join(names))

    def _choose(self) -> None:
        path, _ = QFileDialog.getSaveFileName(self, "Export to", self.path.text())
        if path:
            self.path.setText(path)

    def export(self) -> bool:
        """Check every output, ask before replacing a stranger's file, then write."""
        text = self.path.text().strip()
        if not text:
            self._say("Choose where to save, then Export.", error=True)
            return False
        fmt, target = self.chosen_format(), Path(text).expanduser()
        outputs = export_outputs(fmt, target)
        inputs = [self.scene_path] if self.scene_path else []
        try:
            try:
                prepare_outputs(outputs, inputs)
            except OutputClash as exc:
                if not exc.needs_force:
                    raise
                if not self.confirm_replace(exc):
                    self._say("Nothing was written.", error=False)
                    return False
                prepare_outputs(outputs, inputs, force=True)
            failures: list[str] = []
            self._say("Exporting…", error=False)
            QApplication.processEvents()
            self.written = export_scene(
                self.scene,
                fmt,
                target,
                resolution=self.resolution.value(),
                clearance=self.clearance.value(),
                failures=failures,
                advance=lambda _n: QApplication.processEvents(),
            )
        except (OutputClash, ArenaError, OSError) as exc:
            self._say(f"Not exported: {exc}", error=True)
            return False
        note = f" ({count(len(failures), 'part')} drawn as notes)" if failures else ""
        self._say("Wrote " + ", ".join(p.name for p in self.written) + note, error=False)
        return True

    def confirm_replace(self, clash: OutputClash) -> bool:
        """Ask before replacing a file arena-studio did not write (tests replace this)."""
        name = str(clash).split(":", 1)[0]
        answer = QMessageBox.question(
            self,
            "Replace file?",
            f"“{Path(name).name}” already exists and was not exported by arena-studio. Replace it?",
            QMessageBox.StandardButton.Yes | QMessageBox.StandardButton.No,
            QMessageBox.StandardButton.No,
        )
        return answer == QMessageBox.StandardButton.Yes

    def _say(self, text: str, error: bool) -> None:
        self.status.setText(text)
        self.status.setStyleSheet(f"color: {self._error_color};" if error else "")


def _metres(value: float, limit: limits.Range, decimals: int) -> QDoubleSpinBox:
    """A metres box with the range the command line accepts for the same option."""
    box = QDoubleSpinBox()
    box.setDecimals(decimals)
    box.setRange(limit.low, limit.high)
    box.setSingleStep(10 ** -(decimals - 1))
    box.setSuffix(" m")
    box.setValue(value)
    return box
