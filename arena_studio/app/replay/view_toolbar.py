"""The replay's view toolbar: which overlays to draw, trail length, and compare mode."""

from __future__ import annotations

from PySide6.QtCore import Signal
from PySide6.QtWidgets import QCheckBox, QComboBox, QDoubleSpinBox, QLabel, QToolBar, QWidget

from arena_studio.render.episode_painter import FrameOptions

COMPARE_MODES = (("Off", "off"), ("Ghost overlay", "ghost"), ("Side by side", "side"))


class ViewToolbar(QToolBar):
    optionsChanged = Signal()
    compareModeChanged = Signal(str)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("Replay view", parent)
        self.setObjectName("replay.view_toolbar")
        self.trails_box = QCheckBox("Trails", self)
        self.trails_box.setChecked(True)
        self.trail_seconds = QDoubleSpinBox(self)
        self.trail_seconds.setRange(0.5, 120.0)
        self.trail_seconds.setValue(FrameOptions().trail_seconds)
        self.trail_seconds.setSuffix(" s")
        self.trail_seconds.setToolTip("Trail length (seconds of past motion)")
        self.pursued_box = QCheckBox("Pursued goals", self)
        self.pursued_box.setChecked(True)
        self.par_box = QCheckBox("Par-time paths", self)
        self.legend_box = QCheckBox("Legend", self)
        self.legend_box.setChecked(True)
        for w in (self.trails_box, self.pursued_box, self.par_box, self.legend_box):
            w.toggled.connect(lambda *_: self.optionsChanged.emit())
        self.trail_seconds.valueChanged.connect(lambda *_: self.optionsChanged.emit())
        for w in (
            self.trails_box,
            self.trail_seconds,
            self.pursued_box,
            self.par_box,
            self.legend_box,
        ):
            self.addWidget(w)
        self.addSeparator()
        self.addWidget(QLabel(" Compare: ", self))
        self.compare_box = QComboBox(self)
        for label, name in COMPARE_MODES:
            self.compare_box.addItem(label, name)
        self.compare_box.setToolTip(
            "Show a second episode (pick it with 'Compare with selected') as a ghost or beside"
        )
        self.compare_box.currentIndexChanged.connect(
            lambda i: self.compareModeChanged.emit(self.compare_box.itemData(i))
        )
        self.addWidget(self.compare_box)

    def show_compare_mode(self, mode: str) -> None:
        """Reflect ``mode`` in the box without announcing it again."""
        i = [m for _, m in COMPARE_MODES].index(mode)
        if self.compare_box.currentIndex() != i:
            self.compare_box.blockSignals(True)
            self.compare_box.setCurrentIndex(i)
            self.compare_box.blockSignals(False)
