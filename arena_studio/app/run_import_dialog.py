"""File > Import Robot Run: ROS 2 bags to a tape on the open scene, with a topic per agent.

The table lists the scene's agents, each with a choice of the pose topics and TF frames found
in the bags (prefilled in order); the options match ``arena-studio import bag``. Import reads
the bags (:func:`arena_studio.core.robot.bags.import_bags`) and reports per topic what was
used and skipped.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtWidgets import (
    QComboBox,
    QDialog,
    QDialogButtonBox,
    QDoubleSpinBox,
    QFormLayout,
    QLabel,
    QLineEdit,
    QTableWidget,
    QVBoxLayout,
    QWidget,
)

from arena_studio.core.robot.bag_read import Source
from arena_studio.core.robot.bags import BagImportOptions
from arena_studio.core.robot.pose_math import parse_transform
from arena_studio.core.scene import Scene

CAUTION = (
    "A replay of real runs is an analysis aid. Safety of robots near people is assessed on "
    "site, under the applicable standards and local rules."
)
SPLIT_CHOICES = (
    ("At pauses in the poses", "gap"),
    ("At each marker message", "marker"),
    ("One episode per bag", "bag"),
)


def _spin(lo: float, hi: float, value: float, suffix: str) -> QDoubleSpinBox:
    box = QDoubleSpinBox()
    box.setRange(lo, hi)
    box.setDecimals(3)
    box.setValue(value)
    box.setSuffix(suffix)
    return box


class RunImportDialog(QDialog):
    """``options()`` after OK gives the import options; the bags are ``paths``."""

    def __init__(
        self,
        scene: Scene,
        paths: list[Path],
        sources: list[Source],
        topics: list[str],
        parent: QWidget | None = None,
    ) -> None:
        super().__init__(parent)
        self.setWindowTitle("Import Robot Run")
        self.scene, self.paths = scene, paths
        names = ", ".join(p.name for p in paths)
        heading = QLabel(f"Bags: {names}\nScene: {scene.name} ({len(scene.agents)} agents)")
        heading.setWordWrap(True)
        self.table = QTableWidget(len(scene.agents), 2)
        self.table.setHorizontalHeaderLabels(["Scene agent", "Pose source in the bags"])
        self.table.verticalHeader().setVisible(False)
        self.combos: list[QComboBox] = []
        for row, agent in enumerate(scene.agents):
            label = QLabel(f"  {agent.id}")
            self.table.setCellWidget(row, 0, label)
            combo = QComboBox()
            for s in sources:
                combo.addItem(f"{s.name}   ({s.msgtype.split('/')[-1]}, {s.messages})", s.name)
            if row < len(sources):
                combo.setCurrentIndex(row)
            self.table.setCellWidget(row, 1, combo)
            self.combos.append(combo)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.table.setColumnWidth(0, 160)
        rows = min(len(scene.agents), 8)
        self.table.setFixedHeight(
            self.table.horizontalHeader().sizeHint().height()
            + rows * self.table.verticalHeader().defaultSectionSize()
            + 6
        )
        self.dt = _spin(0.001, 10.0, 0.1, " s")
        self.split = QComboBox()
        for title, key in SPLIT_CHOICES:
            self.split.addItem(title, key)
        self.gap = _spin(0.01, 3600.0, 2.0, " s")
        self.marker = QComboBox()
        self.marker.addItem("(none)", None)
        self.goal_topic = QComboBox()
        self.goal_topic.addItem("(none)", None)
        for t in topics:
            self.marker.addItem(t, t)
            self.goal_topic.addItem(t, t)
        self.goal = QLineEdit()
        self.goal.setPlaceholderText(
            "landmark ids joined by +, e.g. " + "+".join(lm.id for lm in scene.landmarks[:2])
        )
        self.fixed_frame = QLineEdit("map")
        self.transform = QLineEdit("0, 0, 0")
        form = QFormLayout()
        form.addRow("Time step", self.dt)
        form.addRow("Episodes", self.split)
        form.addRow("Pause that splits", self.gap)
        form.addRow("Marker topic", self.marker)
        form.addRow("Team goal", self.goal)
        form.addRow("Goal topic", self.goal_topic)
        form.addRow("TF fixed frame", self.fixed_frame)
        form.addRow("Map frame in scene (x, y, yaw)", self.transform)
        caution = QLabel(CAUTION)
        caution.setWordWrap(True)
        caution.setObjectName("caution")
        self.problem = QLabel()
        self.problem.setWordWrap(True)
        buttons = QDialogButtonBox(
            QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel
        )
        buttons.button(QDialogButtonBox.StandardButton.Ok).setText("Import…")
        buttons.accepted.connect(self._accept)
        buttons.rejected.connect(self.reject)
        outer = QVBoxLayout(self)
        outer.addWidget(heading)
        outer.addWidget(self.table)
        outer.addLayout(form)
        outer.addWidget(caution)
        outer.addWidget(self.problem)
        outer.addStretch(1)
        outer.addWidget(buttons)
        self.resize(720, self.sizeHint().height())

    def options(self) -> BagImportOptions:
        """The choices as import options; raises RobotImportError for a bad transform."""
        agents = {
            a.id: str(c.currentData()) for a, c in zip(self.scene.agents, self.combos, strict=True)
        }
        goal = self.goal.text().strip() or None
        return BagImportOptions(
            agents=agents,
            dt=self.dt.value(),
            transform=parse_transform(self.transform.text().replace(" ", "")),
            fixed_frame=self.fixed_frame.text().strip() or "map",
            split=str(self.split.currentData()),
            gap=self.gap.value(),
            marker=self.marker.currentData(),
            goal=goal,
            goal_topic=self.goal_topic.currentData(),
        )

    def _accept(self) -> None:
        from arena_studio.core.robot.bags import check_options
        from arena_studio.core.robot.errors import RobotImportError

        try:
            if any(c.currentData() is None for c in self.combos):
                raise RobotImportError("every agent needs a pose source")
            check_options(self.scene, self.options())
        except RobotImportError as exc:
            self.problem.setText(f"⚠ {exc}")
            return
        self.accept()


__all__ = ["CAUTION", "RunImportDialog"]
