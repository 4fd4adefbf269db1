"""Findings panel: the checker's findings with severity; clicking one shows it on the canvas."""

from __future__ import annotations

from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QColor, QIcon, QPainter, QPixmap
from PySide6.QtWidgets import QLabel, QListWidget, QListWidgetItem, QVBoxLayout, QWidget

from arena_studio.render.theme import Theme

ORDER = {"error": 0, "warning": 1, "info": 2}


def _dot(color: QColor) -> QIcon:
    pm = QPixmap(14, 14)
    pm.fill(Qt.GlobalColor.transparent)
    p = QPainter(pm)
    p.setRenderHint(QPainter.RenderHint.Antialiasing)
    p.setPen(Qt.PenStyle.NoPen)
    p.setBrush(color)
    p.drawEllipse(2, 2, 10, 10)
    p.end()
    return QIcon(pm)


class FindingsPanel(QWidget):
    activated = Signal(object)  # the Finding

    def __init__(self, theme: Theme) -> None:
        super().__init__()
        self.theme = theme
        self.summary = QLabel("Checking…")
        self.summary.setProperty("role", "muted")
        self.summary.setWordWrap(True)
        self.list = QListWidget()
        self.list.setWordWrap(True)
        self.list.setAlternatingRowColors(True)
        self.list.itemClicked.connect(self._clicked)
        self.list.itemActivated.connect(self._clicked)
        lay = QVBoxLayout(self)
        lay.setContentsMargins(8, 6, 8, 8)
        lay.addWidget(self.summary)
        lay.addWidget(self.list, 1)
        self.findings: list[object] = []

    def set_theme(self, theme: Theme) -> None:
        self.theme = theme
        self.set_findings(self.findings, None, keep_summary=True)

    def set_findings(self, findings: list[object], error: str | None, keep_summary=False) -> None:
        self.findings = sorted(findings, key=lambda f: ORDER.get(getattr(f, "severity", ""), 3))
        self.list.clear()
        for f in self.findings:
            sev = getattr(f, "severity", "info")
            item = QListWidgetItem(
                _dot(self.theme.qcolor(sev if sev in ORDER else "info")),
                getattr(f, "message", str(f)),
            )
            item.setToolTip(f"{sev}: {getattr(f, 'code', '')}")
            item.setData(Qt.ItemDataRole.UserRole, f)
            self.list.addItem(item)
        if keep_summary:
            return
        if error:
            self.summary.setText(error)
        elif not self.findings:
            self.summary.setText("No findings: the checker sees nothing wrong.")
        else:
            counts = {
                s: sum(1 for f in self.findings if getattr(f, "severity", "") == s) for s in ORDER
            }
            parts = [f"{n} {s}{'s' if n != 1 else ''}" for s, n in counts.items() if n]
            self.summary.setText(", ".join(parts) + ". Click one to show it.")

    def _clicked(self, item: QListWidgetItem) -> None:
        self.activated.emit(item.data(Qt.ItemDataRole.UserRole))
