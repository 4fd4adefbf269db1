"""A part of the scene that cannot be drawn keeps the app running: the window draws the
rest, the status bar says what could not be drawn (once), the document stays open.

The failure is the one GEOS raised while placing labels around an obstacle with a vertex at
-1e308 (measured: "TopologyException: depth mismatch"), injected so the test does not hang
on where GEOS happens to give up.
"""

from __future__ import annotations

import pytest
from shapely.errors import GEOSException

from arena_studio.render import paint_guard, scene_painter
from tests.conftest import SCENES


def test_drawing_problem_goes_to_the_status_bar(
    main_window, qtbot, capsys, monkeypatch: pytest.MonkeyPatch
) -> None:
    def broken(*_args, **_kwargs) -> None:
        raise GEOSException("TopologyException: depth mismatch")

    monkeypatch.setattr(scene_painter, "paint_landmarks", broken)
    paint_guard.reset_reports()
    assert main_window.open_path(SCENES / "greenhouse.scene.json")
    main_window.canvas.viewport().grab()  # paints now
    qtbot.waitUntil(lambda: "Drawing problem" in main_window.message_label.text())
    assert "could not draw the landmarks" in main_window.message_label.text()
    assert capsys.readouterr().err.count("could not draw the landmarks") == 1
    main_window.canvas.viewport().grab()  # a second paint says nothing new
    assert "could not draw" not in capsys.readouterr().err
    assert main_window.isVisible() and main_window.document.path is not None
    paint_guard.reset_reports()
