"""Clicking an agent focuses it: it stays strong while the rest is dimmed; a second click
clears it.

Reference: pixel colours read back from the grabbed canvas, compared with the theme's
palette file (resources/palettes/light.json) and its background colour.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

from PySide6.QtCore import QPoint, QPointF, Qt

from arena_studio.core.tape import open_tape

from .test_replay_window import open_window, written_tape  # noqa: F401  (fixture)

REPO = Path(__file__).resolve().parents[2]


def _rgb(hexcode: str) -> tuple[int, int, int]:
    return tuple(int(hexcode[i : i + 2], 16) for i in (1, 3, 5))  # type: ignore[return-value]


def test_click_focuses_an_agent_and_dims_the_others(qtbot, written_tape):  # noqa: F811
    palette = json.loads((REPO / "resources/palettes/light.json").read_text())
    ep = open_tape(written_tape).episode(0)
    w = open_window(qtbot, written_tape)
    w.select_episode(0)
    assert w.wait_loaded()
    w.clock.seek(10)
    centres = [w.canvas.mapFromScene(QPointF(*ep.poses[10, a, :2])) for a in (0, 1)]
    # read the body 4 px behind its centre: the heading tick starts at the centre
    headings = [float(ep.poses[10, a, 2]) for a in (0, 1)]
    spots = [
        QPoint(round(c.x() - 4 * math.cos(h)), round(c.y() + 4 * math.sin(h)))
        for c, h in zip(centres, headings, strict=True)
    ]

    def colour_at(a: int) -> tuple[int, int, int]:
        img = w.canvas.viewport().grab().toImage()
        return img.pixelColor(spots[a]).getRgb()[:3]

    def near(c, ref, tol=14) -> bool:
        return max(abs(x - y) for x, y in zip(c, ref, strict=True)) <= tol

    ident = [_rgb(palette["identity"][a]) for a in (0, 1)]
    before = colour_at(1)
    qtbot.mouseClick(w.canvas.viewport(), Qt.MouseButton.LeftButton, pos=spots[0])
    assert w.canvas.options.focus == 0
    assert near(colour_at(0), ident[0], 40)  # the focused body keeps its colour
    assert not near(colour_at(1), before, 10)  # the other body is dimmed
    qtbot.mouseClick(w.canvas.viewport(), Qt.MouseButton.LeftButton, pos=spots[0])
    assert w.canvas.options.focus is None
    w.close()
