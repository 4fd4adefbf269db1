"""The replay on the demo tape whose announcements are clear and ignored: the Messages panel,
the scrub bar's message marks and the failed episode's explanation.

Reference values come from outside the viewer: the tape reader's messages and goals, and
``core.analysis.messages.message_report`` run here on the same episodes (its figures are
checked against sklearn/scipy in tests/core/test_information.py).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from arena_studio.app.replay.messages_panel import HeatMap, MessagesPanel, goal_order
from arena_studio.app.replay.replay_window import ReplayWindow
from arena_studio.core.analysis.messages import message_report
from arena_studio.core.analysis.metrics import episode_metrics
from arena_studio.core.tape import open_tape
from arena_studio.core.wording import LandmarkNames
from arena_studio.render.theme import load_theme

REPO = Path(__file__).resolve().parents[2]
IGNORED = REPO / "scenes" / "parking-level-ignored.tape"
SHARED = REPO / "scenes" / "parking-level-shared.tape"


def open_window(qtbot, path: Path, theme: str = "light") -> ReplayWindow:
    w = ReplayWindow(theme)
    qtbot.addWidget(w)
    w.resize(1280, 800)
    w.show()
    w.open_tape(path)
    assert w.wait_loaded()
    assert w.session.wait_summaries(60000)
    qtbot.waitUntil(lambda: w.session.message_report is not None, timeout=30000)
    return w


def first_misaligned(tape) -> int:
    for i in range(len(tape)):
        m = episode_metrics(tape.scene, tape.episode(i))
        if m.diagnosis_code == "misaligned" and m.kind == "cooperative":
            return i
    raise AssertionError("the demo tape has a misaligned cooperative failure")


@pytest.mark.parametrize("theme", ["light", "dark"])
def test_ignored_announcement_shows_in_panel_verdict_and_scrub_bar(qtbot, theme) -> None:
    tape = open_tape(IGNORED)
    w = open_window(qtbot, IGNORED, theme)
    assert w.dock_messages.isVisible()
    i = first_misaligned(tape)
    w.select_episode(i)
    assert w.wait_loaded()
    ep = tape.episode(i)
    said = ep.messages[0]
    # the scrub bar: the pre-episode message sits at the start, in the speaker's name
    marks = [m for m in w.timeline.events if m.kind == "message"]
    assert [(m.step, m.text.split(" to ")[0]) for m in marks] == [(0, said["from"])]
    # the panel: this episode's word, what it usually means, who did not follow
    ids = [a.id for a in tape.scene.agents]
    lms = [lm.id for lm in tape.scene.landmarks]
    ref = message_report(list(tape), ids, lms, permutations=50, resamples=50)
    meaning = ref.meaning_of(said["from"], said["value"])
    names = LandmarkNames.of(tape.scene)
    text = w.messages.episode_label.text()
    # the usual meaning is a goal key (ids); the panel names its landmarks by label
    assert f"<b>{said['value']}</b>" in text and names.goal(meaning) in text
    assert meaning not in text
    assert "did not follow" in text
    # the overview: one speaker card and one per listener, ignored pairs flagged
    assert len(w.messages.cards) == 1 + len(ref.pairs)
    pair_texts = [label.text() for label, _heat in w.messages.cards[1:]]
    assert all("Informative but ignored" in t for t in pair_texts)
    # the failed episode's line says what was announced and that the listeners chose else
    verdict = w.verdict_text()
    assert f"announced {said['value']}" in verdict and "although" in verdict
    # ... naming the goals by label, as the canvas does, in the line and in the heat maps
    assert names.goal(meaning) in verdict and meaning not in verdict
    rows = w.messages.cards[0][1].rows
    assert names.goal(meaning) in rows and meaning not in rows


def test_tape_without_structured_messages_keeps_the_panel_hidden(qtbot) -> None:
    w = ReplayWindow("light")
    qtbot.addWidget(w)
    w.show()
    w.open_tape(SHARED)
    assert w.wait_loaded() and w.session.wait_summaries(60000)
    qtbot.waitUntil(lambda: w.session.summaries_done, timeout=10000)
    qtbot.wait(200)
    assert not w.dock_messages.isVisible()
    assert "Messages:" not in w.verdict_text()


def test_heat_map_counts_are_the_report_table_transposed(qtbot) -> None:
    tape = open_tape(IGNORED)
    ids = [a.id for a in tape.scene.agents]
    lms = [lm.id for lm in tape.scene.landmarks]
    report = message_report(list(tape), ids, lms, permutations=10, resamples=10)
    s = report.speakers[0]
    heat = HeatMap(load_theme("light"))
    qtbot.addWidget(heat)
    heat.set_table(s.goals, s.values, s.counts, s.meaning, "axis")
    for r, goal in enumerate(heat.rows):
        for c, value in enumerate(heat.cols):
            assert heat.counts[r][c] == s.counts[s.values.index(value)][s.goals.index(goal)]
    # a word that names its goal lands on the diagonal: row k holds the goal of column k
    assert goal_order(("b", "a"), ("2", "1"), {"1": "a", "2": "b"}) == [1, 0]
    panel = MessagesPanel(load_theme("dark"))
    qtbot.addWidget(panel)
    panel.set_report(tape.scene, report)
    panel.set_report(tape.scene, None)
    assert panel.cards == []


@pytest.mark.parametrize("width, area", [(1230, "bottom"), (1700, "right")])
def test_messages_dock_leaves_a_narrow_window_its_canvas(qtbot, width, area) -> None:
    """At 1280x800 the Messages dock beside the canvas left the scene a few pixels a metre;
    there it is a bottom tab behind the Plots (one click away), on a wide window beside."""
    from PySide6.QtCore import Qt

    w = ReplayWindow("light")
    qtbot.addWidget(w)
    w.resize(width, 770)
    w.show()
    w.open_tape(IGNORED)
    assert w.wait_loaded() and w.session.wait_summaries(60000)
    qtbot.waitUntil(lambda: w.session.message_report is not None, timeout=30000)
    qtbot.waitUntil(lambda: not w.dock_messages.isHidden(), timeout=5000)
    where = w.dockWidgetArea(w.dock_messages)
    if area == "bottom":
        assert where == Qt.DockWidgetArea.BottomDockWidgetArea
        assert w.dock_messages in w.tabifiedDockWidgets(w.dock_plots)
        assert w.plots.isVisible()  # the plots stay in front
        w.dock_messages.raise_()
        qtbot.waitUntil(lambda: w.messages.isVisible(), timeout=5000)
    else:
        assert where == Qt.DockWidgetArea.RightDockWidgetArea
        assert w.messages.isVisible()
    w.session.wait_idle()
