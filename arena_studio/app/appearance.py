"""Applies a theme to the whole application: Qt palette plus the style sheet template."""

from __future__ import annotations

import atexit
import re
import shutil
import tempfile
from functools import cache
from pathlib import Path

from PySide6.QtGui import QPalette
from PySide6.QtWidgets import QApplication

from arena_studio.core.resources import resource_path
from arena_studio.render.theme import Theme


@cache
def _template() -> str:
    return resource_path("style", "app.qss").read_text(encoding="utf-8")


def style_sheet(theme: Theme) -> str:
    """The template with colours filled in; ``{icon:NAME:ROLE}`` becomes the path of our SVG
    icon NAME drawn in colour ROLE (style sheets take images only as files)."""
    text = re.sub(
        r"\{icon:(\w+):(\w+)\}",
        lambda m: _icon_file(m.group(1), theme.hex(m.group(2))[:7]),
        _template(),
    )
    return re.sub(r"\{(\w+)\}", lambda m: theme.hex(m.group(1))[:7], text)


@cache
def _style_dir() -> Path:
    """A private folder for this session's recoloured icons, removed at exit."""
    folder = Path(tempfile.mkdtemp(prefix="arena_studio_style_"))
    atexit.register(shutil.rmtree, folder, True)
    return folder


def _icon_file(name: str, color: str) -> str:
    """Icon ``name`` recoloured to ``color``, written once per session; its path for url()."""
    out = _style_dir() / f"{name}_{color.lstrip('#')}.svg"
    if not out.exists():
        svg = resource_path("icons", f"{name}.svg").read_text(encoding="utf-8")
        out.write_text(svg.replace("currentColor", color), encoding="utf-8")
    return out.as_posix()


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
