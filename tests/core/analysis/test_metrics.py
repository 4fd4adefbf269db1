"""Episode metrics, diagnosis and events on hand-built episodes with answers derived here."""

from __future__ import annotations

import numpy as np
import pytest

from arena_studio.core.analysis.events import episode_events
from arena_studio.core.analysis.metrics import episode_metrics, summarize_metrics
from arena_studio.core.tape.episode import Episode
from tests.core.tape_helpers import box_scene

A, B, C = (2.0, 8.0), (8.0, 8.0), (5.0, 2.0)  # landmark centres of box_scene, reach 0.5


def _walk(start: tuple[float, float], end: tuple[float, float], steps: int) -> np.ndarray:
    t = np.linspace(0.0, 1.0, steps)[:, None]
    xy = np.asarray(start) + t * (np.asarray(end) - np.asarray(start))
    heading = np.full((steps, 1), np.arctan2(end[1] - start[1], end[0] - start[0]))
    return np.hstack([xy, heading])


def _episode(tracks: list[np.ndarray], goal, pursued=None, dt: float = 0.5) -> Episode:
    return Episode(
        index=0,
        dt=dt,
        poses=np.stack(tracks, axis=1),
        team_goal=None if goal is None else np.array(goal, dtype=np.uint8),
        pursued_goals=() if pursued is None else tuple(np.array(g, np.uint8) for g in pursued),
    )


def test_success_at_known_step() -> None:
    scene = box_scene("all_at_once", hold_time=1.0)
    # agent 0 walks (2, 3) -> (2, 8) in 11 steps of 0.5 m, then waits; agent 1 reaches B later.
    a0 = np.vstack([_walk((2, 3), A, 11), np.tile([*A, np.pi / 2], (9, 1))])
    a1 = np.vstack([_walk((8, 0), B, 17), np.tile([*B, np.pi / 2], (3, 1))])
    ep = _episode([a0, a1], [1, 1, 0], pursued=[[1, 1, 0], [1, 1, 0]])
    m = episode_metrics(scene, ep)
    # derivation: agent 1 moves 0.5 m per step from y=0; within 0.5 m of y=8 from y=7.5,
    # i.e. step 15. Both covered from 15 on; hold 1.0 s = 2 more steps -> success at step 17.
    assert m.success and m.success_step == 17
    assert m.time_to_success == pytest.approx(8.5)
    assert m.covered_by == {"A": "r0", "B": "r1"} and m.aligned is True
    assert m.path_length[0] == pytest.approx(5.0) and m.path_length[1] == pytest.approx(8.0)
    # agent 0 is still from step 11 on (9 steps, speed 0) -> 4.5 s; agent 1 from 17 (3 steps)
    assert m.still_time == pytest.approx((4.5, 1.5))
    assert m.kind == "cooperative" and m.diagnosis is None and m.collisions == 0
    events = episode_events(scene, ep, m)
    reached = [(e.step, e.agent, e.landmark) for e in events if e.kind == "reached"]
    # agent 0 enters A's disc at y = 7.5: from y=3 in 0.5 m steps that is step 9
    assert reached == [(9, 0, 0), (15, 1, 1)]
    assert [e.step for e in events if e.kind == "success"] == [17]


def test_misaligned_failure() -> None:
    scene = box_scene("all_at_once")
    a0 = _walk((2, 3), A, 11)
    a1 = _walk((5, 6), C, 9)  # went to C, outside the team goal A+B
    a1 = np.vstack([a1, np.tile(a1[-1], (2, 1))])
    ep = _episode([a0, a1], [1, 1, 0], pursued=[[1, 1, 0], [1, 0, 1]])
    m = episode_metrics(scene, ep)
    assert not m.success and m.aligned is False and m.diagnosis_code == "misaligned"
    # derivation: agent 1 steps 0.5 m from y=6 towards y=2; inside C's disc at y <= 2.5: step 7
    assert m.diagnosis_step == 7


def test_duplicate_target_failure() -> None:
    scene = box_scene("all_at_once")
    a0 = _walk((2, 4), A, 9)  # arrives at A (step 7: y=7.5)
    a1 = _walk((3, 8), (2.2, 8.0), 5)  # also ends on A; B stays empty
    a1 = np.vstack([a1, np.tile(a1[-1], (4, 1))])
    ep = _episode([a0, a1], [1, 1, 0], pursued=[[1, 1, 0], [1, 1, 0]])
    m = episode_metrics(scene, ep)
    assert not m.success and m.diagnosis_code == "duplicate-target"
    # derivation: agent 1 is within 0.5 of (2, 8) once x <= 2.5: x = 3 - 0.2 t -> t = 3 (2.4);
    # agent 0 enters at step 7 (y = 4 + 0.5 t >= 7.5); both on A with B empty from step 7.
    assert m.diagnosis_step == 7
    assert "B stayed empty" in (m.diagnosis or "")


def test_not_together_and_collisions() -> None:
    scene = box_scene("all_at_once")
    # agent 0 visits A then leaves; agent 1 reaches B only afterwards
    a0 = np.vstack([_walk((2, 6), A, 5), _walk(A, (2, 5), 5)])
    a1 = np.vstack([np.tile([8.0, 4.0, 0.0], (6, 1)), _walk((8, 6), B, 4)])
    ep = _episode([a0, a1], [1, 1, 0], pursued=[[1, 1, 0], [1, 1, 0]])
    m = episode_metrics(scene, ep)
    assert m.diagnosis_code == "not-together"
    # derivation: agent 1 steps 2/3 m from y=6 at step 6: y = 6.67, 7.33 (0.67 from B, out),
    # 8.0 at step 9 -> the last target is first reached at step 9
    assert m.diagnosis_step == 9
    # collision: two agents 0.4 m apart (radii 0.25 + 0.25 = 0.5 > 0.4) for two steps
    b0 = np.tile([5.0, 5.0, 0.0], (4, 1))
    b1 = np.array([[6, 5, 0], [5.4, 5, 0], [5.4, 5, 0], [7, 5, 0]], dtype=float)
    m2 = episode_metrics(scene, _episode([b0, b1], [0, 0, 1]))
    assert m2.collisions == 1 and m2.collision_pairs == ((1, 0, 1),)


def test_batch_specialisation_and_rates() -> None:
    scene = box_scene("all_at_once")
    same = [np.tile([*A, 0], (3, 1)), np.tile([*B, 0], (3, 1))]
    swapped = [np.tile([*B, 0], (3, 1)), np.tile([*A, 0], (3, 1))]
    ms = [
        episode_metrics(scene, _episode(t, [1, 1, 0], pursued=[[1, 1, 0]] * 2))
        for t in (same, same, same, swapped)
    ]
    fail = episode_metrics(scene, _episode(same, [0, 0, 1], pursued=[[0, 0, 1], [1, 0, 0]]))
    summary = summarize_metrics(scene, [*ms, fail])
    # derivation: target A covered by r0 in 3 of 4 successes, B by r1 in 3 of 4 -> (0.75+0.75)/2
    assert summary["specialisation"]["A+B"] == pytest.approx(0.75)
    assert summary["success_rate"] == pytest.approx(4 / 5)
    assert summary["alignment_rate"] == pytest.approx(4 / 5)
    assert summary["aligned"]["success_rate"] == 1.0
    assert summary["misaligned"]["success_rate"] == 0.0
    assert summary["by_kind"]["individual"]["episodes"] == 1


def test_events_roles_collisions_and_walls() -> None:
    scene = box_scene("all_at_once")
    # agent 0 drives into the west wall: free space starts at x = 0.25 (radius 0.25)
    a0 = np.array([[1.0, 5.0, 0.0], [0.5, 5.0, 0.0], [0.1, 5.0, 0.0], [0.5, 5.0, 0.0]])
    a1 = np.array([[5.0, 5.0, 0.0], [5.0, 5.0, 0.0], [0.5, 5.2, 0.0], [3.0, 5.0, 0.0]])
    ep = Episode(
        index=0,
        dt=0.5,
        poses=np.stack([a0, a1], axis=1),
        team_goal=np.array([0, 0, 1], np.uint8),
        roles=(((0, "scout"), (2, "guard")), ((0, "scout"),)),
    )
    m = episode_metrics(scene, ep)
    # derivation: free space of a 10 m room shrunk by 0.25 m; x = 0.1 is outside at step 2
    assert m.free_space_exits == 1
    # at step 2 the centres are 0.447 m apart (< 0.25 + 0.25): one agent-agent contact onset
    assert m.collisions == 1
    kinds = [(e.step, e.kind, e.agent) for e in episode_events(scene, ep, m)]
    assert (2, "collision", 0) in kinds and (2, "wall-collision", 0) in kinds
    assert (2, "role", 0) in kinds and not any(k[1] == "role" and k[0] == 0 for k in kinds)
    assert kinds == sorted(kinds, key=lambda k: k[0])


# -- the batched path (core.metrics_batch) gives the per-episode answers, field by field -------
# Reference: episode_metrics above, itself checked against hand derivations; the batch must
# agree exactly (every field, floats bit for bit).
import dataclasses  # noqa: E402
from pathlib import Path  # noqa: E402

from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from arena_studio.core.analysis.metrics import EpisodeMetrics  # noqa: E402
from arena_studio.core.analysis.metrics_batch import episodes_metrics, tape_metrics  # noqa: E402
from arena_studio.core.tape import open_tape  # noqa: E402

DEMO_TAPES = sorted((Path(__file__).resolve().parents[3] / "scenes").glob("*.tape"))
FIELDS = dataclasses.fields(EpisodeMetrics)


def _same(ref, got) -> None:
    assert len(ref) == len(got)
    for a, b in zip(ref, got, strict=True):
        for f in FIELDS:
            assert getattr(a, f.name) == getattr(b, f.name), (a.index, f.name)


@pytest.mark.parametrize("path", DEMO_TAPES, ids=lambda p: p.name)
def test_batched_metrics_match_per_episode_on_demo_tapes(path: Path) -> None:
    tape = open_tape(path)
    _same([episode_metrics(tape.scene, e) for e in tape], tape_metrics(tape))


def _random_episode(rng: np.random.Generator, index: int, n_agents: int) -> Episode:
    steps = int(rng.integers(1, 40))
    anchors = np.vstack([A, B, C, rng.uniform(0.1, 9.9, (3, 2)), [[0.05, 5.0]]])  # last: wall
    # agents dwell at anchors (still, covering) and hop between them, sometimes together
    hops = anchors[rng.integers(0, len(anchors), (steps // 4 + 1, n_agents))]
    xy = np.repeat(hops, 4, axis=0)[:steps] + rng.normal(0, 0.02, (steps, n_agents, 2))
    if rng.random() < 0.3:  # a slow final approach: "still moving towards" at the end
        xy[-5:] = xy[-5:] + np.linspace(0.5, 0.0, min(5, steps))[:, None, None]
    heading = rng.uniform(-np.pi, np.pi, (steps, n_agents, 1))
    if rng.random() < 0.5:
        heading[:] = heading[:1]
    if rng.random() < 0.2 and steps > 12:  # everyone freezes for the last 3 s: "stuck"
        xy[-12:] = xy[-12]
        heading[-12:] = heading[-12]
    goals = [None, [1, 0, 0], [0, 1, 0], [1, 1, 0], [1, 1, 1], [0, 1, 1]]
    team = goals[int(rng.integers(0, len(goals)))]
    pursued = None
    if rng.random() < 0.8:  # mostly aligned on the team goal, sometimes not
        same = team if team is not None and rng.random() < 0.6 else goals[int(rng.integers(1, 6))]
        pursued = [
            same if rng.random() < 0.8 else goals[int(rng.integers(1, 6))] for _ in range(n_agents)
        ]
    return Episode(
        index=index,
        dt=0.25,
        poses=np.concatenate([xy, heading], axis=2),
        team_goal=None if team is None else np.array(team, np.uint8),
        pursued_goals=() if pursued is None else tuple(np.array(g, np.uint8) for g in pursued),
        complete=bool(rng.random() < 0.9),
    )


@settings(max_examples=40, deadline=None)
@given(
    st.integers(0, 2**32 - 1),
    st.sampled_from(["all_at_once", "all_at_end", "all_visited"]),
    st.sampled_from([0.0, 0.5]),
    st.integers(1, 3),
)
def test_batched_metrics_match_per_episode_on_random_episodes(
    seed: int, rule: str, hold: float, n_agents: int
) -> None:
    scene = box_scene(rule, hold_time=hold, agents=n_agents)
    rng = np.random.default_rng(seed)
    episodes = [_random_episode(rng, i, n_agents) for i in range(int(rng.integers(1, 12)))]
    _same([episode_metrics(scene, e) for e in episodes], episodes_metrics(scene, episodes))


def test_batched_metrics_cover_every_diagnosis() -> None:
    # the hand-built episodes above, run as one batch next to each other, plus random ones
    # until every diagnosis code has been compared at least once
    from arena_studio.core.analysis.diagnosis import CODES

    seen: set[str | None] = set()
    rng = np.random.default_rng(5)
    for rule in ("all_at_once", "all_at_end"):
        scene = box_scene(rule, hold_time=0.5, agents=3)
        episodes = [_random_episode(rng, i, 3) for i in range(400)]
        ref = [episode_metrics(scene, e) for e in episodes]
        _same(ref, episodes_metrics(scene, episodes))
        seen |= {m.diagnosis_code for m in ref}
    assert set(CODES) <= seen


def test_tape_metrics_name_the_damaged_record(tmp_path: Path) -> None:
    # reference: CRC-32 (zlib) detects every single-bit error in a record (its defining
    # property [memory]); the tape format frames each record with one (DEVELOPERS.md)
    import struct
    import zlib

    from arena_studio.core.tape import TapeError
    from tests.core.tape_helpers import write_small_tape

    assert zlib.crc32(b"123456789") == 0xCBF43926  # CRC-32 check value [memory]
    path = tmp_path / "small.tape"
    write_small_tape(path, box_scene(), episodes=4, steps=6)
    entry = open_tape(path)._entries[2]
    data = bytearray(path.read_bytes())
    chunk = entry.begin + 5 + struct.unpack_from("<I", data, entry.begin)[0] + 4
    data[chunk + 40] ^= 0x04  # inside episode 2's chunk record
    path.write_bytes(bytes(data))
    with pytest.raises(TapeError, match=f"episode 2 chunk 0 byte {chunk}: record checksum mis"):
        tape_metrics(open_tape(path))
    # with a list for the damage, episode 2 is left out and named; the others are measured
    # exactly as from the undamaged copy (the damage stays in its episode)
    damaged: list = []
    kept = tape_metrics(open_tape(path), damaged=damaged)
    assert [m.index for m in kept] == [0, 1, 3]
    assert [(d.episode, d.chunk, d.byte) for d in damaged] == [(2, 0, chunk)]
    data[chunk + 40] ^= 0x04
    path.write_bytes(bytes(data))
    whole = tape_metrics(open_tape(path))
    assert [whole[i] for i in (0, 1, 3)] == kept


@pytest.mark.parametrize("rule", ["all_at_once", "all_at_end", "all_visited"])
def test_batched_metrics_match_per_episode_on_equal_lengths(rule: str) -> None:
    # episodes of one length take the batched path's reshaped sums: same answers as above
    scene = box_scene(rule, hold_time=0.5, agents=3)
    rng = np.random.default_rng(9)
    episodes = [
        dataclasses.replace(ep, poses=ep.poses[:9])
        for ep in (_random_episode(rng, i, 3) for i in range(120))
        if ep.steps >= 9
    ]
    assert len(episodes) > 30
    _same([episode_metrics(scene, e) for e in episodes], episodes_metrics(scene, episodes))


def test_batched_metrics_match_per_episode_with_mixed_radii_and_many_points() -> None:
    # agents of different radii get different free spaces (tested in groups by radius), and
    # enough steps that the grid, covered box and sub-cells of the inside test are used
    from arena_studio.core.scene.model import Scene

    data = box_scene("all_at_once", agents=3).to_dict()
    for agent, radius in zip(data["agents"], (0.25, 0.4, 0.25), strict=True):
        agent["radius"] = radius
    scene = Scene.from_dict(data)
    rng = np.random.default_rng(21)
    episodes = []
    for i in range(12):
        steps = int(rng.integers(300, 900))
        xy = rng.uniform(-0.2, 10.2, (steps, 3, 2))  # many centres near or past the walls
        xy[: steps // 2] = np.repeat(xy[:1], steps // 2, axis=0)  # still, then jumping
        heading = np.zeros((steps, 3, 1))
        goal = np.array([1, 1, 0], np.uint8)
        episodes.append(
            Episode(index=i, dt=0.1, poses=np.concatenate([xy, heading], axis=2), team_goal=goal)
        )
    assert sum(ep.steps for ep in episodes) * 3 > 4096 * 2
    got = episodes_metrics(scene, episodes)
    _same([episode_metrics(scene, e) for e in episodes], got)
    assert sum(m.free_space_exits for m in got) > 0
