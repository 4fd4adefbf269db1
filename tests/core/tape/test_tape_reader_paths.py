"""The tape reader's quick paths (one chunk of poses, the finite-pose check, remembered goal
vectors) refuse and accept exactly what the general path does, with the same messages."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from arena_studio.core.tape import TapeError, TapeWriter, open_tape
from arena_studio.core.tape.format import MAGIC, frame, pack
from tests.core.tape_helpers import box_scene, header_record

SCENE = box_scene()
GOOD_GOAL = {"dtype": "|u1", "shape": [3], "data": bytes([1, 1, 0])}


def _tape(tmp_path: Path, episodes: list[tuple[dict, list[dict]]]) -> Path:
    """A tape without index (read by the recovery scan) from (begin fields, chunks) pairs."""
    path = tmp_path / "quick.tape"
    data = MAGIC + frame(ord("H"), pack(header_record(SCENE)))
    for i, (fields, chunks) in enumerate(episodes):
        begin = {"type": "begin", "episode": i, "roles": None, "messages": []}
        begin.update({"team_goal": None, "pursued_goals": None, **fields})
        data += frame(ord("B"), pack(begin))
        steps = 0
        for chunk in chunks:
            data += frame(ord("C"), pack({"type": "chunk", "episode": i, **chunk}))
            steps += chunk["steps"] if isinstance(chunk["steps"], int) else 1
        data += frame(ord("E"), pack({"type": "end", "episode": i, "steps": steps}))
    path.write_bytes(data)
    return path


def _poses(values: np.ndarray) -> dict:
    return {"dtype": "<f8", "shape": list(values.shape), "data": values.tobytes()}


def _chunk(values: np.ndarray, start: int = 0, **extra: object) -> dict:
    return {"start": start, "steps": values.shape[0], "poses": _poses(values), **extra}


def test_huge_finite_poses_mark_the_episode_damaged(tmp_path: Path) -> None:
    # IEEE 754 binary64: the largest finite double is about 1.798e308 (numpy.finfo); such a
    # position is a finite number but outside the documented ±1e6 m, so the episode is damaged
    # (naming step, agent and field) while a pose exactly at the bound is kept
    edge = np.full((2, 2, 3), 1e6)
    tape = open_tape(_tape(tmp_path, [({}, [_chunk(edge)])]))
    assert np.array_equal(tape.episode(0).poses, edge)
    big = edge.copy()
    big[1, 0, 1] = np.finfo(np.float64).max
    tape = open_tape(_tape(tmp_path, [({}, [_chunk(big)])]))
    with pytest.raises(TapeError, match=r"episode 0 step 1 agent 0: pose y = 1.79769e\+308 is"):
        tape.episode(0)
    assert tape.damage[0].step == 1 and tape.damage[0].agent == 0


@pytest.mark.parametrize("chunks", [1, 2])
def test_infinities_of_both_signs_are_refused_at_the_first(tmp_path: Path, chunks: int) -> None:
    # +inf + -inf is NaN (IEEE 754), so the sum is not finite and the elementwise test names
    # the first bad pose in step order; the same with one chunk (quick path) or two
    poses = np.zeros((4, 2, 3))
    poses[2, 1, 1] = np.inf
    poses[3, 0, 0] = -np.inf
    parts = [_chunk(poses)] if chunks == 1 else [_chunk(poses[:2]), _chunk(poses[2:], start=2)]
    tape = open_tape(_tape(tmp_path, [({}, parts)]))
    with pytest.raises(TapeError, match=r"episode 0 step 2 agent 1: pose is not a finite number"):
        tape.episode(0)


def test_one_chunk_problems_get_the_general_messages(tmp_path: Path) -> None:
    # a bool is no step count: the recovery scan lets it through, the decoder refuses it
    chunk = {**_chunk(np.zeros((1, 2, 3))), "steps": True}
    tape = open_tape(_tape(tmp_path, [({}, [chunk])]))
    with pytest.raises(TapeError, match=r"episode 0 chunk at byte \d+: bad start or step count"):
        tape.episode(0)
    # a lone chunk that does not start at 0, or holds no step, is left to the general path
    good = _chunk(np.zeros((1, 2, 3)))
    for change in ({"start": 1}, {"steps": 0}, {"steps": -1}):
        with pytest.raises(
            TapeError, match=r"quick.tape: w chunk at byte 7: bad start or step count$"
        ):
            tape._decoder._chunks([(ord("C"), {**good, **change}, 7)], "w", 2)


def test_one_chunk_with_optional_fields_keeps_them(tmp_path: Path) -> None:
    poses = np.arange(12.0).reshape(2, 2, 3)
    rewards = {"dtype": "<f8", "shape": [2, 2], "data": np.ones((2, 2)).tobytes()}
    tape = open_tape(_tape(tmp_path, [({}, [_chunk(poses, rewards=rewards)])]))
    ep = tape.episode(0)
    assert np.array_equal(ep.poses, poses) and np.array_equal(ep.rewards, np.ones((2, 2)))


def test_copied_and_viewed_episodes_agree(tmp_path: Path) -> None:
    # reference: numpy.shares_memory answers whether two arrays overlap in memory
    path = tmp_path / "w.tape"
    rng = np.random.default_rng(1)
    with TapeWriter(path, SCENE, dt=0.1) as w:
        for _ in range(5):
            w.begin_episode(team_goal=np.array([1, 1, 0], np.uint8))
            w.steps(rng.uniform(0, 10, (7, 2, 3)))
            w.end_episode()
    tape = open_tape(path)
    own = tape.episodes(0, 5)
    views = tape.episodes(0, 5, copy=False)
    for a, b in zip(own, views, strict=True):
        assert np.array_equal(a.poses, b.poses) and a.poses.dtype == np.float64
        assert np.array_equal(a.team_goal, b.team_goal)
        assert a.poses.flags.writeable and a.team_goal is not None
        a.team_goal[0] = 0  # the copy is the caller's own: the next read is unchanged
    assert not any(np.shares_memory(x.poses, y.poses) for x in own for y in own if x is not y)
    assert tape.episode(0).team_goal.tolist() == [1, 1, 0]


def test_remembered_goal_never_excuses_a_bad_one(tmp_path: Path) -> None:
    # episode 0 makes the reader remember the good vector; episode 1 repeats it for the team
    # goal and agent 0, then gives agent 1 a 2 (a goal is multi-hot: 0 or 1 per landmark)
    bad = {**GOOD_GOAL, "data": bytes([1, 2, 0])}
    good = {"team_goal": GOOD_GOAL, "pursued_goals": [GOOD_GOAL, GOOD_GOAL]}
    worse = {"team_goal": GOOD_GOAL, "pursued_goals": [GOOD_GOAL, bad]}
    steps = [_chunk(np.zeros((1, 2, 3)))]
    tape = open_tape(_tape(tmp_path, [(good, steps), (worse, steps), (good, steps)]))
    assert tape.episode(0).pursued_goals[1].tolist() == [1, 1, 0]
    for read in (lambda: tape.episode(1), lambda: tape.episodes(0, 3, copy=False)):
        with pytest.raises(TapeError, match=r"episode 1\.pursued_goals\[1\]: a goal holds only"):
            read()
    # a float in the shape is refused although it equals the remembered one's length
    odd = {**GOOD_GOAL, "shape": [3.0]}
    tape = open_tape(_tape(tmp_path, [(good, steps), ({"team_goal": odd}, steps)]))
    tape.episode(0)
    with pytest.raises(TapeError, match=r"episode 1\.team_goal: shape\[0\] must be a whole"):
        tape.episode(1)


def test_damage_found_in_one_pass_names_the_same_record(tmp_path: Path) -> None:
    # reference: CRC-32 as zlib computes it (check value of b"123456789" is 0xCBF43926,
    # [memory]); one pass over a span of episodes finds what one check per episode finds
    import zlib

    from arena_studio.core.tape.format import first_bad_in_ranges, first_bad_record

    assert zlib.crc32(b"123456789") == 0xCBF43926
    path = tmp_path / "d.tape"
    with TapeWriter(path, SCENE, dt=0.1) as w:
        for _ in range(4):
            w.begin_episode()
            w.steps(np.zeros((3, 2, 3)))
            w.end_episode()
    tape = open_tape(path)
    entries = tape._entries
    clean = bytearray(path.read_bytes())
    lo, hi = entries[0].begin, entries[-1].end
    ranges = [(e.begin - lo, e.end - lo) for e in entries]
    hits = 0
    for where in range(lo, hi, 7):
        data = bytearray(clean)
        data[where] ^= 0x10
        span = memoryview(bytes(data[lo:hi]))
        expect = None
        for k, (a, b) in enumerate(ranges):
            bad = first_bad_record(span[a:b])
            if bad is not None:
                expect = (k, a + bad)
                break
        hits += expect is not None
        assert first_bad_in_ranges(span, ranges) == expect, where
    assert hits > 10


def test_unchecked_reads_name_the_broken_frame_like_the_layout_says(tmp_path: Path) -> None:
    # reference: the frame layout documented in format.py / DEVELOPERS.md ("u32 LE payload
    # length | u8 kind | payload | u32 LE CRC-32"), walked here with the standard library's
    # struct; an unchecked read (verify=False) cuts frames itself, and must name the first
    # frame that walk finds cut or of an unknown kind, at the same byte
    import re
    import struct

    path = tmp_path / "u.tape"
    with TapeWriter(path, SCENE, dt=0.1) as w:
        for _ in range(2):
            w.begin_episode()
            w.steps(np.zeros((3, 2, 3)))
            w.end_episode()
    clean = path.read_bytes()
    entry = open_tape(path)._entries[1]
    named = 0
    for at in range(entry.begin, entry.end):
        for value in (0x00, 0x7F, 0xFF):
            data = bytearray(clean)
            data[at] = value
            path.write_bytes(bytes(data))
            tape = open_tape(path)
            if tape.truncated:  # the damage reached the index: another path reads it
                continue
            pos, broken = entry.begin, None
            while pos < entry.end:
                if pos + 5 > entry.end:
                    broken = pos
                    break
                length, kind = struct.unpack_from("<IB", data, pos)
                if kind not in b"HBCEI" or pos + 9 + length > entry.end:
                    broken = pos
                    break
                pos += 9 + length
            try:
                tape.episode(1, verify=False)
            except TapeError as exc:
                # a payload that no longer decodes may be met first; a frame named is this one
                found = re.search(r"episode 1 byte (\d+):", str(exc))
                if found is not None:
                    assert int(found.group(1)) == broken, (at, value, str(exc))
                    named += 1
            else:
                assert broken is None, (at, value)
    assert named > 10
