"""Goals panel: success rule, hold time, k-hot families, explicit goal vectors and the goal list.

The list shows every goal the scene offers with its weight, a flag when the checker finds it
unreachable, and its par time once ``core.partime`` is part of the build.
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Any

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QCheckBox,
    QComboBox,
    QFormLayout,
    QGridLayout,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from arena_studio.app.editor.editor_view import Editor
from arena_studio.app.editor.fields import NumberField
from arena_studio.core.scene.model import RULES, Scene
from arena_studio.core.wording import LandmarkNames
from arena_studio.editing import edits as edits
from arena_studio.editing.goal_rows import goal_rows

RULE_TITLES = {
    "all_at_end": "Every target covered at the last step",
    "all_at_once": "Every target covered at one moment",
    "all_visited": "Every target visited at some point",
}
MAX_K = 4
PICK_HINT = (
    "Pick on canvas, click landmarks, then Add goal (or Enter). "
    "Choose a goal in the list to remove it or set its weight."
)


def _heading(text: str) -> QLabel:
    label = QLabel(text)
    label.setProperty("role", "heading")
    return label


#: Rows the goal table lists; a larger goal set is summarised (the command lists all).
MAX_TABLE_GOALS = 500


class GoalsPanel(QWidget):
    highlight = Signal(tuple)  # landmark indices of the goal row under focus

    def __init__(self, editor: Editor) -> None:
        super().__init__()
        self.editor = editor
        self.findings: list[Any] = []
        self.plans: list[Any] | None = None
        lay = QVBoxLayout(self)
        lay.setContentsMargins(10, 8, 10, 10)

        form = QFormLayout()
        self.rule = QComboBox()
        self.rule.setObjectName("goal_rule")
        for r in RULES:
            self.rule.addItem(RULE_TITLES[r], r)
        self.rule.currentIndexChanged.connect(self._rule_changed)
        form.addRow("Success rule", self.rule)
        self.hold = NumberField("s", minimum=0.0)
        self.hold.setObjectName("goal_hold")
        self.hold.committed.connect(
            lambda v: self.editor.apply(
                edits.set_goals(self.editor.scene, hold_time=v), "Edit hold time"
            )
        )
        form.addRow("Hold time", self.hold)
        lay.addLayout(form)

        lay.addWidget(_heading("Goal families (every combination of k landmarks)"))
        grid = QGridLayout()
        grid.setHorizontalSpacing(8)
        self.family_boxes: dict[int, QCheckBox] = {}
        self.family_weights: dict[int, NumberField] = {}
        for k in range(1, MAX_K + 1):
            box = QCheckBox(f"{k}-hot")
            box.setObjectName(f"family_{k}")
            box.toggled.connect(lambda on, k=k: self._family_toggled(k, on))
            weight = NumberField("", minimum=0.0)
            weight.setToolTip(f"Sampling weight of each {k}-hot goal")
            weight.setMaximumWidth(70)
            weight.committed.connect(lambda v, k=k: self._family_weight(k, v))
            row, col = divmod(k - 1, 2)  # two families a row: the goal list keeps the room
            grid.addWidget(box, row, 2 * col)
            grid.addWidget(weight, row, 2 * col + 1)
            self.family_boxes[k] = box
            self.family_weights[k] = weight
        grid.setColumnStretch(0, 1)
        grid.setColumnStretch(2, 1)
        lay.addLayout(grid)

        lay.addWidget(_heading("Explicit goals"))
        self.pick_hint = QLabel(PICK_HINT)
        self.pick_hint.setObjectName("goal_pick_hint")
        self.pick_hint.setWordWrap(True)
        self.pick_hint.setProperty("role", "muted")
        lay.addWidget(self.pick_hint)
        buttons = QHBoxLayout()
        self.pick_button = QPushButton("Pick on canvas")
        self.pick_button.setObjectName("goal_pick")
        self.pick_button.setCheckable(True)
        self.pick_button.setToolTip(
            "While on, clicking a landmark on the canvas puts it in the new goal (or takes it "
            "out); picked landmarks get a double ring with a plus. Enter or Add goal adds it."
        )
        self.pick_button.toggled.connect(self._pick_toggled)
        self.add_button = QPushButton("Add goal")
        self.add_button.setObjectName("goal_add")
        self.add_button.setToolTip(
            "Add the landmarks picked on the canvas as one goal (Pick on canvas first; "
            "landmarks already selected become the first picks)"
        )
        self.add_button.clicked.connect(self.add_from_selection)
        self.remove_button = QPushButton("Remove")
        self.remove_button.setObjectName("goal_remove")
        self.remove_button.setToolTip(
            "Remove the explicit goal chosen in the list below (goals from a k-hot family go "
            "with their family's box)"
        )
        self.remove_button.clicked.connect(self.remove_selected_vector)
        buttons.addWidget(self.pick_button)
        buttons.addWidget(self.add_button, 1)
        buttons.addWidget(self.remove_button)
        lay.addLayout(buttons)
        self.picked_label = QLabel()
        self.picked_label.setObjectName("goal_picked")
        self.picked_label.setWordWrap(True)
        lay.addWidget(self.picked_label)
        weight_row = QFormLayout()
        self.vector_weight = NumberField("", minimum=0.0)
        self.vector_weight.setObjectName("goal_vector_weight")
        self.vector_weight.setToolTip("Sampling weight of the explicit goal chosen in the list")
        self.vector_weight.committed.connect(self._vector_weight)
        weight_row.addRow("Weight of chosen goal", self.vector_weight)
        lay.addLayout(weight_row)

        self.summary = QLabel()
        self.summary.setWordWrap(True)
        lay.addWidget(_heading("All goals"))
        lay.addWidget(self.summary)
        self.table = QTableWidget(0, 4)
        self.table.setObjectName("goal_table")
        self.table.setHorizontalHeaderLabels(["Targets", "Weight", "Par time", "Status"])
        self.table.verticalHeader().setVisible(False)
        self.table.setAlternatingRowColors(True)
        self.table.setEditTriggers(QTableWidget.EditTrigger.NoEditTriggers)
        self.table.setSelectionBehavior(QTableWidget.SelectionBehavior.SelectRows)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        for c in (1, 2, 3):
            header.setSectionResizeMode(c, QHeaderView.ResizeMode.ResizeToContents)
        self.table.setMinimumHeight(150)  # a few rows always show (the dock scrolls)
        self.table.itemSelectionChanged.connect(self._row_selected)
        lay.addWidget(self.table, 1)
        self._rows: list[Any] = []

        editor.document.changed.connect(self.refresh)
        editor.selectionChanged.connect(self._update_buttons)
        editor.goalPicksChanged.connect(self._update_buttons)
        editor.toolChanged.connect(self._tool_changed)
        editor.goalAdded.connect(self.show_goal)
        self.refresh()

    # -- model -> widgets --------------------------------------------------------------
    def refresh(self) -> None:
        scene = self.editor.scene
        g = scene.goals
        self.rule.blockSignals(True)
        self.rule.setCurrentIndex(RULES.index(g.rule))
        self.rule.blockSignals(False)
        self.hold.set_value(g.hold_time)
        weights = g.family_weights or (1.0,) * len(g.families)
        fw = dict(zip(g.families, weights, strict=True))
        n = len(scene.landmarks)
        for k, box in self.family_boxes.items():
            box.blockSignals(True)
            box.setChecked(k in fw)
            box.blockSignals(False)
            box.setText(f"{k}-hot  ({math.comb(n, k)} goals)")
            self.family_weights[k].set_value(fw.get(k, 1.0))
            self.family_weights[k].setEnabled(k in fw)
        self._fill_table()
        self._update_buttons()

    def set_findings(self, findings: list[Any]) -> None:
        """Checker findings for the current scene (flags unreachable goals)."""
        self.findings = findings
        self._fill_table()

    def set_plans(self, plans: list[Any] | None) -> None:
        """Par-time plans per goal for the current scene, or None when not available."""
        self.plans = plans
        self._planned_scene = self.editor.scene
        self._fill_table()

    def _fill_table(self) -> None:
        scene = self.editor.scene
        rows = goal_rows(scene)
        self._rows = rows
        bad: dict[int, str] = {}
        for f in self.findings:
            gi = getattr(f, "goal_index", None)
            if gi is not None and getattr(f, "severity", "") in ("error", "warning"):
                bad.setdefault(gi, getattr(f, "message", "problem"))
        fresh = getattr(self, "_planned_scene", None) == scene
        plans = self.plans if fresh and self.plans is not None else None
        if plans is not None and len(plans) != len(rows):
            plans = None
        waiting = not fresh
        shown = min(len(rows), MAX_TABLE_GOALS)
        header = self.table.horizontalHeader()
        for c in (1, 2, 3):  # sized once after filling, not once per item (quadratic)
            header.setSectionResizeMode(c, QHeaderView.ResizeMode.Interactive)
        self.table.setUpdatesEnabled(False)
        self.table.setRowCount(shown)
        named = LandmarkNames.of(scene)
        names = [named.name(lm.id) for lm in scene.landmarks]
        for i, row in enumerate(rows[:shown]):
            targets = " + ".join(names[t] for t in row.targets if t < len(names))
            plan = plans[i] if plans else None
            par = "…" if waiting else "—"
            status = "ok"
            if plan is not None:
                if getattr(plan, "feasible", True) and getattr(plan, "par_time", None) is not None:
                    par = f"{plan.par_time:.1f} s"
                elif not getattr(plan, "feasible", True):
                    status = "unreachable"
            if i in bad:
                status = "unreachable"
            cells = [targets, f"{row.weight * 100:.1f} %", par, status]
            for c, text in enumerate(cells):
                item = QTableWidgetItem(text)
                if c == 3 and status != "ok":
                    item.setForeground(self.palette().brush(self.foregroundRole()))
                    item.setToolTip(bad.get(i, getattr(plan, "reason", "") or ""))
                    item.setText("⚠ unreachable")
                if c in (1, 2):
                    item.setTextAlignment(
                        Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter
                    )
                self.table.setItem(i, c, item)
        self.table.setUpdatesEnabled(True)
        for c in (1, 2, 3):
            header.setSectionResizeMode(c, QHeaderView.ResizeMode.ResizeToContents)
        ind = sum(1 for r in rows if r.kind == "individual")
        n_bad = sum(1 for i in range(shown) if self.table.item(i, 3).text() != "ok")
        text = f"{len(rows)} goals: {ind} individual, {len(rows) - ind} cooperative."
        if n_bad:
            text += f" {n_bad} cannot be reached."
        if shown < len(rows):
            text += f" The first {shown} are listed; 'arena-studio goals' lists all."
        if waiting:
            text += " Working out par times…"
        self.summary.setText(text)

    def _update_buttons(self) -> None:
        picked = self.editor.goal_picks
        picking = self.editor.tool.name == "tool.goal_pick"
        self.add_button.setEnabled(picking and bool(picked))  # only in pick mode, with picks
        names = LandmarkNames.of(self.editor.scene)
        if picked:
            text = "New goal: " + names.goal(picked)
        elif picking:
            text = "New goal: click landmarks on the canvas."
        else:
            text = ""
        self.picked_label.setText(text)
        self.picked_label.setVisible(bool(text))
        row = self._current_row()
        idx = None if row is None else self._explicit_index(row)
        self.remove_button.setEnabled(idx is not None)
        self.vector_weight.setEnabled(idx is not None)
        if idx is not None:
            g = self.editor.scene.goals
            self.vector_weight.set_value(g.vector_weights[idx] if g.vector_weights else 1.0)
        else:
            self.vector_weight.set_value(None)

    # -- widgets -> model --------------------------------------------------------------
    def _rule_changed(self, _i: int) -> None:
        self.editor.apply(
            edits.set_goals(self.editor.scene, rule=self.rule.currentData()), "Change success rule"
        )

    def _family_toggled(self, k: int, on: bool) -> None:
        g = self.editor.scene.goals
        weights = list(g.family_weights or (1.0,) * len(g.families))
        fams = list(g.families)
        if on and k not in fams:
            fams.append(k)
            weights.append(1.0)
        elif not on and k in fams:
            i = fams.index(k)
            del fams[i], weights[i]
        fw = tuple(weights) if g.family_weights is not None else None
        new = edits.set_goals(self.editor.scene, families=tuple(fams), family_weights=fw)
        self.editor.apply(new, f"{'Add' if on else 'Remove'} {k}-hot goals")

    def _family_weight(self, k: int, value: float) -> None:
        g = self.editor.scene.goals
        if k not in g.families:
            return
        weights = list(g.family_weights or (1.0,) * len(g.families))
        weights[g.families.index(k)] = value
        self.editor.apply(
            edits.set_goals(self.editor.scene, family_weights=tuple(weights)),
            f"Weight of {k}-hot goals",
        )

    def add_from_selection(self) -> None:
        """Add goal: the landmarks picked on the canvas (selected ones become the first
        picks when Pick on canvas is switched on)."""
        if self.editor.tool.name == "tool.goal_pick":
            self.editor.commit_goal_picks()

    def _pick_toggled(self, on: bool) -> None:
        want = "tool.goal_pick" if on else "tool.select"
        if on or self.editor.tool.name == "tool.goal_pick":
            self.editor.set_tool(want)
        self._update_buttons()

    def show_goal(self, vector: tuple[int, ...]) -> None:
        """Choose ``vector``'s row and scroll to it (a goal just added is at the end)."""
        for i, row in enumerate(self._rows):
            if row.vector == tuple(vector):
                self.table.selectRow(i)
                self.table.scrollToItem(self.table.item(i, 0))
                return

    def _tool_changed(self, name: str) -> None:
        self.pick_button.blockSignals(True)
        self.pick_button.setChecked(name == "tool.goal_pick")
        self.pick_button.blockSignals(False)
        self._update_buttons()

    def _vector_weight(self, value: float) -> None:
        row = self._current_row()
        idx = None if row is None else self._explicit_index(row)
        if idx is None:
            return
        g = self.editor.scene.goals
        weights = list(g.vector_weights or (1.0,) * len(g.vectors))
        weights[idx] = value
        new = edits.set_goals(self.editor.scene, vector_weights=tuple(weights))
        self.editor.apply(new, "Weight of goal")

    def _current_row(self) -> int | None:
        rows = self.table.selectionModel().selectedRows() if self.table.selectionModel() else []
        return rows[0].row() if rows else None

    def _explicit_index(self, row: int) -> int | None:
        if row >= len(self._rows):
            return None
        vec = self._rows[row].vector
        vectors = self.editor.scene.goals.vectors
        return vectors.index(vec) if vec in vectors else None

    def remove_selected_vector(self) -> None:
        row = self._current_row()
        idx = None if row is None else self._explicit_index(row)
        if idx is None:
            return
        g = self.editor.scene.goals
        vectors = g.vectors[:idx] + g.vectors[idx + 1 :]
        vw = (
            None
            if g.vector_weights is None
            else (g.vector_weights[:idx] + g.vector_weights[idx + 1 :])
        )
        self.editor.apply(
            edits.set_goals(self.editor.scene, vectors=vectors, vector_weights=vw), "Remove goal"
        )

    def _row_selected(self) -> None:
        row = self._current_row()
        targets = self._rows[row].targets if row is not None and row < len(self._rows) else ()
        self.highlight.emit(tuple(targets))
        self._update_buttons()


def scene_goal_count(scene: Scene) -> int:
    return len(goal_rows(scene))


__all__ = ["GoalsPanel", "replace", "scene_goal_count"]
