"""Tape format: round trips, truncation recovery, refusal of hostile or foreign bytes."""

from __future__ import annotations

import struct
import zlib
from pathlib import Path

import msgpack
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from arena_studio.core.tape import TapeError, TapeWriter, open_tape
from arena_studio.core.tape.format import MAGIC, frame, pack, unpack
from tests.core.tape_helpers import box_scene, header_record, write_small_tape

SCENE = box_scene()


def test_header_and_episode_round_trip(tmp_path: Path) -> None:
    path = tmp_path / "t.tape"
    write_small_tape(path, SCENE)
    tape = open_tape(path)
    assert len(tape) == 3 and not tape.truncated and tape.recovery_message is None
    assert tape.dt == 0.5 and tape.agent_ids == ("r0", "r1") and tape.metadata == {"k": "v"}
    assert tape.scene == SCENE and tape.scene_hash_ok
    ep = tape.episode(2)
    assert ep.poses.shape == (5, 2, 3) and ep.poses.dtype == np.float64
    assert ep.poses[3, 1, 0] == 5.0 and ep.poses[3, 1, 2] == 2.0
    assert ep.team_goal.tolist() == [1, 0, 0]
    assert ep.pursued_goals[0].tolist() == [1, 0, 0] and ep.pursued_goals[1] is None
    assert ep.rewards.shape == (5, 2) and ep.outcome == {"e": 2} and ep.complete
    assert [e.index for e in tape] == [0, 1, 2]
    with pytest.raises(IndexError):
        tape.episode(3)
    assert not (tmp_path / "t.tape.partial").exists()


@st.composite
def _episodes(draw: st.DrawFn) -> list[dict]:
    n = draw(st.integers(1, 3))
    out = []
    for _ in range(n):
        steps = draw(st.integers(1, 40))
        k = draw(st.integers(1, 3))
        rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
        out.append(
            {
                "poses": rng.normal(size=(steps, 2, 3)),
                "rewards": rng.normal(size=(steps, 2)) if draw(st.booleans()) else None,
                "actions": rng.normal(size=(steps, 2, k)) if draw(st.booleans()) else None,
                "done": rng.random((steps, 2)) < 0.5 if draw(st.booleans()) else None,
                "chan": rng.integers(-5, 5, size=(steps,)) if draw(st.booleans()) else None,
                "roles": [[(0, "a"), (steps // 2 + 1, "b")], "solo"],
                "messages": draw(
                    st.lists(
                        st.dictionaries(st.text(max_size=5), st.integers(-9, 9), max_size=2),
                        max_size=2,
                    )
                ),
            }
        )
    return out


@settings(
    max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(episodes=_episodes(), chunk=st.integers(1, 17))
def test_round_trip_random_shapes(tmp_path: Path, episodes: list[dict], chunk: int) -> None:
    # property (common practice, no source): what is written is read back bit for bit
    path = tmp_path / "rt.tape"
    with TapeWriter(path, SCENE, dt=0.1, chunk_steps=chunk) as w:
        for ep in episodes:
            w.begin_episode(roles=ep["roles"], messages=ep["messages"])
            chans = None if ep["chan"] is None else {"c": ep["chan"]}
            w.steps(ep["poses"], ep["rewards"], ep["actions"], ep["done"], chans)
            w.end_episode()
    tape = open_tape(path)
    assert len(tape) == len(episodes)
    for i, ep in enumerate(episodes):
        got = tape.episode(i)
        assert np.array_equal(got.poses, ep["poses"])
        for name, ours in (("rewards", "rewards"), ("actions", "actions"), ("done", "done")):
            want = ep[ours]
            have = getattr(got, name)
            assert (have is None) == (want is None)
            if want is not None:
                assert np.array_equal(have, want) and have.shape == want.shape
        if ep["chan"] is not None:
            assert np.array_equal(got.channels["c"], ep["chan"])
        assert got.messages == tuple(ep["messages"])
        assert got.role_at(1, 0) == "solo"


def test_truncation_at_every_byte_offset(tmp_path: Path) -> None:
    # Recovery contract (DEVELOPERS.md, tape format): every complete chunk is recovered,
    # nothing else raised
    path = tmp_path / "full.tape"
    write_small_tape(path, SCENE, episodes=2, steps=5)
    data = path.read_bytes()
    # where each chunk record ends: walk the frames of the finished file
    ends: list[tuple[int, int, int]] = []  # (end offset, episode, steps so far)
    pos, header_end = len(MAGIC), None
    seen = {0: 0, 1: 0}
    while pos < len(data) - 16:
        length, kind = struct.unpack_from("<IB", data, pos)
        end = pos + 5 + length + 4
        rec = msgpack.unpackb(data[pos + 5 : pos + 5 + length])
        if kind == ord("H"):
            header_end = end
        if kind == ord("C"):
            seen[rec["episode"]] += rec["steps"]
            ends.append((end, rec["episode"], seen[rec["episode"]]))
        pos = end
    assert header_end is not None and len(ends) == 6  # 3 chunks (2+2+1 steps) per episode
    cut_path = tmp_path / "cut.tape"
    for cut in range(len(data)):
        cut_path.write_bytes(data[:cut])
        if cut < header_end:
            with pytest.raises(TapeError):
                open_tape(cut_path)
            continue
        tape = open_tape(cut_path)
        assert tape.truncated and "Recovered" in (tape.recovery_message or "")
        expected_steps = {0: 0, 1: 0}
        for end, ep, steps in ends:
            if end <= cut:
                expected_steps[ep] = steps
        got = {i: tape.episode(i).steps for i in range(len(tape))}
        assert got == {k: v for k, v in expected_steps.items() if v}, cut
        for i in range(len(tape)):
            ep = tape.episode(i)
            assert np.array_equal(
                ep.poses[:, :, 0], (i + np.arange(ep.steps))[:, None] + 0 * ep.poses[:, :, 0]
            )
    cut_path.write_bytes(data)
    assert not open_tape(cut_path).truncated


@settings(max_examples=200, deadline=None)
@given(st.binary(max_size=300))
def test_random_bytes_refused_cleanly(
    tmp_path_factory: pytest.TempPathFactory, blob: bytes
) -> None:
    path = tmp_path_factory.mktemp("fuzz") / "x.tape"
    for data in (blob, MAGIC + blob):
        path.write_bytes(data)
        with pytest.raises(TapeError):
            open_tape(path)


@settings(max_examples=100, deadline=None)
@given(st.integers(0, 10_000), st.integers(0, 255))
def test_flipped_byte_never_crashes(
    tmp_path_factory: pytest.TempPathFactory, at: int, value: int
) -> None:
    # damage anywhere: either refused with TapeError, or read with the damage detected
    path = tmp_path_factory.mktemp("flip") / "f.tape"
    write_small_tape(path, SCENE, episodes=2, steps=5)
    data = bytearray(path.read_bytes())
    data[at % len(data)] = value
    path.write_bytes(bytes(data))
    try:
        tape = open_tape(path)
        for i in range(len(tape)):
            tape.episode(i)
    except TapeError:
        pass


def _tape_with_header(tmp_path: Path, header: dict) -> Path:
    path = tmp_path / "h.tape"
    path.write_bytes(MAGIC + frame(ord("H"), pack(header)))
    return path


def _good_header() -> dict:
    return header_record(SCENE)


def test_newer_version_and_foreign_format_refused(tmp_path: Path) -> None:
    ok = open_tape(_tape_with_header(tmp_path, _good_header()))
    assert len(ok) == 0 and ok.truncated
    with pytest.raises(TapeError, match="newer"):
        open_tape(_tape_with_header(tmp_path, {**_good_header(), "version": 2}))
    with pytest.raises(TapeError, match="format"):
        open_tape(_tape_with_header(tmp_path, {**_good_header(), "format": "other"}))
    with pytest.raises(TapeError, match="agent_ids"):
        open_tape(_tape_with_header(tmp_path, {**_good_header(), "agent_ids": ["x", "y"]}))
    with pytest.raises(TapeError, match="not an arena-studio tape"):
        path = tmp_path / "j.tape"
        path.write_text('{"format": "arena-studio.tape"}')
        open_tape(path)


def _tape_with_chunk(tmp_path: Path, poses: dict) -> Path:
    path = _tape_with_header(tmp_path, _good_header())
    begin = {
        "type": "begin",
        "episode": 0,
        "team_goal": None,
        "pursued_goals": None,
        "roles": None,
        "messages": [],
    }
    chunk = {"type": "chunk", "episode": 0, "start": 0, "steps": 1, "poses": poses}
    end = {"type": "end", "episode": 0, "steps": 1, "outcome": None}
    with open(path, "ab") as f:
        f.write(frame(ord("B"), pack(begin)) + frame(ord("C"), pack(chunk)))
        f.write(frame(ord("E"), pack(end)))
    return path


def test_wrong_dtype_and_shape_refused(tmp_path: Path) -> None:
    good = {"dtype": "<f8", "shape": [1, 2, 3], "data": np.zeros(6).tobytes()}
    assert open_tape(_tape_with_chunk(tmp_path, good)).episode(0).steps == 1
    bad = [
        {**good, "dtype": "<c16"},  # complex numbers are not poses
        {**good, "dtype": ">f8"},  # big-endian is not the format
        {**good, "dtype": "|O"},  # object arrays would need pickle
        {**good, "shape": [1, 2, 2], "data": np.zeros(4).tobytes()},  # wrong last axis
        {**good, "data": np.zeros(5).tobytes()},  # too few bytes for the shape
        # hostile size: a shape claiming 10^12 steps is refused by counting bytes first
        {**good, "shape": [10**12, 2, 3]},
        {**good, "data": "text, not bin"},
    ]
    for value in bad:
        tape = open_tape(_tape_with_chunk(tmp_path, value))
        with pytest.raises(TapeError):
            tape.episode(0)


def test_non_finite_pose_refused_with_its_step_and_agent(tmp_path: Path) -> None:
    # IEEE 754 NaN / infinity are valid doubles but no position: the writer refuses them, and
    # a tape from elsewhere that holds one is refused when the episode is read
    poses = np.zeros((1, 2, 3))
    poses[0, 1, 0] = np.nan
    value = {"dtype": "<f8", "shape": [1, 2, 3], "data": poses.tobytes()}
    tape = open_tape(_tape_with_chunk(tmp_path, value))
    with pytest.raises(TapeError, match=r"episode 0 step 0 agent 1.*not a finite number"):
        tape.episode(0)


def test_hostile_record_length_refused_before_reading(tmp_path: Path) -> None:
    # a header frame claiming 2^31 bytes in a tiny file: refused from the length alone
    path = tmp_path / "big.tape"
    path.write_bytes(MAGIC + struct.pack("<IB", 2**31, ord("H")) + b"\x80")
    with pytest.raises(TapeError, match="claims"):
        open_tape(path)


def test_msgpack_type_rules() -> None:
    # msgpack specification (byte values computed): bin 8 = c4, bin 16 = c5, fixstr = a0+n
    assert pack(b"") == b"\xc4\x00"
    assert pack(bytes(256))[:3] == b"\xc5\x01\x00"
    assert pack("ab") == b"\xa2ab"
    assert unpack(b"\xc4\x01x") == b"x" and unpack(b"\xa1x") == "x"  # bin -> bytes, str -> str
    # timestamp ext type -1: Timestamp(0) packs to d6 ff 00 00 00 00; tapes refuse ext types
    ts = msgpack.packb(msgpack.Timestamp(0))
    assert ts == b"\xd6\xff\x00\x00\x00\x00"
    with pytest.raises(ValueError):
        unpack(ts)
    with pytest.raises(ValueError):
        unpack(b"\xd4\x05\x00")  # fixext 1 with a user type
    # integer map keys are refused (strict_map_key), tuples come back as lists
    with pytest.raises(ValueError):
        unpack(msgpack.packb({1: 2}))
    assert unpack(pack((1, 2))) == [1, 2]


def test_crc_detects_damage(tmp_path: Path) -> None:
    path = tmp_path / "d.tape"
    write_small_tape(path, SCENE, episodes=1, steps=2)
    data = bytearray(path.read_bytes())
    tape = open_tape(path)
    begin = tape._entries[0].begin
    # flip one byte inside the first chunk's pose data (after the begin record)
    blen = struct.unpack_from("<I", data, begin)[0]
    chunk_at = begin + 5 + blen + 4
    data[chunk_at + 40] ^= 0xFF
    path.write_bytes(bytes(data))
    damaged = open_tape(path)
    with pytest.raises(TapeError, match="checksum"):
        damaged.episode(0)
    assert zlib.crc32(b"") == 0  # zlib's CRC-32 of nothing (common practice, no source)


def test_crash_leaves_recoverable_partial(tmp_path: Path) -> None:
    path = tmp_path / "sim.tape"
    w = TapeWriter(path, SCENE, dt=0.1, chunk_steps=4)
    w.begin_episode()
    w.steps(np.zeros((3, 2, 3)))
    w.end_episode()
    w.begin_episode()
    w.steps(np.ones((9, 2, 3)))  # two chunks of 4 flushed, one step still buffered
    # simulate a crash: the process dies without close(); the OS has the flushed chunks
    w._file.flush()
    partial = tmp_path / "sim.tape.partial"
    tape = open_tape(partial)
    assert not path.exists() and tape.truncated and len(tape) == 2
    assert tape.episode(0).complete and not tape.episode(1).complete
    assert tape.episode(1).steps == 8
    assert "1 complete episode(s)" in (tape.recovery_message or "")
    w.abort(keep=False)
    assert not partial.exists()


def test_writer_refuses_bad_input(tmp_path: Path) -> None:
    with TapeWriter(tmp_path / "w.tape", SCENE) as w:
        with pytest.raises(TapeError, match="begin_episode"):
            w.step(np.zeros((2, 3)))
        w.begin_episode()
        with pytest.raises(TapeError, match="poses"):
            w.step(np.zeros((3, 3)))
        with pytest.raises(TapeError, match="finite"):
            w.step(np.full((2, 3), np.nan))
        w.step(np.zeros((2, 3)), reward=[0, 0])
        with pytest.raises(TapeError, match="same optional fields"):
            w.step(np.zeros((2, 3)))
        w.end_episode()
        with pytest.raises(TapeError, match="0/1"):
            w.begin_episode(team_goal=[2, 0, 0])
    assert len(open_tape(tmp_path / "w.tape")) == 1


_plain = st.recursive(
    st.none()
    | st.booleans()
    | st.integers(-(2**63), 2**64 - 1)
    | st.floats(allow_nan=False)
    | st.text(max_size=40)
    | st.binary(max_size=300),
    lambda children: (
        st.lists(children, max_size=20)
        | st.dictionaries(st.text(max_size=10), children, max_size=20)
    ),
    max_leaves=60,
)


@settings(max_examples=150, deadline=None)
@given(_plain)
def test_zero_copy_walker_agrees_with_msgpack(value: object) -> None:
    # reference: msgpack-python's own unpacker over the same bytes (msgpack spec type table)
    from arena_studio.core.tape.format import unpack_views

    data = msgpack.packb(value, use_bin_type=True)
    ours = unpack_views(memoryview(data))

    def plain(v: object) -> object:
        if isinstance(v, memoryview):
            return bytes(v)
        if isinstance(v, list):
            return [plain(x) for x in v]
        if isinstance(v, dict):
            return {k: plain(x) for k, x in v.items()}
        return v

    assert plain(ours) == msgpack.unpackb(data, raw=False)
    with pytest.raises(ValueError):
        unpack_views(memoryview(msgpack.packb([msgpack.ExtType(3, b"x")])))


def test_close_mid_episode_keeps_its_steps(tmp_path: Path) -> None:
    path = tmp_path / "open.tape"
    with TapeWriter(path, SCENE) as w:
        w.begin_episode()
        w.steps(np.zeros((3, 2, 3)))
    tape = open_tape(path)
    assert not tape.truncated and tape.episode(0).steps == 3
    assert tape.episode(0).outcome == {"unfinished": True}
