"""Damage stays in its episode: a non-finite or out-of-range pose, or one chunk whose bytes
were damaged, marks that episode (what and where) and every other episode reads as before.

References: IEEE 754 (NaN and infinity are not numbers a position can take); CRC-32 as zlib
computes it detects every single-bit error in a record (its defining property [memory]);
the frame layout is the documented one (DEVELOPERS.md, "Tape format").
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest

from arena_studio.core.analysis.metrics_batch import episodes_metrics, tape_metrics
from arena_studio.core.tape import TapeError, open_tape
from arena_studio.core.tape.damage import Damage, EpisodeDamaged
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape.format import TRAILER_SIZE
from tests.core.tape_helpers import box_scene, replace_marked_value, write_tape_with_marked_episode

SCENE = box_scene()


def _marked(tmp_path: Path) -> tuple[Path, list[np.ndarray]]:
    path = tmp_path / "run.tape"
    write_tape_with_marked_episode(path, SCENE, episodes=5, marked=2)
    tape = open_tape(path)
    return path, [tape.episode(i).poses for i in range(len(tape))]


@pytest.mark.parametrize("value", [math.nan, math.inf, -math.inf])
def test_non_finite_pose_marks_only_its_episode(tmp_path: Path, value: float) -> None:
    path, clean = _marked(tmp_path)
    replace_marked_value(path, value)
    tape = open_tape(path)
    assert not tape.truncated and len(tape) == 5
    with pytest.raises(EpisodeDamaged) as info:
        tape.episode(2)
    damage = info.value.damage
    assert (damage.episode, damage.step, damage.agent) == (2, 3, 1)
    assert damage.reason == "pose is not a finite number"
    assert tape.damage == {2: damage} and tape.check_episode(2) == damage
    for i in (0, 1, 3, 4):
        assert np.array_equal(tape.episode(i).poses, clean[i])
    assert tape.check_episode(0) is None


def test_out_of_range_pose_is_damage_naming_the_field(tmp_path: Path) -> None:
    # 1e308 is a finite double (IEEE 754) but far outside the documented ±1e6 m
    path, _ = _marked(tmp_path)
    replace_marked_value(path, 1e308)
    damage = open_tape(path).check_episode(2)
    assert damage == Damage(2, "pose x = 1e+308 is outside ±1e+06 m", step=3, agent=1)
    assert damage.text() == "episode 2 step 3 agent 1: pose x = 1e+308 is outside ±1e+06 m"


def test_damaged_chunk_in_the_middle_episode(tmp_path: Path) -> None:
    # one byte changed inside episode 2's second chunk (steps 2-3); its CRC no longer matches
    path, clean = _marked(tmp_path)
    sound_copy = tmp_path / "sound.tape"
    sound_copy.write_bytes(path.read_bytes())
    at = replace_marked_value(path, 7.0, fix_crc=False)
    tape = open_tape(path)
    assert not tape.truncated
    with pytest.raises(TapeError, match=r"episode 2 chunk 1 byte \d+: record checksum mismatch"):
        tape.episode(2)
    damage = tape.damage[2]
    assert damage.chunk == 1 and damage.byte is not None and damage.byte < at
    assert [i for i in range(5) if i != 2] == [
        i for i in range(5) if i != 2 and np.array_equal(tape.episode(i).poses, clean[i])
    ]
    # the batched path (stats) reads around it and measures the others as from a sound copy
    damaged: list[Damage] = []
    kept = tape_metrics(open_tape(path), damaged=damaged)
    assert [m.index for m in kept] == [0, 1, 3, 4] and [d.episode for d in damaged] == [2]
    sound = tape_metrics(open_tape(sound_copy))
    assert [sound[i] for i in (0, 1, 3, 4)] == kept


def test_scan_of_a_cut_tape_steps_over_a_damaged_chunk(tmp_path: Path) -> None:
    # without index and trailer the reader walks the records: a damaged chunk whose frame
    # head is sound is stepped over, its episode marked, and the later episodes recovered
    path, clean = _marked(tmp_path)
    replace_marked_value(path, 7.0, fix_crc=False)
    data = path.read_bytes()
    cut = tmp_path / "cut.tape"
    cut.write_bytes(data[:-TRAILER_SIZE])
    tape = open_tape(cut)
    assert tape.truncated and len(tape) == 5
    assert tape.damage[2].episode == 2 and "checksum" in tape.damage[2].reason
    assert "1 damaged episode(s)" in (tape.recovery_message or "")
    assert tape.episode_steps(2) == 6  # counted from the end record
    for i in (0, 1, 3, 4):
        assert np.array_equal(tape.episode(i).poses, clean[i])
    with pytest.raises(EpisodeDamaged):
        tape.episode(2)


def test_undecodable_chunk_with_a_matching_checksum(tmp_path: Path) -> None:
    # msgpack specification: 0xc1 is never used, so a chunk whose "poses" key header
    # (fixstr of 5, 0xa5) becomes 0xc1 cannot be decoded; its CRC-32 is recomputed (zlib, the
    # documented frame) so only the decoding fails
    import struct
    import zlib

    path, clean = _marked(tmp_path)
    data = bytearray(path.read_bytes())
    at = data.find(struct.pack("<d", 4321.125))  # tape_helpers.SENTINEL, in episode 2
    pos = 8
    while True:  # the frame holding the sentinel
        length = struct.unpack_from("<I", data, pos)[0]
        if pos < at < pos + 9 + length:
            break
        pos += 9 + length
    key = data.find(b"\xa5poses", pos, pos + 9 + length)
    assert key > 0
    data[key] = 0xC1
    struct.pack_into(
        "<I", data, pos + 5 + length, zlib.crc32(bytes(data[pos + 4 : pos + 5 + length]))
    )
    path.write_bytes(bytes(data))
    tape = open_tape(path)
    damage = tape.check_episode(2)
    assert damage is not None and "not valid msgpack" in damage.reason
    assert (damage.chunk, damage.byte) == (1, pos)
    for i in (0, 1, 3, 4):
        assert np.array_equal(tape.episode(i).poses, clean[i])


def test_batched_metrics_of_episodes_in_memory_check_poses() -> None:
    # episodes made in a program (not read from a tape) are checked by episodes_metrics too
    poses = np.zeros((3, 2, 3))
    poses[:, :, 0] = 1.0
    ep = Episode(index=4, dt=0.1, poses=poses)
    assert len(episodes_metrics(SCENE, [ep])) == 1
    bad = dataclasses.replace(ep, poses=np.where(np.arange(3)[:, None, None] == 1, np.nan, poses))
    with pytest.raises(ValueError, match=r"episode 4 step 1 agent 0: pose is not a finite"):
        episodes_metrics(SCENE, [bad])
