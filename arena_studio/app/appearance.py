"""Applies a theme to the whole application: Qt palette plus the style sheet template."""

from __future__ import annotations

import re
from functools import cache

from PySide6.QtGui import QPalette
from PySide6.QtWidgets import QApplication

from ..core.resources import resource_path
from ..render.theme import Theme


@cache
def _template() -> str:
    return resource_path("style", "app.qss").read_text(encoding="utf-8")


def style_sheet(theme: Theme) -> str:
    return re.sub(r"\{(\w+)\}", lambda m: theme.hex(m.group(1))[:7], _template())


def palette(theme: Theme) -> QPalette:
    pal = QPalette()
    r = QPalette.ColorRole
    c = theme.qcolor
    pal.setColor(r.Window, c("ui_window"))
    pal.setColor(r.WindowText, c("text"))
    pal.setColor(r.Base, c("ui_base"))
    pal.setColor(r.AlternateBase, c("ui_alt_base"))
    pal.setColor(r.Text, c("text"))
    pal.setColor(r.Button, c("ui_button"))
    pal.setColor(r.ButtonText, c("text"))
    pal.setColor(r.ToolTipBase, c("ui_base"))
    pal.setColor(r.ToolTipText, c("text"))
    pal.setColor(r.PlaceholderText, c("text_muted"))
    pal.setColor(r.Highlight, c("ui_highlight"))
    pal.setColor(r.HighlightedText, c("ui_highlight_text"))
    pal.setColor(r.Mid, c("ui_border"))
    pal.setColor(r.Dark, c("ui_border"))
    pal.setColor(r.Light, c("ui_base"))
    for role in (r.WindowText, r.Text, r.ButtonText):
        pal.setColor(QPalette.ColorGroup.Disabled, role, c("text_muted"))
    return pal


def apply_theme(app: QApplication, theme: Theme) -> None:
    app.setStyle("Fusion")
    app.setPalette(palette(theme))
    app.setStyleSheet(style_sheet(theme))
