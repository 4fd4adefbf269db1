"""The hover card sits beside the body inside the canvas, and does not follow an agent
away from the pointer when the time changes.

Reference: the tape's recorded poses (the same episode read with core.tape.open_tape)
mapped by Qt's QGraphicsView.mapFromScene, and QRect.contains for "inside the canvas".
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import QPointF, QRect

from arena_studio.app.replay.replay_canvas import CARD_H, CARD_W
from arena_studio.core.tape import open_tape

from .test_replay_window import open_window, written_tape  # noqa: F401  (fixture)


def test_card_beside_body_inside_canvas_and_dropped_when_the_agent_moves_on(
    qtbot,
    written_tape,  # noqa: F811
):
    ep = open_tape(written_tape).episode(0)
    w = open_window(qtbot, written_tape)
    w.select_episode(0)
    assert w.wait_loaded()
    w.clock.seek(10)
    x, y, _ = ep.poses[10, 0]
    body = w.canvas.mapFromScene(QPointF(x, y))
    anchor = w.canvas.card_anchor(0)
    card = QRect(anchor.x(), anchor.y(), CARD_W, CARD_H)
    assert w.canvas.viewport().rect().contains(card) or card.width() > w.canvas.width()
    assert abs(anchor.x() - body.x()) <= CARD_W and abs(anchor.y() - body.y()) <= CARD_H
    # the pointer rests on agent 0 at step 10; later the agent has moved from under it
    w.canvas._hover_pos = w.canvas.viewport().mapToGlobal(body)
    w.canvas._hover_agent = 0
    moved = next(
        t for t in range(11, ep.steps)
        if np.hypot(*(ep.poses[t, 0, :2] - ep.poses[10, 0, :2])) > 1.0
    )  # fmt: skip
    w.clock.seek(moved)
    assert w.canvas._hover_agent != 0
    w.close()
