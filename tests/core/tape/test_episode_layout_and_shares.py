"""Per-agent shares of the team goal and per-episode landmark positions, end to end.

Expected answers are worked out here without the metrics code: coverage as shapely's
point-to-point distance within the reach radius (OGC distance via GEOS), alignment as set
inclusion of each share in the team goal with their union equal to it. The batched path
(``tape_metrics``, what ``stats`` uses) must agree with ``episode_metrics`` field by field.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from shapely.geometry import Point

from arena_studio.cli import main
from arena_studio.core.analysis.metrics import aligned_goals, episode_metrics, summarize_metrics
from arena_studio.core.analysis.metrics_batch import tape_metrics
from arena_studio.core.analysis.roles import HEADING, derive_roles
from arena_studio.core.tape import TapeWriter, open_tape
from arena_studio.core.tape.episode_scene import episode_scene
from tests.core.tape_helpers import box_scene

A, B, C = [1, 0, 0], [0, 1, 0], [0, 0, 1]
AB = [1, 1, 0]


def _walk(start: tuple[float, float], end: tuple[float, float], steps: int) -> np.ndarray:
    t = np.linspace(0.0, 1.0, steps)[:, None]
    xy = np.asarray(start) * (1 - t) + np.asarray(end) * t
    heading = np.arctan2(end[1] - start[1], end[0] - start[0])
    return np.column_stack([xy, np.full(steps, heading)])


def _two_agents(ends: list[tuple[float, float]], steps: int = 40) -> np.ndarray:
    starts = [(1.0, 1.0), (2.0, 1.0)]
    return np.stack([_walk(s, e, steps) for s, e in zip(starts, ends, strict=True)], axis=1)


def _covered(xy: tuple[float, float], lm: tuple[float, float], reach: float) -> bool:
    return Point(xy).distance(Point(lm)) <= reach  # GEOS distance, reach radius inclusive


def _shares_aligned(team: list[int], shares: list[list[int]]) -> bool:
    t = {i for i, v in enumerate(team) if v}
    sets = [{i for i, v in enumerate(s) if v} for s in shares]
    return all(s <= t for s in sets) and set().union(*sets) == t


@pytest.fixture
def shares_tape(tmp_path: Path) -> Path:
    """Team goal A+B. Episode 0: pursued = team goal, shares A / B (the recommended way).
    Episode 1: shares only. Episode 2: agent r1's share is C, outside the team goal."""
    scene = box_scene()
    path = tmp_path / "shares.tape"
    to_ab = _two_agents([(2.0, 8.0), (8.0, 8.0)])
    with TapeWriter(path, scene, dt=0.1) as w:
        w.begin_episode(team_goal=AB, pursued_goals=[AB, AB], assigned_targets=[A, B])
        w.steps(to_ab)
        w.end_episode()
        w.begin_episode(team_goal=AB, assigned_targets=[A, B])
        w.steps(to_ab)
        w.end_episode()
        w.begin_episode(team_goal=AB, assigned_targets=[A, C])
        w.steps(_two_agents([(2.0, 8.0), (5.0, 2.0)]))
        w.end_episode()
    return path


def test_shares_keep_alignment(shares_tape: Path) -> None:
    tape = open_tape(shares_tape)
    expected = [True, _shares_aligned(AB, [A, B]), _shares_aligned(AB, [A, C])]
    assert expected == [True, True, False]
    assert [aligned_goals(tape.episode(i)) for i in range(3)] == expected
    one = [episode_metrics(tape.scene, tape.episode(i)) for i in range(3)]
    assert [m.aligned for m in one] == expected
    assert one[0].success and one[1].success and not one[2].success
    assert one[2].diagnosis_code == "misaligned" and "r1 share C" in (one[2].diagnosis or "")
    assert tape_metrics(tape) == one  # the batched path, field by field (dataclass equality)
    summary = summarize_metrics(tape.scene, one)
    assert summary["alignment_rate"] == pytest.approx(2 / 3)
    # each target always covered by the same agent: fully specialised (score 1.0)
    assert summary["specialisation"]["A+B"] == 1.0


def test_roles_prefer_an_agents_share(shares_tape: Path) -> None:
    """Derived roles rank the agent's own share first: r1 walking up toward B is heading to
    a target of the team goal."""
    tape = open_tape(shares_tape)
    codes = derive_roles(tape.scene, tape.episode(1))
    assert (codes[5:30, 1] == HEADING).all()


def _moved_tape(tmp_path: Path) -> tuple[Path, list[np.ndarray]]:
    """Three episodes, landmarks moved at each reset; the agents walk to where A and B are."""
    scene = box_scene()
    layouts = [
        np.array([[2.0, 8.0], [8.0, 8.0], [5.0, 2.0]]),  # the scene's own positions
        np.array([[3.0, 6.0], [7.0, 5.0], [5.0, 9.0]]),
        np.array([[1.5, 4.0], [6.0, 3.5], [9.0, 9.0]]),
    ]
    path = tmp_path / "moved.tape"
    with TapeWriter(path, scene, dt=0.1) as w:
        for lay in layouts:
            w.begin_episode(team_goal=AB, pursued_goals=[AB, AB], landmark_positions=lay)
            w.steps(_two_agents([tuple(lay[0]), tuple(lay[1])]))
            w.end_episode(outcome={"layout": lay.tolist()})
    return path, layouts


def test_metrics_use_each_episodes_landmarks(tmp_path: Path) -> None:
    path, layouts = _moved_tape(tmp_path)
    tape = open_tape(path)
    one = [episode_metrics(tape.scene, tape.episode(i)) for i in range(3)]
    reach = tape.scene.landmarks[0].reach_radius
    for i, (m, lay) in enumerate(zip(one, layouts, strict=True)):
        ep = tape.episode(i)
        np.testing.assert_array_equal(ep.landmark_positions, lay)
        # reference: the first step at which both agents are within reach (GEOS distances)
        first = next(
            t
            for t in range(ep.steps)
            if _covered(tuple(ep.poses[t, 0, :2]), tuple(lay[0]), reach)
            and _covered(tuple(ep.poses[t, 1, :2]), tuple(lay[1]), reach)
        )
        assert m.success and m.success_step == first, i
        assert m.covered_by == {"A": "r0", "B": "r1"}
        assert m.outcome == {"layout": lay.tolist()}
    assert tape_metrics(tape) == one
    # judged against the scene's own landmarks the moved episodes would fail
    from dataclasses import replace

    unmoved = replace(tape.episode(1), landmark_positions=None)
    assert not episode_metrics(tape.scene, unmoved).success


def test_episode_scene_moves_only_landmarks(tmp_path: Path) -> None:
    path, layouts = _moved_tape(tmp_path)
    tape = open_tape(path)
    assert episode_scene(tape.scene, tape.episode(0)) is tape.scene  # nothing moved
    moved = episode_scene(tape.scene, tape.episode(1))
    assert moved is episode_scene(tape.scene, tape.episode(1))  # one object per layout
    assert [lm.position for lm in moved.landmarks] == [tuple(p) for p in layouts[1].tolist()]
    assert [lm.id for lm in moved.landmarks] == [lm.id for lm in tape.scene.landmarks]
    assert moved.rooms == tape.scene.rooms and moved.agents == tape.scene.agents


def test_stats_json_shows_outcome(tmp_path: Path, capsys: pytest.CaptureFixture) -> None:
    path, layouts = _moved_tape(tmp_path)
    assert main(["stats", str(path), "--json", "--quiet"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert [e["outcome"] for e in doc["episodes"]] == [{"layout": lay.tolist()} for lay in layouts]
    assert [e["success"] for e in doc["episodes"]] == [True, True, True]
