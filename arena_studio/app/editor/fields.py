"""Typed, unit-labelled input fields that refuse bad values at the field.

A field parses its text when editing finishes; a bad value shows a message right below the
field and nothing is committed, so the model never holds it.
"""

from __future__ import annotations

import math
from collections.abc import Callable

from PySide6.QtCore import Signal
from PySide6.QtWidgets import QHBoxLayout, QLabel, QLineEdit, QVBoxLayout, QWidget


class Field(QWidget):
    """Line edit + unit label + message. ``committed`` fires with the parsed value."""

    committed = Signal(object)

    def __init__(self, unit: str = "", parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.edit = QLineEdit()
        self.unit = QLabel(unit)
        self.unit.setProperty("role", "muted")
        self.unit.setMinimumWidth(34 if unit else 0)
        self.message = QLabel("")
        self.message.setProperty("role", "error")
        self.message.setWordWrap(True)
        self.message.hide()
        row = QHBoxLayout()
        row.setContentsMargins(0, 0, 0, 0)
        row.addWidget(self.edit, 1)
        if unit:
            row.addWidget(self.unit)
        col = QVBoxLayout(self)
        col.setContentsMargins(0, 0, 0, 0)
        col.setSpacing(2)
        col.addLayout(row)
        col.addWidget(self.message)
        self._shown = ""
        # Optional: applies a parsed value and returns a problem text when the model refuses it.
        self.apply: Callable[[object], str | None] | None = None
        self.edit.editingFinished.connect(self.commit)

    def parse(self, text: str) -> object:  # raise ValueError with a user-facing message
        return text

    def format(self, value: object) -> str:
        return str(value)

    def set_value(self, value: object) -> None:
        text = self.format(value)
        if self.message.isHidden() or not self.edit.hasFocus():
            self._shown = text
            self.edit.setText(text)
            self.edit.setCursorPosition(0)  # long text shows its beginning
            self._clear_error()

    def commit(self) -> bool:
        text = self.edit.text()
        if text == self._shown and self.message.isHidden():
            return True
        try:
            value = self.parse(text)
        except ValueError as exc:
            self.show_error(str(exc))
            return False
        if self.apply is not None:
            problem = self.apply(value)
            if problem:
                self.show_error(problem)
                return False
        self._clear_error()
        self._shown = text
        self.committed.emit(value)
        return True

    def show_error(self, text: str) -> None:
        self.message.setText(text)
        self.message.show()
        self.edit.setProperty("invalid", True)
        self.edit.style().unpolish(self.edit)
        self.edit.style().polish(self.edit)

    def _clear_error(self) -> None:
        if not self.message.isHidden():
            self.message.hide()
            self.edit.setProperty("invalid", False)
            self.edit.style().unpolish(self.edit)
            self.edit.style().polish(self.edit)

    @property
    def error(self) -> str:
        return "" if self.message.isHidden() else self.message.text()


class NumberField(Field):
    def __init__(
        self,
        unit: str = "",
        minimum: float | None = None,
        positive: bool = False,
        optional: bool = False,
        digits: int = 3,
    ) -> None:
        super().__init__(unit)
        self.minimum, self.positive, self.optional, self.digits = (
            minimum,
            positive,
            optional,
            digits,
        )
        if optional:
            self.edit.setPlaceholderText("random")

    def parse(self, text: str) -> float | None:
        text = text.strip().replace(",", ".")
        if not text and self.optional:
            return None
        try:
            value = float(text)
        except ValueError:
            raise ValueError(f"“{text}” is not a number.") from None
        if not math.isfinite(value):
            raise ValueError("Enter a finite number.")
        if self.positive and value <= 0:
            raise ValueError("Must be greater than 0.")
        if self.minimum is not None and value < self.minimum:
            raise ValueError(f"Must be at least {self.minimum:g}.")
        return value

    def format(self, value: object) -> str:
        if value is None:
            return ""
        return f"{float(value):.{self.digits}f}".rstrip("0").rstrip(".") or "0"  # type: ignore[arg-type]


class TextField(Field):
    def __init__(self, check: Callable[[str], str | None] | None = None) -> None:
        super().__init__("")
        self.check = check

    def parse(self, text: str) -> str:
        text = text.strip()
        problem = self.check(text) if self.check else None
        if problem:
            raise ValueError(problem)
        return text
