"""What a person reads in the replay names landmarks by label, as the canvas does.

The failed demo episode (scenes/greenhouse-greedy.tape, episode 0) has the goal
valve-west + potting-bench; its scene labels them "West valve" and "Potting bench" (read
off scenes/greenhouse.scene.json by hand). Each place a sentence is shown must carry the
labels and never the ids; the search still finds a row by either. The core's metrics are
the reference for which episode says what.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from PySide6.QtCore import Qt

from arena_studio.app.replay.batch_stats import batch_stats
from arena_studio.app.replay.episode_list import COL
from arena_studio.app.replay.prepared import prepare_episode
from arena_studio.app.replay.verdict import describe
from arena_studio.core.analysis.metrics import episode_metrics
from arena_studio.core.analysis.statement import outcome_statement
from arena_studio.core.tape import open_tape
from arena_studio.core.wording import LandmarkNames
from arena_studio.render.theme import load_theme

from .test_replay_window import open_window

TAPE = Path(__file__).resolve().parents[2] / "scenes" / "greenhouse-greedy.tape"
IDS = ("valve-west", "potting-bench", "water-tank", "tool-rack", "seed-tray", "sensor-north")


def _no_ids(text: str) -> None:
    for lid in IDS:
        assert lid not in text, f"{lid!r} in {text!r}"


@pytest.fixture
def window(qtbot):
    w = open_window(qtbot, TAPE)
    assert w.prepared is not None and w.prepared.episode.index == 0
    return w


def test_explanation_line_names_the_goal_and_targets_by_label(window):
    text = window.verdict.text()
    assert "failed</b> goal West valve + Potting bench:" in text
    assert "targets left empty at the end: West valve + Potting bench" in text
    _no_ids(text)


def test_compared_success_line_names_its_goal_by_label():
    tape = open_tape(TAPE)
    # a success of the same goal (the reference: the core's metrics)
    index = next(
        i
        for i in range(len(tape))
        if (m := episode_metrics(tape.scene, tape.episode(i))).success
        and m.goal_key == "valve-west+potting-bench"
    )
    ep = tape.episode(index)
    p = prepare_episode(tape.scene, ep, metrics=episode_metrics(tape.scene, ep))
    text = describe(p, load_theme("light"), "Compared: episode", 0, False)
    assert "succeeded</b> at goal West valve + Potting bench" in text
    _no_ids(text)


def test_timeline_hover_card_and_legend_words_use_labels(window):
    marks = window.prepared.events
    assert any(m.text == "rover-2 reached West valve" for m in marks)
    assert any("now heads to Potting bench" in m.text for m in marks)
    for m in marks:
        _no_ids(m.text)
    ep = window.prepared.episode
    # a step where some agent's tape role names a landmark
    step, agent = next(
        (s, a)
        for s in range(ep.steps)
        for a in range(ep.agent_count)
        if (ep.role_at(a, s) or "").endswith("potting-bench")
    )
    window.clock.seek(step)
    assert window.canvas.step == step
    card = window.canvas.agent_tooltip(agent) or ""
    assert "role heads to Potting bench" in card
    _no_ids(card)


def test_episode_list_shows_labels_and_finds_rows_by_label_or_id(window):
    model = window.episode_list.model
    row = next(r for r in range(model.rowCount()) if model.summaries()[r].index == 0)
    goal = model.data(model.index(row, COL["goal_label"]), Qt.ItemDataRole.DisplayRole)
    cell = model.index(row, COL["diagnosis"])
    diag = model.data(cell, Qt.ItemDataRole.ToolTipRole)  # the column shows a short word
    assert goal == "West valve + Potting bench"
    assert model.data(cell, Qt.ItemDataRole.DisplayRole) == "left empty"
    assert diag == "targets left empty at the end: West valve + Potting bench"
    lst = window.episode_list
    found = {}
    for words in ("Water tank", "water-tank", "water tank"):
        lst.search.setText(words)
        found[words] = [s.index for s in lst.visible_summaries()]
    lst.search.setText("")
    assert found["Water tank"] and found["Water tank"] == found["water-tank"]
    assert found["water tank"] == found["Water tank"]  # the search ignores case
    # every row found has the water tank in its goal or diagnosis (core metrics' ids)
    tape = open_tape(TAPE)
    for i in found["water-tank"]:
        m = episode_metrics(tape.scene, tape.episode(i))
        assert "water-tank" in f"{m.goal_key} {m.diagnosis}"


def test_tape_overview_goals_use_labels(window):
    stats = batch_stats(window.episode_list.model.summaries())
    labels = [g.label for g in stats.goals]
    assert "West valve + Potting bench" in labels
    for label in labels:
        _no_ids(label)


def test_still_and_clip_statement_uses_labels():
    tape = open_tape(TAPE)
    m = episode_metrics(tape.scene, tape.episode(0))
    text = outcome_statement(m, 0, tape.dt, LandmarkNames.of(tape.scene))
    assert text.startswith("Episode 0 failed goal West valve + Potting bench: targets left")
    _no_ids(text)
