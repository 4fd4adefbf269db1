"""Data behind the viewer's panels, checked against the core modules computed independently.

References: ``core.metrics.summarize_metrics`` (success by goal, alignment rate),
``core.events.episode_events`` (the event list), and numpy.histogram2d for the occupancy grid.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from arena_studio.app.replay.batch_stats import Occupancy, batch_stats
from arena_studio.app.replay.events import episode_event_marks
from arena_studio.app.replay.prepared import normalise_kind, prepare_episode
from arena_studio.app.replay.summary import summarise_episode
from arena_studio.core.analysis.events import episode_events
from arena_studio.core.analysis.metrics import episode_metrics, summarize_metrics
from arena_studio.core.tape import open_tape
from arena_studio.core.wording import LandmarkNames

from .test_replay_support import small_scene, straight_episode

REPO = Path(__file__).resolve().parents[2]
DEMOS = (
    sorted((REPO / "scenes").glob("*-independent.tape"))[:1]
    + sorted((REPO / "scenes").glob("*-shared.tape"))[:1]
)


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.name)
def test_batch_view_numbers_match_core_batch_metrics(path):
    tape = open_tape(path)
    rows = [summarise_episode(tape.scene, e) for e in tape]
    ref = summarize_metrics(tape.scene, [episode_metrics(tape.scene, e) for e in tape])
    stats = batch_stats(rows)
    assert stats.episodes == ref["episodes"]
    assert stats.successes == ref["successes"]
    assert stats.success_rate == pytest.approx(ref["success_rate"])
    assert stats.alignment_rate == pytest.approx(ref["alignment_rate"])
    keys = {
        tuple(sorted(tape.scene.landmark_index(i) for i in k.split("+"))): v
        for k, v in ref["by_goal"].items()
    }
    assert {g.goal: (g.episodes, g.successes) for g in stats.goals} == {
        k: (v["episodes"], v["successes"]) for k, v in keys.items()
    }


def test_timeline_marks_are_the_core_event_list():
    tape = open_tape(DEMOS[0])
    ep = tape.episode(2)
    m = episode_metrics(tape.scene, ep)
    marks = episode_event_marks(tape.scene, ep, m)
    ref = episode_events(tape.scene, ep, m, LandmarkNames.of(tape.scene))  # labels, as shown
    key = lambda e: (e.step, -1 if e.agent is None else e.agent, e.landmark or -1, e.text)  # noqa: E731
    assert sorted(map(key, ref)) == sorted(map(key, marks))
    assert {normalise_kind(e.kind) for e in ref} == {k.kind for k in marks}
    diag = [k for k in marks if k.kind == "diagnosis"]
    assert [k.step for k in diag] == [m.diagnosis_step]


def test_prepared_arrays():
    scene = small_scene()
    ep = straight_episode()
    prep = prepare_episode(scene, ep)
    # constant 0.5 m/s straight motion: backward differences are 0.5 after step 0
    np.testing.assert_allclose(prep.speeds[1:], 0.5)
    np.testing.assert_allclose(prep.reward_so_far[:, 0], np.cumsum(ep.rewards[:, 0]))
    # agent 0 pursues West valve at (1, 5) from (1, 1 + 0.5 t): distance |4 - 0.5 t|
    t = np.arange(ep.steps) * ep.dt
    np.testing.assert_allclose(prep.distances[(0, 0)], np.abs(4 - 0.5 * t), atol=1e-12)
    assert prep.targets == ((0,), (0,))


def test_occupancy_is_a_time_weighted_histogram():
    scene = small_scene()
    ep = straight_episode()
    occ = Occupancy.empty(scene)
    occ.add(ep.poses, ep.dt)
    minx, miny, maxx, maxy = occ.extent
    ny, nx = occ.seconds.shape
    xy = ep.poses[..., :2].reshape(-1, 2)
    ref, _, _ = np.histogram2d(
        xy[:, 1], xy[:, 0], bins=(ny, nx), range=((miny, maxy), (minx, maxx))
    )
    np.testing.assert_allclose(occ.seconds, ref * ep.dt)
    assert occ.seconds.sum() == pytest.approx(ep.steps * ep.agent_count * ep.dt)
