"""The batched metrics' faster paths (path sums, contact onsets, diagnosis distances) against
plain Python arithmetic, GEOS distances and the per-episode metrics, bit for bit."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
import shapely

from arena_studio.core.analysis.metrics import EpisodeMetrics, episode_metrics
from arena_studio.core.analysis.metrics_batch import _running_totals, episodes_metrics
from arena_studio.core.tape.episode import Episode
from tests.core.tape_helpers import box_scene

FIELDS = dataclasses.fields(EpisodeMetrics)


def _same(ref: list[EpisodeMetrics], got: list[EpisodeMetrics]) -> None:
    assert len(ref) == len(got)
    for a, b in zip(ref, got, strict=True):
        for f in FIELDS:
            assert getattr(a, f.name) == getattr(b, f.name), (a.index, f.name)


def _left_to_right(values: list[float]) -> float:
    # reference: Python float addition is IEEE 754 binary64 addition, rounded to nearest
    # (Python docs, "Floating-point arithmetic"); a for loop fixes the order left to right
    total = 0.0
    for v in values:
        total += v
    return total


@pytest.mark.parametrize("shape", [(1, 1, 1), (1, 1, 300), (1, 3, 200), (3, 1, 129), (4, 64, 499)])
def test_running_totals_add_left_to_right(shape: tuple[int, int, int]) -> None:
    rng = np.random.default_rng(sum(shape))
    parts = rng.uniform(0.0, 1.0, shape) * 10.0 ** rng.integers(-8, 3, shape)
    got = _running_totals(parts)
    assert got.shape == shape[:2]
    for a in range(shape[0]):
        for g in range(shape[1]):
            assert got[a, g] == _left_to_right(parts[a, g].tolist()), (a, g)
    # the per-episode path's running sum (numpy.cumsum), last element
    assert np.array_equal(got, np.cumsum(parts, axis=2)[:, :, -1])


def test_running_totals_differ_from_pairwise_sums_somewhere() -> None:
    # numpy sums along the fast axis pairwise (numpy.sum notes), which rounds differently:
    # the data above would catch a switch to it (this shows the check can fail)
    rng = np.random.default_rng(3)
    parts = rng.uniform(0.0, 1.0, (4, 64, 499)) * 10.0 ** rng.integers(-8, 3, (4, 64, 499))
    assert not np.array_equal(np.add.reduce(parts, axis=2), _running_totals(parts))


def _uniform_episodes(rng: np.random.Generator, count: int, steps: int, agents: int) -> list:
    out = []
    goals = [np.array(g, np.uint8) for g in ([1, 1, 0], [0, 1, 1], [1, 0, 0])]
    for i in range(count):
        xy = rng.uniform(-0.3, 10.3, (steps, agents, 2))  # centres everywhere, walls too
        heading = rng.uniform(-np.pi, np.pi, (steps, agents, 1))
        if i % 3 == 0:  # some agents stand still for a while: still time, stuck
            xy[steps // 2 :, 0] = xy[steps // 2, 0]
            heading[steps // 2 :, 0] = heading[steps // 2, 0]
        goal = goals[i % 3]
        pursued = tuple(goal if rng.random() < 0.9 else goals[(i + 1) % 3] for _ in range(agents))
        out.append(
            Episode(
                index=i,
                dt=0.25,
                poses=np.concatenate([xy, heading], axis=2),
                team_goal=goal,
                pursued_goals=pursued,
            )
        )
    return out


@pytest.mark.parametrize("agents", [1, 3, 4])
def test_long_equal_episodes_match_per_episode_and_plain_python(agents: int) -> None:
    # long episodes of one length take the reshaped path sums, the pair-by-pair contact
    # filter and the block-wide diagnosis distances; compared field by field
    scene = box_scene("all_at_once", agents=agents)
    rng = np.random.default_rng(40 + agents)
    episodes = _uniform_episodes(rng, 24, 300, agents)
    got = episodes_metrics(scene, episodes)
    _same([episode_metrics(scene, e) for e in episodes], got)
    radius = 0.25
    for ep, m in zip(episodes[:4], got[:4], strict=True):
        p = ep.poses
        xy = p[:, :, :2].tolist()
        for a in range(agents):
            steps = []
            for t in range(ep.steps - 1):
                dx = xy[t + 1][a][0] - xy[t][a][0]
                dy = xy[t + 1][a][1] - xy[t][a][1]
                steps.append(math.sqrt(dx * dx + dy * dy))  # metrics.step_lengths' formula
            assert m.path_length[a] == _left_to_right(steps)
        # reference: GEOS point distance (shapely.distance); a contact begins where two
        # centres come closer than the sum of radii after not being so (step 0 counts)
        onsets = []
        for i in range(agents):
            for j in range(i + 1, agents):
                pa = shapely.points(p[:, i, :2])
                pb = shapely.points(p[:, j, :2])
                close = shapely.distance(pa, pb) < 2 * radius
                prev = np.concatenate([[False], close[:-1]])
                onsets += [(int(t), i, j) for t in np.flatnonzero(close & ~prev)]
        assert sorted(m.collision_pairs) == sorted(onsets)
        assert m.collisions == len(onsets)
    if agents > 1:
        assert sum(m.collisions for m in got) > 0
    assert len({m.diagnosis_code for m in got}) >= 2


def test_contact_at_an_episode_start_counts_in_each_episode() -> None:
    # two agents overlapping through the end of one episode and the start of the next: the
    # next one's first step is an onset of its own (metrics.onsets: step 0 counts)
    scene = box_scene(agents=2)
    together = np.array([[[5.0, 5.0, 0.0], [5.2, 5.0, 0.0]]] * 3)  # 0.2 m apart, reach 0.5
    apart = np.array([[[5.0, 5.0, 0.0], [7.0, 5.0, 0.0]]] * 3)
    first = Episode(index=0, dt=0.5, poses=np.concatenate([apart, together]))
    second = Episode(index=1, dt=0.5, poses=np.concatenate([together, apart, together]))
    got = episodes_metrics(scene, [first, second])
    assert got[0].collision_pairs == ((3, 0, 1),)
    assert got[1].collision_pairs == ((0, 0, 1), (6, 0, 1))
    _same([episode_metrics(scene, e) for e in (first, second)], got)


def test_time_ran_out_names_agents_nearing_the_empty_target_only() -> None:
    # goal A+B; r0 sits on A (covered), r1 walks away from A but towards B (empty): only r1
    # nears an empty target. Distances to B by math.dist (Python stdlib).
    scene = box_scene(agents=2)
    steps = 12
    t = np.linspace(0.0, 1.0, steps)[:, None]
    r0 = np.hstack([np.tile([2.0, 8.0], (steps, 1)), np.zeros((steps, 1))])
    r1 = np.hstack([np.array([3.0, 6.0]) + t * np.array([3.0, 1.0]), np.zeros((steps, 1))])
    assert math.dist(r1[-1, :2], (8.0, 8.0)) < math.dist(r1[-3, :2], (8.0, 8.0))
    assert math.dist(r1[-1, :2], (2.0, 8.0)) > math.dist(r1[-3, :2], (2.0, 8.0))
    goal = np.array([1, 1, 0], np.uint8)
    episodes = [
        Episode(index=k, dt=0.5, poses=np.stack([r0, r1], axis=1), team_goal=goal) for k in range(3)
    ]
    got = episodes_metrics(scene, episodes)
    _same([episode_metrics(scene, e) for e in episodes], got)
    assert got[0].diagnosis_code == "time-ran-out"
    assert got[0].diagnosis is not None and "while r1 still moved towards B" in got[0].diagnosis


def test_batched_metrics_are_whole_frozen_dataclass_instances() -> None:
    # reference: the standard library's dataclasses (fields, asdict, FrozenInstanceError) and
    # the generated __init__: an object built by filling its dict must be indistinguishable
    names = {f.name for f in FIELDS}
    scene = box_scene()
    rng = np.random.default_rng(5)
    episodes = [
        Episode(index=i, dt=0.1, poses=rng.uniform(0, 4, (12, len(scene.agents), 3)))
        for i in range(3)
    ]
    for got in episodes_metrics(scene, episodes):
        assert type(got) is EpisodeMetrics
        rebuilt = EpisodeMetrics(**{f.name: getattr(got, f.name) for f in FIELDS})
        assert got == rebuilt
        assert dataclasses.asdict(got) == dataclasses.asdict(rebuilt)
        assert got.to_dict() == rebuilt.to_dict()
        assert set(vars(got)) == names
        with pytest.raises(dataclasses.FrozenInstanceError):
            got.steps = 0  # type: ignore[misc]
