"""Compare: refuses an episode with itself, offers the best success of the same goal, both
side-by-side panes fit the scene, one time readout, both episodes' events on the timeline.

References: the episode list's own metrics rows (core.analysis.metrics.episode_metrics, the
same numbers as ``arena-studio stats``) for which episodes succeeded at which goal; the
scene's bounds (core.geometry.regions.bounds) mapped by Qt's QGraphicsView.mapFromScene for
what a pane shows.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QPointF

from arena_studio.app.replay.partner import best_success
from arena_studio.app.replay.summary import EpisodeSummary
from arena_studio.core.geometry.regions import bounds

from .test_replay_window import open_window

REPO = Path(__file__).resolve().parents[2]
GREEDY = REPO / "scenes" / "greenhouse-greedy.tape"


def test_best_success_is_the_nearest_par_of_the_same_goal_never_itself():
    rows = [
        EpisodeSummary(0, goal=(1, 3), success=False),
        EpisodeSummary(1, goal=(1, 3), success=True, par_ratio=0.8, time_to_success=12.0),
        EpisodeSummary(2, goal=(1, 3), success=True, par_ratio=0.95, time_to_success=10.0),
        EpisodeSummary(3, goal=(2,), success=True, par_ratio=0.99, time_to_success=5.0),
        EpisodeSummary(4, goal=(1, 3), success=False),
    ]
    assert best_success(rows, 0) == 2
    assert best_success(rows, 2) == 1  # the shown episode never partners itself
    assert best_success(rows, 3) is None  # no other success of that goal


def _shown_and_partner(w):
    rows = w.episode_list.model.summaries()
    for r in rows:
        partner = best_success(rows, r.index)
        if partner is not None:
            return r.index, partner
    raise AssertionError("the demo tape has no goal with two episodes and a success")


def test_compare_refuses_the_shown_episode_and_names_a_partner(qtbot):
    w = open_window(qtbot, GREEDY)
    shown, partner = _shown_and_partner(w)
    w.select_episode(shown)
    qtbot.waitUntil(lambda: w.prepared is not None and w.prepared.episode.index == shown)
    said: list[str] = []
    w.statusMessage.connect(said.append)
    assert not w.compare_with(shown, "side")
    assert w.compare is None and w.compare_mode == "off"
    assert said and f"Episode {shown} is the one shown" in said[-1]
    assert f"episode {partner}" in said[-1]
    w.close()


def test_side_by_side_panes_fit_the_scene_and_read_one_time(qtbot):
    w = open_window(qtbot, GREEDY)
    shown, partner = _shown_and_partner(w)
    w.select_episode(shown)
    qtbot.waitUntil(lambda: w.prepared is not None and w.prepared.episode.index == shown)
    assert w.compare_with_best_success()
    qtbot.waitUntil(lambda: w.compare is not None and w.canvas_b.isVisible(), timeout=10000)
    assert w.compare.episode.index == partner
    qtbot.wait(50)
    w.fit_views()  # F
    minx, miny, maxx, maxy = bounds(w.scene_value)
    for canvas in (w.canvas, w.canvas_b):
        vp = canvas.viewport().rect()
        for x, y in ((minx, miny), (minx, maxy), (maxx, miny), (maxx, maxy)):
            at = canvas.mapFromScene(QPointF(x, y))
            assert vp.contains(at), (canvas.caption, (x, y), at, vp)
    longest = max(w.prepared.episode.steps, w.compare.episode.steps)
    assert w.clock.steps == longest
    assert w.canvas.shared_steps == w.canvas_b.shared_steps == longest
    assert w.timeline.compared_events == w.compare.events
    w.close()
