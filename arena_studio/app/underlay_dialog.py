"""View > Underlay…: choose the reference image and place it (corner, scale, turn), set its
opacity and lock. OK makes one undoable edit; Remove takes the underlay away."""

from __future__ import annotations

import math
from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QCheckBox,
    QDialog,
    QDialogButtonBox,
    QDoubleSpinBox,
    QFileDialog,
    QFormLayout,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QPushButton,
    QSlider,
    QVBoxLayout,
    QWidget,
)

from arena_studio.core.robot.underlay import image_path, relative_image
from arena_studio.core.scene import Underlay

IMAGE_FILTER = (
    "Images or map descriptions (*.png *.jpg *.jpeg *.pgm *.ppm *.bmp *.svg *.yaml *.yml);;"
    "All files (*)"
)


def _spin(lo: float, hi: float, decimals: int, value: float, suffix: str) -> QDoubleSpinBox:
    box = QDoubleSpinBox()
    box.setRange(lo, hi)
    box.setDecimals(decimals)
    box.setValue(value)
    box.setSuffix(suffix)
    return box


def _kept(box: QDoubleSpinBox, original: float) -> float:
    """The box's value, or the original when the box only shows it rounded (OK alone must
    not turn into an edit)."""
    return original if box.value() == round(original, box.decimals()) else box.value()


class UnderlayDialog(QDialog):
    """``result_underlay()`` after OK: the new underlay, or None when removed."""

    def __init__(
        self, underlay: Underlay | None, scene_path: Path | None, parent: QWidget | None = None
    ) -> None:
        super().__init__(parent)
        self.setWindowTitle("Underlay")
        self.scene_path = scene_path
        self.removed = False
        u = underlay or Underlay(image="")
        self.original = u
        shown = str(image_path(u, scene_path)) if underlay is not None else ""
        self.image = QLineEdit(shown)
        browse = QPushButton("Browse…")
        browse.clicked.connect(self._browse)
        row = QWidget()
        lay = QHBoxLayout(row)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.addWidget(self.image, 1)
        lay.addWidget(browse)
        self.x_box = _spin(-1e6, 1e6, 3, u.origin[0], " m")
        self.y_box = _spin(-1e6, 1e6, 3, u.origin[1], " m")
        self.scale = _spin(1e-6, 1e3, 6, u.scale, " m/px")
        self.rotation = _spin(-360.0, 360.0, 4, math.degrees(u.rotation), " °")
        self.opacity = QSlider(Qt.Orientation.Horizontal)
        self.opacity.setRange(0, 100)
        self.opacity.setValue(round(u.opacity * 100))
        self.opacity_label = QLabel()
        self.opacity.valueChanged.connect(lambda v: self.opacity_label.setText(f"{v} %"))
        self.opacity_label.setText(f"{self.opacity.value()} %")
        orow = QWidget()
        olay = QHBoxLayout(orow)
        olay.setContentsMargins(0, 0, 0, 0)
        olay.addWidget(self.opacity, 1)
        olay.addWidget(self.opacity_label)
        self.locked = QCheckBox("Locked (calibration and edits leave it in place)")
        self.locked.setChecked(u.locked)
        form = QFormLayout()
        form.addRow("Image", row)
        form.addRow("Lower-left corner x", self.x_box)
        form.addRow("Lower-left corner y", self.y_box)
        form.addRow("Scale", self.scale)
        form.addRow("Rotation", self.rotation)
        form.addRow("Opacity", orow)
        form.addRow("", self.locked)
        hint = QLabel(
            "Choose an image, or a map's YAML to place its image as the map says. The path is "
            "saved relative to the scene file. To set the scale from the image itself, use "
            "Tools > Calibrate Underlay by Two Points."
        )
        hint.setWordWrap(True)
        self.note = QLabel()
        self.note.setWordWrap(True)
        buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel
        )
        remove = buttons.addButton("Remove Underlay", QDialogButtonBox.ButtonRole.DestructiveRole)
        remove.setEnabled(underlay is not None)
        remove.clicked.connect(self._remove)
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        outer = QVBoxLayout(self)
        outer.addLayout(form)
        outer.addWidget(hint)
        outer.addWidget(self.note)
        outer.addWidget(buttons)
        self.resize(560, 360)

    def _browse(self) -> None:
        path, _ = QFileDialog.getOpenFileName(
            self, "Underlay image", self.image.text(), IMAGE_FILTER
        )
        if path:
            self.choose(path)

    def choose(self, path: str) -> None:
        """An image, or a map YAML: then its image, placed as the YAML says."""
        if not path.lower().endswith((".yaml", ".yml")):
            self.image.setText(path)
            return
        from arena_studio.core.errors import ArenaError
        from arena_studio.core.robot.map_yaml import read_map_yaml

        try:
            info = read_map_yaml(path)
        except ArenaError as exc:
            self.note.setText(f"⚠ {exc}")
            return
        self.image.setText(str(info.image))
        self.x_box.setValue(info.origin[0])
        self.y_box.setValue(info.origin[1])
        self.scale.setValue(info.resolution)
        self.rotation.setValue(math.degrees(info.origin[2]))
        self.note.setText(f"Placed as {Path(path).name} says.")

    def _remove(self) -> None:
        self.removed = True
        self.accept()

    def result_underlay(self) -> Underlay | None:
        if self.removed or not self.image.text().strip():
            return None
        text = self.image.text().strip()
        image = (
            relative_image(text, self.scene_path)
            if self.scene_path
            else Path(text).resolve().as_posix()
        )
        u = self.original
        return Underlay(
            image=image,
            origin=(_kept(self.x_box, u.origin[0]), _kept(self.y_box, u.origin[1])),
            scale=_kept(self.scale, u.scale),
            rotation=u.rotation
            if self.rotation.value() == round(math.degrees(u.rotation), self.rotation.decimals())
            else math.radians(self.rotation.value()),
            opacity=u.opacity
            if self.opacity.value() == round(u.opacity * 100)
            else self.opacity.value() / 100,
            locked=self.locked.isChecked(),
        )


__all__ = ["UnderlayDialog"]
