"""The runs page: a sweep of tapes as learning curves, a final comparison and a goal heat map.

Left: curves of the chosen metric per condition (IQM over seeds with a stratified bootstrap
band), and below them success and alignment of one condition on one plot (which rises
first). Right: the final step (intervals and the probability-of-improvement matrix), the
success of each goal over steps for one condition, and the tapes behind the point or cell
last clicked; opening one shows it in the replay with its failed cooperative episodes first.
The folder is watched: tapes that appear (a training job still writing) are added when they
are finished.
"""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path
from typing import Any, cast

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QFileSystemWatcher, Qt, QTimer, Signal
from PySide6.QtWidgets import (
    QComboBox,
    QHBoxLayout,
    QLabel,
    QListWidget,
    QListWidgetItem,
    QProgressBar,
    QPushButton,
    QSplitter,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from arena_studio.app.runs.loading import SweepData, SweepLoader
from arena_studio.core.runs import Settings, curve_rows, final_comparison, metric_names
from arena_studio.core.runs.analysis import Run, goal_matrix
from arena_studio.core.wording import LandmarkNames
from arena_studio.render.theme import Theme, load_theme

#: bootstrap replicates drawn at once after every change (the app stays responsive) ...
FIRST_REPS = 500
#: ... then refined to the CLI's count when the user pauses (same seed, so the same bands)
APP_REPS = 10_000
REFINE_MS = 400
PEN_STYLES = (
    Qt.PenStyle.SolidLine,
    Qt.PenStyle.DashLine,
    Qt.PenStyle.DotLine,
    Qt.PenStyle.DashDotLine,
)
SYMBOLS = ("o", "s", "t", "d", "+", "x")
RELOAD_MS = 800
HEAT_FLOOR = 0.12


def _fmt(v: float) -> str:
    return "–" if not math.isfinite(v) else f"{v:.2f}"


class RunsPage(QWidget):
    """A main-window page; ``open_folder(path)`` loads a sweep in the background."""

    openTape = Signal(str, object)  # tape path, failed cooperative episode indices
    statusMessage = Signal(str)

    def __init__(self, theme: Theme | str = "light", parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("Runs")
        self.theme = load_theme(theme) if isinstance(theme, str) else theme
        self.settings = Settings(reps=APP_REPS)
        self.shown_reps = 0  # replicates behind the bands on screen
        self._refine = QTimer(self)
        self._refine.setSingleShot(True)
        self._refine.setInterval(REFINE_MS)
        self._refine.timeout.connect(lambda: self._refresh(self.settings.reps))
        self.root: Path | None = None
        self.data: SweepData | None = None
        self.rows: list[Any] = []
        self.final: Any = None
        self._groups: list[str] = []
        self.loader = SweepLoader(self)
        self.loader.progress.connect(self._on_progress)
        self.loader.loaded.connect(self._on_loaded)
        self.loader.failed.connect(self._on_failed)
        self.watcher = QFileSystemWatcher(self)
        self._reload_timer = QTimer(self)
        self._reload_timer.setSingleShot(True)
        self._reload_timer.setInterval(RELOAD_MS)
        self._reload_timer.timeout.connect(self.reload)
        self.watcher.directoryChanged.connect(lambda _p: self._reload_timer.start())
        self._build()
        self.set_theme(self.theme)

    # -- building ------------------------------------------------------------------------
    def _build(self) -> None:
        layout = QVBoxLayout(self)
        layout.setContentsMargins(6, 6, 6, 6)
        bar = QHBoxLayout()
        self.folder_label = QLabel("No sweep open: File > Open Folder…")
        self.metric_box = QComboBox()
        self.metric_box.setMinimumContentsLength(16)
        self.metric_box.currentTextChanged.connect(lambda _t: self._refresh())
        self.group_box = QComboBox()
        self.group_box.setMinimumContentsLength(12)
        self.group_box.currentTextChanged.connect(lambda _t: self._refresh_group())
        self.progress = QProgressBar()
        self.progress.setMaximumWidth(180)
        self.progress.setVisible(False)
        self.export_button = QPushButton("Export Figure…")
        self.export_button.setEnabled(False)
        bar.addWidget(self.folder_label, 1)
        bar.addWidget(QLabel("Metric"))
        bar.addWidget(self.metric_box)
        bar.addWidget(QLabel("Condition"))
        bar.addWidget(self.group_box)
        bar.addWidget(self.progress)
        bar.addWidget(self.export_button)
        layout.addLayout(bar)
        split = QSplitter(Qt.Orientation.Horizontal)
        left = QSplitter(Qt.Orientation.Vertical)
        self.curves = pg.PlotWidget()
        self.curves.addLegend(offset=(8, 8))
        self.curves.setLabel("bottom", "step")
        self.pair = pg.PlotWidget()
        self.pair.addLegend(offset=(8, 8))
        self.pair.setLabel("bottom", "step")
        left.addWidget(self.curves)
        left.addWidget(self.pair)
        left.setSizes([600, 300])
        right = QSplitter(Qt.Orientation.Vertical)
        self.final_table = QTableWidget(0, 6)
        self.final_table.setHorizontalHeaderLabels(
            ["condition", "step", "IQM", "low", "high", "runs"]
        )
        self.final_table.verticalHeader().setVisible(False)
        self.matrix = QTableWidget(0, 0)
        self.matrix.setToolTip("P(row condition > column condition) at the final step")
        self.heat = pg.PlotWidget()
        self.heat.setMouseEnabled(x=False, y=False)
        self.heat.hideButtons()
        self.heat_image = pg.ImageItem()
        self.heat.addItem(self.heat_image)
        self.heat.scene().sigMouseClicked.connect(self._on_heat_click)
        tapes = QWidget()
        tl = QVBoxLayout(tapes)
        tl.setContentsMargins(0, 0, 0, 0)
        self.tapes_label = QLabel("Click a point or a cell to list its tapes.")
        self.tape_list = QListWidget()
        self.tape_list.itemActivated.connect(lambda _i: self.open_selected_tape())
        self.open_button = QPushButton("Open in Replay")
        self.open_button.clicked.connect(self.open_selected_tape)
        tl.addWidget(self.tapes_label)
        tl.addWidget(self.tape_list, 1)
        tl.addWidget(self.open_button)
        for w in (self.final_table, self.matrix, self.heat, tapes):
            right.addWidget(w)
        right.setSizes([150, 150, 270, 170])
        split.addWidget(left)
        split.addWidget(right)
        split.setSizes([760, 480])
        layout.addWidget(split, 1)

    # -- loading -------------------------------------------------------------------------
    def open_folder(self, path: str | Path) -> None:
        self.root = Path(path)
        self.folder_label.setText(f"{self.root}: loading…")
        self.progress.setVisible(True)
        self.progress.setRange(0, 0)
        self.loader.load(self.root)

    def reload(self) -> None:
        """Load the open folder again (the cache makes unchanged tapes free)."""
        if self.root is not None:
            self.loader.load(self.root)

    def wait_loaded(self, timeout_ms: int = 60000) -> bool:
        """Block until the newest load has been shown (tests and screenshots)."""
        from PySide6.QtCore import QCoreApplication, QDeadlineTimer

        deadline = QDeadlineTimer(timeout_ms)
        while self._pending() and not deadline.hasExpired():
            QCoreApplication.processEvents()
            self.loader.wait(0.02)
        QCoreApplication.processEvents()
        self.finish_refining()
        return not self._pending()

    def finish_refining(self) -> None:
        """Refine the bands now instead of after the pause (screenshots, tests, export)."""
        if self._refine.isActive():
            self._refine.stop()
            self._refresh(self.settings.reps)

    def _pending(self) -> bool:
        return self._shown_token != self.loader.latest

    _shown_token = 0

    def _on_progress(self, token: int, done: int, total: int) -> None:
        if token == self.loader.latest:
            self.progress.setRange(0, max(total, 1))
            self.progress.setValue(done)

    def _on_failed(self, token: int, message: str) -> None:
        if token != self.loader.latest:
            return
        self._shown_token = token
        self.progress.setVisible(False)
        self.folder_label.setText(f"{self.root}: {message}")
        self.statusMessage.emit(message)

    def _on_loaded(self, token: int, data: SweepData) -> None:
        if token != self.loader.latest:
            return
        self._shown_token = token
        self.data = data
        self.progress.setVisible(False)
        folders = [str(f) for f in data.folders]
        old = set(self.watcher.directories())
        if old - set(folders):
            self.watcher.removePaths(list(old - set(folders)))
        new = [f for f in folders if f not in old]
        if new:
            self.watcher.addPaths(new)
        text = f"{data.root}: {len(data.runs)} tapes"
        if data.recording:
            text += f", {len(data.recording)} recording"
        if data.problems:
            text += f", {len(data.problems)} with problems"
        self.folder_label.setText(text)
        self.folder_label.setToolTip("\n".join(data.problems[:20]))
        self._fill_boxes()
        self._refresh()
        self.statusMessage.emit(text)

    def _fill_boxes(self) -> None:
        assert self.data is not None
        names = metric_names(self.data.runs)
        groups = sorted({str(r.key("condition")) for r in self.data.runs})
        for box, items, prefer in (
            (self.metric_box, names, "success"),
            (self.group_box, groups, None),
        ):
            current = box.currentText()
            box.blockSignals(True)
            box.clear()
            box.addItems(items)
            keep = current if current in items else (prefer if prefer in items else None)
            if keep:
                box.setCurrentText(keep)
            box.blockSignals(False)

    # -- drawing -------------------------------------------------------------------------
    @property
    def runs(self) -> list[Run]:
        return [] if self.data is None else self.data.runs

    def _refresh(self, reps: int | None = None) -> None:
        """Draw with a quick bootstrap first, then refine it when the user pauses."""
        metric = self.metric_box.currentText()
        if not self.runs or not metric:
            return
        reps = min(FIRST_REPS, self.settings.reps) if reps is None else reps
        settings = replace(self.settings, reps=reps)
        self.rows = curve_rows(self.runs, metric, "condition", settings)
        self.final = final_comparison(self.runs, metric, "condition", None, settings)
        self.shown_reps = reps
        if reps < self.settings.reps:
            self._refine.start()
        self._groups = list(dict.fromkeys(r.group for r in self.rows))
        self._draw_curves(metric)
        self._fill_final()
        self._refresh_group()
        self.export_button.setEnabled(True)

    def _refresh_group(self) -> None:
        if self.runs:
            self._draw_pair()
            self._draw_heat()

    def group_pen(self, i: int, width: float = 2.0) -> Any:
        return pg.mkPen(self.theme.agent_color(i), width=width, style=PEN_STYLES[i % 4])

    def _draw_curves(self, metric: str) -> None:
        plot = self.curves.getPlotItem()
        plot.clear()
        refining = "" if self.shown_reps >= self.settings.reps else ", refining"
        plot.setLabel(
            "left",
            f"{metric} (IQM, {100 * self.settings.confidence:g}% band, "
            f"{self.shown_reps:,} resamples{refining})",
        )
        for i, group in enumerate(self._groups):
            mine = [r for r in self.rows if r.group == group]
            xs = np.array([r.step for r in mine], dtype=float)
            low = pg.PlotDataItem(xs, [r.ci_low for r in mine], pen=pg.mkPen(None))
            high = pg.PlotDataItem(xs, [r.ci_high for r in mine], pen=pg.mkPen(None))
            band = pg.FillBetweenItem(low, high, brush=self.theme.agent_color(i, 0.18))
            plot.addItem(band)
            line = plot.plot(
                xs,
                [r.iqm for r in mine],
                pen=self.group_pen(i),
                symbol=SYMBOLS[i % len(SYMBOLS)],
                symbolSize=8,
                symbolBrush=self.theme.agent_color(i),
                name=group,
            )
            line.sigPointsClicked.connect(
                lambda _item, points, _ev, g=group: self._on_point(g, points)
            )

    def _draw_pair(self) -> None:
        plot = self.pair.getPlotItem()
        plot.clear()
        group = self.group_box.currentText()
        plot.setTitle(
            f"success and alignment of {group} (IQM)", size="9pt", color=self.theme.hex("text")
        )
        mine = [r for r in self.runs if str(r.key("condition")) == group]
        for i, metric in enumerate(("success", "alignment")):
            rows = curve_rows(mine, metric, "condition", Settings(reps=1))
            plot.plot(
                [r.step for r in rows],
                [r.iqm for r in rows],
                pen=pg.mkPen(self.theme.hex("text"), width=2, style=PEN_STYLES[i * 2]),
                symbol=SYMBOLS[i],
                symbolBrush=self.theme.hex("text"),
                symbolSize=7,
                name=metric,
            )

    def _fill_final(self) -> None:
        final = self.final
        self.final_table.setRowCount(len(final.rows))
        for i, r in enumerate(final.rows):
            values = [
                r.group,
                str(r.step),
                _fmt(r.iqm),
                _fmt(r.ci_low),
                _fmt(r.ci_high),
                str(r.runs),
            ]
            for j, text in enumerate(values):
                item = QTableWidgetItem(text)
                item.setFlags(item.flags() & ~Qt.ItemFlag.ItemIsEditable)
                self.final_table.setItem(i, j, item)
        self.final_table.resizeColumnsToContents()
        names = [r.group for r in final.rows]
        self.matrix.setRowCount(len(names))
        self.matrix.setColumnCount(len(names))
        self.matrix.setHorizontalHeaderLabels(names)
        self.matrix.setVerticalHeaderLabels([f"P({n} >" for n in names])
        for i, a in enumerate(names):
            for j, b in enumerate(names):
                p = final.improvement.get((a, b), float("nan"))
                item = QTableWidgetItem("" if a == b else _fmt(p))
                item.setFlags(item.flags() & ~Qt.ItemFlag.ItemIsEditable)
                item.setTextAlignment(Qt.AlignmentFlag.AlignCenter)
                self.matrix.setItem(i, j, item)
        self.matrix.resizeColumnsToContents()

    def _draw_heat(self) -> None:
        group = self.group_box.currentText()
        self.heat_data = goal_matrix(self.runs, group)
        m = self.heat_data
        plot = self.heat.getPlotItem()
        title = f"success per goal, {group} (0 pale, 1 strong)"
        plot.setTitle(title, size="9pt", color=self.theme.hex("text"))
        if not m.goals or not m.steps:
            self.heat_image.clear()
            return
        self.heat_image.setImage(self._heat_rgba(m.values), autoLevels=False)
        self.heat_image.setRect(0, 0, len(m.steps), len(m.goals))
        names = self._names()
        plot.getAxis("left").setTicks([[(i + 0.5, names.goal(g)) for i, g in enumerate(m.goals)]])
        every = max(1, len(m.steps) // 6)
        plot.getAxis("bottom").setTicks(
            [[(j + 0.5, str(s)) for j, s in enumerate(m.steps) if j % every == 0]]
        )
        plot.setRange(xRange=(0, len(m.steps)), yRange=(0, len(m.goals)), padding=0)

    def _heat_rgba(self, values: np.ndarray) -> np.ndarray:
        """(steps, goals, 4) image: a lightness ramp from the background to the text colour
        (readable in greyscale); cells without runs are transparent."""
        # getRgb() is a 4-tuple of ints (the stubs say object)
        lo = np.array(cast(Any, self.theme.qcolor("room_fill").getRgb())[:3], dtype=float)
        hi = np.array(cast(Any, self.theme.qcolor("info").getRgb())[:3], dtype=float)
        v = values.T[..., None]
        # 0 success is a visible tint, unlike a cell with no episodes of that goal
        rgb = lo + (hi - lo) * (HEAT_FLOOR + (1 - HEAT_FLOOR) * np.nan_to_num(v, nan=0.0))
        alpha = np.where(np.isfinite(v), 255.0, 0.0)
        return np.concatenate([rgb, alpha], axis=-1).astype(np.uint8)

    # -- clicks and tapes ----------------------------------------------------------------
    def _on_point(self, group: str, points: Any) -> None:
        if len(points):
            self.select_cell(group, round(points[0].pos().x()))

    def _on_heat_click(self, event: Any) -> None:
        m = getattr(self, "heat_data", None)
        if m is None or not m.steps:
            return
        pos = self.heat.getPlotItem().vb.mapSceneToView(event.scenePos())
        j, i = math.floor(pos.x()), math.floor(pos.y())
        if 0 <= j < len(m.steps) and 0 <= i < len(m.goals):
            self.select_cell(self.group_box.currentText(), m.steps[j], goal=m.goals[i])

    def select_cell(self, group: str, step: int, goal: str | None = None) -> list[Run]:
        """List the tapes of ``group`` at ``step`` (worst first); returns their runs."""
        metric = f"goal:{goal}" if goal else self.metric_box.currentText()
        runs = [
            r for r in self.runs if str(r.key("condition")) == group and int(r.key("step")) == step
        ]
        runs.sort(key=lambda r: (np.nan_to_num(r.value(metric), nan=-1.0), str(r.tape.path)))
        self.tape_list.clear()
        for r in runs:
            failed = r.figures.failed_cooperative
            text = (
                f"seed {r.key('seed')}  {self._metric_words(metric)} {_fmt(r.value(metric))}  "
                f"{len(failed)} failed cooperative  {r.tape.path.name}"
            )
            item = QListWidgetItem(text)
            item.setData(Qt.ItemDataRole.UserRole, (str(r.tape.path), list(failed)))
            item.setToolTip(str(r.tape.path))
            self.tape_list.addItem(item)
        where = f"{group} at step {step}" + (f", goal {self._names().goal(goal)}" if goal else "")
        self.tapes_label.setText(f"{len(runs)} tape(s) of {where}, worst first")
        if runs:
            self.tape_list.setCurrentRow(0)
        return runs

    def _names(self) -> LandmarkNames:
        """The sweep's landmark names (goals are stored as ids joined by "+")."""
        return LandmarkNames(()) if self.data is None else self.data.names

    def _metric_words(self, metric: str) -> str:
        """A figure's name as a person reads it: "goal:a+b" -> "goal A + B"."""
        if metric.startswith("goal:"):
            return f"goal {self._names().goal(metric[5:])}"
        return metric

    def open_selected_tape(self) -> None:
        item = self.tape_list.currentItem()
        if item is not None:
            path, failed = item.data(Qt.ItemDataRole.UserRole)
            self.openTape.emit(path, failed)

    # -- export and theme ----------------------------------------------------------------
    def export_figure(self, path: str | Path) -> None:
        """The curves and final intervals shown, as SVG/PNG/PDF (matplotlib)."""
        from arena_studio.render.runs_figure import save_runs_figure

        self.finish_refining()
        save_runs_figure(path, self.rows, self.final, self.settings)

    def set_theme(self, theme: Theme | str) -> None:
        self.theme = load_theme(theme) if isinstance(theme, str) else theme
        bg, fg = self.theme.qcolor("room_fill"), self.theme.qcolor("text")
        for w in (self.curves, self.pair, self.heat):
            w.setBackground(bg)
            item = w.getPlotItem()
            for axis in ("left", "bottom"):
                item.getAxis(axis).setPen(fg)
                item.getAxis(axis).setTextPen(fg)
            item.showGrid(x=w is not self.heat, y=w is not self.heat, alpha=0.15)
            if item.legend is not None:  # pyqtgraph's default grey reads faintly on white
                item.legend.setLabelTextColor(fg)
        if self.runs:
            self._refresh()
