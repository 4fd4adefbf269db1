"""The episode list: a sortable, filterable table of every episode in the tape.

The model starts with one placeholder row per episode (just its number) so a 2,000-episode
tape shows at once; rows fill in as the summary worker delivers them. The proxy filters by a
preset ("failed cooperative", "misaligned", ...), by a goal picked in the batch view, and by
text typed into the search box (matched against goal labels and the diagnosis).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence

from PySide6.QtCore import (
    QAbstractTableModel,
    QItemSelectionModel,
    QModelIndex,
    QPersistentModelIndex,
    QSortFilterProxyModel,
    Qt,
    Signal,
)
from PySide6.QtGui import QColor, QFont, QFontMetrics
from PySide6.QtWidgets import (
    QAbstractItemView,
    QComboBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QLineEdit,
    QProgressBar,
    QStyle,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from arena_studio.app.replay.summary import EpisodeSummary

COLUMNS: tuple[tuple[str, str], ...] = (
    ("index", "#"),
    ("goal_label", "Goal"),
    ("kind", "Kind"),
    ("success", "OK"),
    ("time_to_success", "Time"),
    ("par_ratio", "Par"),
    ("aligned", "Align"),
    ("diagnosis", "Diagnosis"),
)
COL = {key: i for i, (key, _) in enumerate(COLUMNS)}
#: header tooltips: what each short header means in full
HEADER_TIPS = {
    "index": "Episode number in the tape",
    "goal_label": "Team goal: the targets the team must cover",
    "kind": "coop = cooperative goal (two or more targets), indiv = individual goal (one)",
    "success": "Whether the episode reached its goal (yes / no)",
    "time_to_success": "Time to success in seconds",
    "par_ratio": "Par time divided by time to success (1.00 = as fast as the par time)",
    "aligned": "Aligned: every agent pursued the same goal, and it was the team goal",
    "diagnosis": "What went wrong, in a word; hover a cell for the full diagnosis",
}
#: the Diagnosis column's word for each diagnosis code (the full text is the cell's tooltip)
DIAGNOSIS_WORDS = {
    "misaligned": "misaligned",
    "duplicate-target": "same target",
    "not-together": "not together",
    "time-ran-out": "out of time",
    "stuck": "stuck",
    "uncovered": "left empty",
}
#: the Kind column's compact words (the summary keeps the full ones)
KIND_SHORT = {"cooperative": "coop", "individual": "indiv"}
#: sample cell text per column: default widths fit the wider of this and the header
WIDTH_SAMPLES = {
    "index": "000",
    "goal_label": "Water tank",
    "kind": "indiv",
    "success": "yes",
    "time_to_success": "00.0",
    "par_ratio": "0.00",
    "aligned": "yes",
}
#: the Diagnosis column's least width shows its longest word
DIAGNOSIS_SAMPLE = max(DIAGNOSIS_WORDS.values(), key=len)
SORT_ROLE = Qt.ItemDataRole.UserRole + 1
SUMMARY_ROLE = Qt.ItemDataRole.UserRole + 2

#: filter presets: (label, predicate name)
PRESETS: tuple[tuple[str, str], ...] = (
    ("All episodes", "all"),
    ("Failed cooperative", "failed_cooperative"),
    ("Misaligned", "misaligned"),
    ("Failed", "failed"),
    ("Succeeded", "succeeded"),
    ("Damaged", "damaged"),
)


def _yes_no(value: bool | None) -> str:
    return "-" if value is None else ("yes" if value else "no")


class EpisodeTableModel(QAbstractTableModel):
    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self._rows: list[EpisodeSummary] = []
        self._row_of: dict[int, int] = {}
        self.fail_color: QColor | None = None  # "no" in Success/Aligned, set from the theme
        self.muted_color: QColor | None = None  # damaged rows are drawn in it (greyed)

    # -- filling -----------------------------------------------------------------------
    def reset_rows(self, summaries: Iterable[EpisodeSummary]) -> None:
        self.beginResetModel()
        self._rows = list(summaries)
        self._row_of = {s.index: r for r, s in enumerate(self._rows)}
        self.endResetModel()

    def reset_placeholders(self, count: int) -> None:
        self.reset_rows(EpisodeSummary(index=i) for i in range(count))

    def update_rows(self, summaries: Sequence[EpisodeSummary]) -> None:
        """Replace rows by episode index (one dataChanged for the touched span)."""
        touched: list[int] = []
        appended: list[EpisodeSummary] = []
        for s in summaries:
            r = self._row_of.get(s.index)
            if r is None:
                appended.append(s)
            else:
                self._rows[r] = s
                touched.append(r)
        if touched:
            top, bottom = min(touched), max(touched)
            self.dataChanged.emit(self.index(top, 0), self.index(bottom, len(COLUMNS) - 1))
        if appended:
            first = len(self._rows)
            self.beginInsertRows(QModelIndex(), first, first + len(appended) - 1)
            for s in appended:
                self._row_of[s.index] = len(self._rows)
                self._rows.append(s)
            self.endInsertRows()

    def summaries(self) -> list[EpisodeSummary]:
        return list(self._rows)

    def summary_at(self, row: int) -> EpisodeSummary:
        return self._rows[row]

    # -- Qt model API ------------------------------------------------------------------
    def rowCount(self, parent=QModelIndex()) -> int:  # noqa: B008
        return 0 if parent.isValid() else len(self._rows)

    def columnCount(self, parent=QModelIndex()) -> int:  # noqa: B008
        return 0 if parent.isValid() else len(COLUMNS)

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):
        if orientation != Qt.Orientation.Horizontal:
            return None
        if role == Qt.ItemDataRole.DisplayRole:
            return COLUMNS[section][1]
        if role == Qt.ItemDataRole.ToolTipRole:
            return HEADER_TIPS.get(COLUMNS[section][0])
        return None

    def data(self, index: QModelIndex | QPersistentModelIndex, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        s = self._rows[index.row()]
        key = COLUMNS[index.column()][0]
        if role == SUMMARY_ROLE:
            return s
        if s.damage is not None and role != SORT_ROLE:
            return self._damaged_data(s, key, role)
        if role == SORT_ROLE:
            value = getattr(s, key)
            if value is None or value == "":
                return None
            return float(value) if isinstance(value, bool) else value
        if role == Qt.ItemDataRole.DisplayRole:
            if key == "index":
                return str(s.index)
            if not s.loaded:
                return "…" if key == "goal_label" else ""
            value = getattr(s, key)
            if key in ("success", "aligned"):
                return _yes_no(value)
            if key == "time_to_success":
                return "-" if value is None else f"{value:.1f}"
            if key == "par_ratio":
                return "-" if value is None else f"{value:.2f}"
            if key == "kind":
                return KIND_SHORT.get(value, "-" if value in (None, "") else str(value))
            if key == "diagnosis" and s.diagnosis_code in DIAGNOSIS_WORDS:
                return DIAGNOSIS_WORDS[s.diagnosis_code]
            return "-" if value in (None, "") else str(value)
        if role == Qt.ItemDataRole.ToolTipRole and key == "diagnosis" and s.diagnosis:
            return s.diagnosis
        if (
            role == Qt.ItemDataRole.ForegroundRole
            and self.fail_color is not None
            and key in ("success", "aligned")
            and getattr(s, key) is False
        ):
            return self.fail_color
        if role == Qt.ItemDataRole.ToolTipRole and key == "goal_label" and s.loaded:
            return s.goal_label
        if role == Qt.ItemDataRole.TextAlignmentRole and key in (
            "index",
            "time_to_success",
            "par_ratio",
        ):
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        return None

    def _damaged_data(self, s: EpisodeSummary, key: str, role: int) -> object:
        """A damaged episode's row: greyed and italic, the reason in the Diagnosis column
        and as every cell's tooltip; no metrics."""
        if role == Qt.ItemDataRole.DisplayRole:
            if key == "index":
                return str(s.index)
            if key == "goal_label":
                return "damaged"
            return f"Damaged: {s.damage}" if key == "diagnosis" else ""
        if role == Qt.ItemDataRole.ToolTipRole:
            return f"Episode {s.index} is damaged and cannot be shown: {s.damage}"
        if role == Qt.ItemDataRole.ForegroundRole:
            return self.muted_color
        if role == Qt.ItemDataRole.FontRole:
            font = QFont()
            font.setItalic(True)
            return font
        return None


class EpisodeFilterProxy(QSortFilterProxyModel):
    """Preset + goal + text filter; sorts by raw values with blanks last."""

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self._preset = "all"
        self._goal: tuple[int, ...] | None = None
        self._text = ""
        self.setSortRole(SORT_ROLE)
        self.setDynamicSortFilter(True)

    def set_preset(self, preset: str) -> None:
        if preset not in {name for _, name in PRESETS}:
            raise ValueError(f"unknown episode filter {preset!r}")
        self._refilter(lambda: setattr(self, "_preset", preset))

    def set_goal(self, goal: tuple[int, ...] | None) -> None:
        self._refilter(lambda: setattr(self, "_goal", None if goal is None else tuple(goal)))

    def set_text(self, text: str) -> None:
        self._refilter(lambda: setattr(self, "_text", text.strip().lower()))

    def _refilter(self, change) -> None:
        """Apply a filter change the way Qt 6.9+ asks (begin/end around the change)."""
        self.beginFilterChange()
        change()
        self.endFilterChange(QSortFilterProxyModel.Direction.Rows)

    @property
    def goal(self) -> tuple[int, ...] | None:
        return self._goal

    def accepts(self, s: EpisodeSummary) -> bool:
        if self._goal is not None and s.goal != self._goal:
            return False
        if self._text:
            hay = f"{s.goal_label} {s.diagnosis or ''} {s.search_ids} {s.damage or ''}".lower()
            if not all(word in hay for word in self._text.split()):
                return False
        p = self._preset
        if p == "failed_cooperative":
            return s.failed_cooperative
        if p == "misaligned":
            return s.aligned is False
        if p == "failed":
            return s.success is False
        if p == "succeeded":
            return s.success is True
        if p == "damaged":
            return s.damage is not None
        return True

    def filterAcceptsRow(self, source_row: int, source_parent) -> bool:
        model = self.sourceModel()
        assert isinstance(model, EpisodeTableModel)
        return self.accepts(model.summary_at(source_row))

    def lessThan(self, left, right) -> bool:
        a, b = left.data(SORT_ROLE), right.data(SORT_ROLE)
        if a is None or b is None:  # blanks sort after values in ascending order
            return a is not None and b is None
        if type(a) is not type(b):
            return str(a) < str(b)
        return a < b


class EpisodeListPanel(QWidget):
    """Dock contents: preset box, search box, progress bar and the table."""

    episodeActivated = Signal(int)  # episode index (not row)

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self.model = EpisodeTableModel(self)
        self.proxy = EpisodeFilterProxy(self)
        self.proxy.setSourceModel(self.model)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        row = QHBoxLayout()
        self.preset_box = QComboBox(self)
        for label, name in PRESETS:
            self.preset_box.addItem(label, name)
        self.preset_box.currentIndexChanged.connect(
            lambda i: self.proxy.set_preset(self.preset_box.itemData(i))
        )
        self.search = QLineEdit(self)
        self.search.setPlaceholderText("Search goal labels or diagnosis")
        self.search.setClearButtonEnabled(True)
        self.search.textChanged.connect(self.proxy.set_text)
        row.addWidget(self.preset_box)
        row.addWidget(self.search, 1)
        layout.addLayout(row)
        self.goal_note = QLabel(self)
        self.goal_note.setVisible(False)
        self.goal_note.linkActivated.connect(lambda _link: self.set_goal_filter(None, ""))
        layout.addWidget(self.goal_note)
        self.progress = QProgressBar(self)
        self.progress.setVisible(False)
        self.progress.setFormat("Computing metrics: %v / %m episodes")
        layout.addWidget(self.progress)
        self.table = QTableView(self)
        self.table.setModel(self.proxy)
        self.table.setSortingEnabled(True)
        self.table.sortByColumn(COL["index"], Qt.SortOrder.AscendingOrder)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setAlternatingRowColors(True)
        self.table.verticalHeader().setVisible(False)
        self.table.verticalHeader().setDefaultSectionSize(22)
        self.table.setWordWrap(False)
        self.table.setTextElideMode(Qt.TextElideMode.ElideMiddle)  # "Water…bench", tooltip full
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        self._size_columns()
        # the goal takes what is left: its labels are the long texts (diagnoses are a word)
        header.setSectionResizeMode(COL["goal_label"], QHeaderView.ResizeMode.Stretch)
        layout.addWidget(self.table, 1)
        self.count_label = QLabel(self)
        layout.addWidget(self.count_label)
        self.table.selectionModel().currentRowChanged.connect(self._on_current)
        self.proxy.rowsInserted.connect(self._update_count)
        self.proxy.rowsRemoved.connect(self._update_count)
        self.proxy.modelReset.connect(self._update_count)
        self.proxy.layoutChanged.connect(self._update_count)
        self._update_count()

    def _size_columns(self) -> None:
        """Widths from the fonts in use: each column as wide as its sample text or its
        header, whichever is wider, so the list fits a ~400 px dock with Diagnosis shown."""
        header = self.table.horizontalHeader()
        bold = QFont(header.font())
        bold.setBold(True)  # some styles draw header titles bold
        cell, head = self.table.fontMetrics(), QFontMetrics(bold)
        style = header.style()
        margin = style.pixelMetric(QStyle.PixelMetric.PM_HeaderMargin, None, header)
        mark = style.pixelMetric(QStyle.PixelMetric.PM_HeaderMarkSize, None, header)
        samples = {**WIDTH_SAMPLES, "diagnosis": DIAGNOSIS_SAMPLE}
        for key, sample in samples.items():
            title = COLUMNS[COL[key]][1]
            width = max(
                cell.horizontalAdvance(sample) + 12,
                head.horizontalAdvance(title) + 2 * margin + mark // 2 + 4,
            )
            self.table.setColumnWidth(COL[key], width)
        header.setMinimumSectionSize(min(self.table.columnWidth(c) for c in range(len(COLUMNS))))

    def preferred_width(self) -> int:
        """Width the panel needs to show every column whole (the dock's first width)."""
        columns = sum(self.table.columnWidth(c) for c in range(len(COLUMNS)))
        scroll = self.table.verticalScrollBar().sizeHint().width()
        m = self.layout().contentsMargins()
        return columns + scroll + 2 * self.table.frameWidth() + m.left() + m.right() + 2

    def set_theme(self, theme) -> None:
        self.model.fail_color = theme.qcolor("error")
        self.model.muted_color = theme.qcolor("text_muted")
        self.table.viewport().update()

    # -- filters -----------------------------------------------------------------------
    def set_preset(self, preset: str) -> None:
        for i in range(self.preset_box.count()):
            if self.preset_box.itemData(i) == preset:
                self.preset_box.setCurrentIndex(i)
                return
        raise ValueError(f"unknown episode filter {preset!r}")

    def set_goal_filter(self, goal: tuple[int, ...] | None, label: str) -> None:
        self.proxy.set_goal(goal)
        if goal is None:
            self.goal_note.setVisible(False)
        else:
            self.goal_note.setText(f"Only goal <b>{label}</b> &nbsp; <a href='clear'>show all</a>")
            self.goal_note.setVisible(True)
        self._update_count()

    # -- selection ---------------------------------------------------------------------
    def select_episode(self, index: int) -> bool:
        """Select the row of episode ``index`` (if the filter shows it)."""
        for r in range(self.proxy.rowCount()):
            s = self.proxy.index(r, 0).data(SUMMARY_ROLE)
            if s.index == index:
                self.table.selectionModel().setCurrentIndex(
                    self.proxy.index(r, 0),
                    QItemSelectionModel.SelectionFlag.ClearAndSelect
                    | QItemSelectionModel.SelectionFlag.Rows,
                )
                self.table.scrollTo(self.proxy.index(r, 0))
                return True
        return False

    def visible_summaries(self) -> list[EpisodeSummary]:
        return [self.proxy.index(r, 0).data(SUMMARY_ROLE) for r in range(self.proxy.rowCount())]

    def _on_current(self, current: QModelIndex, _previous: QModelIndex) -> None:
        if current.isValid():
            self.episodeActivated.emit(int(current.data(SUMMARY_ROLE).index))

    def _update_count(self, *_: object) -> None:
        shown, total = self.proxy.rowCount(), self.model.rowCount()
        self.count_label.setText(
            f"{total} episodes" if shown == total else f"{shown} of {total} episodes shown"
        )

    # -- progress ----------------------------------------------------------------------
    def set_progress(self, done: int, total: int) -> None:
        self.progress.setMaximum(max(total, 1))
        self.progress.setValue(done)
        self.progress.setVisible(done < total)
        self._update_count()
