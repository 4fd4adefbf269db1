"""The replay viewer on a tape with one damaged episode among sound ones.

The reference for which episode is damaged and why is the tape reader itself
(``Tape.check_episode``) and, for the sound rows, ``core.metrics.episode_metrics`` on the
reader's episodes; the greyed colour is the palette's ``text_muted`` read from the file.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from PySide6.QtCore import Qt

from arena_studio.app.replay.batch_stats import batch_stats
from arena_studio.app.replay.episode_list import COL
from arena_studio.app.replay.replay_window import ReplayWindow
from arena_studio.core.analysis.metrics import episode_metrics
from arena_studio.core.resources import resource_path
from arena_studio.core.tape import open_tape

from ..core.tape_helpers import box_scene, replace_marked_value, write_tape_with_marked_episode


@pytest.fixture
def nan_tape(tmp_path: Path) -> Path:
    path = tmp_path / "nan.tape"
    write_tape_with_marked_episode(path, box_scene(), episodes=5, marked=2)
    replace_marked_value(path, math.nan)
    return path


def _open(qtbot, path: Path, theme: str = "light") -> ReplayWindow:
    w = ReplayWindow(theme)
    qtbot.addWidget(w)
    w.resize(1280, 800)
    w.show()
    w.open_tape(path)
    assert w.wait_loaded()
    assert w.session.wait_summaries(60000)
    qtbot.waitUntil(lambda: w.session.summaries_done, timeout=10000)
    return w


def test_damaged_episode_is_greyed_with_its_reason(qtbot, nan_tape: Path) -> None:
    tape = open_tape(nan_tape)
    damage = tape.check_episode(2)
    assert damage is not None and damage.reason == "pose is not a finite number"
    w = _open(qtbot, nan_tape)
    model = w.episode_list.model
    rows = {s.index: s for s in model.summaries()}
    assert rows[2].damage == f"step 3 agent 1: {damage.reason}"
    for i in (0, 1, 3, 4):  # every other episode reads normally, with its metrics
        ref = episode_metrics(tape.scene, tape.episode(i))
        assert rows[i].damage is None and rows[i].loaded
        assert rows[i].success == ref.success and rows[i].diagnosis == ref.diagnosis
    r = list(rows).index(2)
    diag = model.index(r, COL["diagnosis"])
    assert diag.data() == f"Damaged: {rows[2].damage}"
    assert damage.reason in model.index(r, COL["goal_label"]).data(Qt.ItemDataRole.ToolTipRole)
    palette = json.loads(resource_path("palettes", "light.json").read_text())
    muted = model.index(r, COL["index"]).data(Qt.ItemDataRole.ForegroundRole)
    assert muted.name().upper() == palette["colors"]["text_muted"].upper()
    assert model.index(r, COL["success"]).data() == ""
    w.episode_list.set_preset("damaged")
    assert [s.index for s in w.episode_list.visible_summaries()] == [2]
    # the batch view's numbers leave it out
    stats = batch_stats(model.summaries())
    assert stats.episodes == 4 and stats.damaged == 1
    w.close()


def test_selecting_a_damaged_episode_says_which_and_why(qtbot, nan_tape: Path) -> None:
    w = _open(qtbot, nan_tape)
    w.select_episode(2)
    assert w.wait_loaded()
    assert w.prepared is None and w.canvas.prepared is None
    text = w.verdict.text()
    assert "Episode 2 is damaged" in text and "not a finite number" in text
    w.select_episode(3)
    assert w.wait_loaded()
    assert w.prepared is not None and w.prepared.episode.index == 3
    w.close()
