"""Episode list: presets, text search, goal filter, sorting, keyboard navigation.

Expected rows are computed in each test with plain Python (list comprehensions and sorted()
from the standard library as the reference), never copied from the widget.
"""

from __future__ import annotations

import random

import numpy as np
import pytest
from PySide6.QtCore import Qt

from arena_studio.app.replay.episode_list import COL, SUMMARY_ROLE, EpisodeListPanel
from arena_studio.app.replay.summary import EpisodeSummary, goal_kind

LABELS = {
    (0,): "West valve",
    (1,): "East valve",
    (2,): "Pump",
    (0, 1): "West valve + East valve",
    (1, 2): "East valve + Pump",
}


def make_rows(n: int = 60, seed: int = 4) -> list[EpisodeSummary]:
    rng = random.Random(seed)
    rows = []
    for i in range(n):
        goal = rng.choice(list(LABELS))
        success = rng.random() < 0.5
        aligned = rng.random() < 0.6
        rows.append(
            EpisodeSummary(
                index=i,
                goal=goal,
                goal_label=LABELS[goal],
                kind="cooperative" if len(goal) > 1 else "individual",
                success=success,
                time_to_success=round(rng.uniform(3, 20), 2) if success else None,
                par_ratio=round(rng.uniform(0.2, 1.0), 3) if success else None,
                aligned=aligned,
                diagnosis=None if success else rng.choice(["pursued different goals", "stuck"]),
                loaded=True,
            )
        )
    return rows


@pytest.fixture
def panel(qtbot):
    p = EpisodeListPanel()
    qtbot.addWidget(p)
    p.resize(700, 500)
    p.model.reset_rows(make_rows())
    return p


def shown(panel) -> list[int]:
    return [s.index for s in panel.visible_summaries()]


def test_goal_kind_counts_targets():
    # glossary terms (README): one target -> individual goal, two or more -> cooperative
    assert goal_kind(np.array([0, 1, 0])) == "individual"
    assert goal_kind(np.array([1, 1, 0])) == "cooperative"
    assert goal_kind(None) == ""


def test_presets_filter_rows(panel):
    rows = make_rows()
    panel.set_preset("failed_cooperative")
    assert shown(panel) == [r.index for r in rows if r.kind == "cooperative" and not r.success]
    panel.set_preset("misaligned")
    assert shown(panel) == [r.index for r in rows if r.aligned is False]
    panel.set_preset("all")
    assert shown(panel) == [r.index for r in rows]
    assert panel.count_label.text() == "60 episodes"


def test_text_search_and_goal_filter(panel):
    rows = make_rows()
    panel.search.setText("pump")
    assert shown(panel) == [r.index for r in rows if "pump" in r.goal_label.lower()]
    panel.search.setText("east STUCK")  # every word must match (labels or diagnosis)
    assert shown(panel) == [
        r.index for r in rows if "east" in r.goal_label.lower() and r.diagnosis == "stuck"
    ]
    panel.search.clear()
    panel.set_goal_filter((0, 1), "West valve + East valve")
    assert shown(panel) == [r.index for r in rows if r.goal == (0, 1)]
    assert "of 60 episodes shown" in panel.count_label.text()
    panel.set_goal_filter(None, "")
    assert len(shown(panel)) == 60


def test_sorting_matches_python_sorted_with_blanks_last(panel):
    rows = make_rows()
    panel.table.sortByColumn(COL["time_to_success"], Qt.SortOrder.AscendingOrder)
    with_value = sorted(
        (r for r in rows if r.time_to_success is not None), key=lambda r: r.time_to_success
    )
    got = [s.time_to_success for s in panel.visible_summaries()]
    assert got[: len(with_value)] == [r.time_to_success for r in with_value]
    assert all(v is None for v in got[len(with_value) :])
    panel.table.sortByColumn(COL["goal_label"], Qt.SortOrder.DescendingOrder)
    got_labels = [s.goal_label for s in panel.visible_summaries()]
    assert got_labels == sorted((r.goal_label for r in rows), reverse=True)


def test_keyboard_navigation_activates_episodes(qtbot, panel):
    panel.show()
    seen: list[int] = []
    panel.episodeActivated.connect(seen.append)
    panel.set_preset("failed_cooperative")
    expected = shown(panel)
    panel.table.setFocus()
    assert panel.select_episode(expected[0])
    qtbot.keyClick(panel.table, Qt.Key.Key_Down)
    qtbot.keyClick(panel.table, Qt.Key.Key_Down)
    assert seen == expected[:3]
    qtbot.keyClick(panel.table, Qt.Key.Key_Up)
    assert seen[-1] == expected[1]


def test_placeholders_fill_in_as_batches_arrive(panel):
    panel.model.reset_placeholders(5)
    assert panel.model.index(2, COL["goal_label"]).data() == "…"
    panel.model.update_rows(make_rows(5)[1:3])
    assert panel.model.index(2, COL["goal_label"]).data() == make_rows(5)[2].goal_label
    assert panel.model.index(0, 0).data(SUMMARY_ROLE).loaded is False
