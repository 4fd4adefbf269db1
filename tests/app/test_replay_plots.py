"""Plots dock on a hand-built episode: the curves hold the distances derived in the test.

Reference: straight-line motion at 0.5 m/s from (1, 1) towards the West valve at (1, 5), so the
distance is |4 - 0.5 t| (plane geometry, common practice, no source); reward so far is the
cumulative sum (numpy.cumsum as the reference).
"""

from __future__ import annotations

import numpy as np
import pytest

from arena_studio.app.replay.plots import PlotsPanel, decimate, team_target_gaps
from arena_studio.app.replay.prepared import prepare_episode
from arena_studio.app.replay.transport import PlaybackClock

from .test_replay_support import small_scene, straight_episode


def curves(plot):
    return [item for item in plot.listDataItems()]


def test_plots_show_distance_reward_and_channels(qtbot):
    scene = small_scene()
    ep = straight_episode()
    clock = PlaybackClock()
    clock.set_episode(ep.steps, ep.dt)
    panel = PlotsPanel(clock)
    qtbot.addWidget(panel)
    panel.resize(800, 500)
    panel.set_episode(scene, prepare_episode(scene, ep))
    assert set(panel.plots) == {"distance", "reward", "channel:battery"}
    t = np.arange(ep.steps) * ep.dt
    dist = curves(panel.plots["distance"])
    # both rovers pursue the West valve; the team goal also has the East valve, which nobody
    # pursues, so a third curve gives the nearest rover's distance to it
    assert len(dist) == 3
    x, y = dist[0].getData()
    np.testing.assert_allclose(x, t)
    np.testing.assert_allclose(y, np.abs(4 - 0.5 * t), atol=1e-12)
    east = np.min(np.hypot(ep.poses[:, :, 0] - 9.0, ep.poses[:, :, 1] - 5.0), axis=1)
    np.testing.assert_allclose(dist[2].getData()[1], east)
    reward = curves(panel.plots["reward"])
    np.testing.assert_allclose(reward[0].getData()[1], np.cumsum(ep.rewards[:, 0]))
    np.testing.assert_allclose(
        curves(panel.plots["channel:battery"])[0].getData()[1], ep.channels["battery"]
    )
    panel.show()
    clock.seek(30)
    assert panel.cursors["reward"].value() == pytest.approx(3.0)
    # hidden (its tab not raised), the panel skips cursor moves and catches up when shown
    panel.hide()
    clock.seek(45)
    assert panel.cursors["reward"].value() == pytest.approx(3.0)
    panel.show()
    assert panel.cursors["reward"].value() == pytest.approx(4.5)  # 45 steps x 0.1 s


def test_team_target_gaps_only_for_unpursued_targets():
    scene = small_scene()
    aligned = straight_episode(pursued=((1, 1, 0), (1, 1, 0)))
    assert team_target_gaps(scene, prepare_episode(scene, aligned)) == {}
    split = straight_episode(pursued=((1, 0, 0), (1, 0, 0)))
    assert set(team_target_gaps(scene, prepare_episode(scene, split))) == {1}


def test_decimate_keeps_the_ends_and_bounds_the_points():
    t = np.arange(100_000) * 0.1
    tt, yy = decimate(t, t**2, limit=4000)
    assert len(tt) <= 4001 and tt[0] == 0 and tt[-1] == t[-1]
    np.testing.assert_allclose(yy, tt**2)
