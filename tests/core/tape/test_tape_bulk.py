"""Reading many episodes in one go, the threaded checksum of long episodes, and the fast
free-space test the metrics use.

References: zlib's CRC-32 (ISO-HDLC / ITU-T V.42 polynomial; the catalogue check value of
b"123456789" is 0xCBF43926 [memory]); shapely.intersects_xy (GEOS, OGC Simple Features) for
the free-space test, point by point.
"""

from __future__ import annotations

import struct
import zlib
from pathlib import Path

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from arena_studio.core.geometry.inside_test import InsideTest
from arena_studio.core.geometry.regions import free_space
from arena_studio.core.scene.model import load_scene
from arena_studio.core.tape import TapeError, TapeWriter, open_tape
from arena_studio.core.tape.format import PARALLEL_CRC_BYTES
from tests.core.tape_helpers import box_scene, write_small_tape

SCENES = Path(__file__).resolve().parents[3] / "scenes"


def test_episodes_in_one_read_equal_one_by_one(tmp_path: Path) -> None:
    path = tmp_path / "t.tape"
    write_small_tape(path, box_scene(), episodes=5, steps=7)
    tape = open_tape(path)
    for copy in (True, False):
        bulk = tape.episodes(1, 5, copy=copy)
        assert [e.index for e in bulk] == [1, 2, 3, 4]
        for e in bulk:
            one = tape.episode(e.index)
            assert np.array_equal(e.poses, one.poses) and np.array_equal(e.rewards, one.rewards)
            assert e.team_goal.tolist() == one.team_goal.tolist() and e.outcome == one.outcome
    assert tape.episodes(1, 5)[0].poses.flags.writeable  # copies by default
    assert tape.episodes(3, 3) == []
    with pytest.raises(IndexError):
        tape.episodes(2, 9)


def _long_tape(path: Path, steps: int) -> None:
    scene = box_scene()
    poses = np.random.default_rng(0).uniform(0, 10, (steps, 2, 3))
    with TapeWriter(path, scene, dt=0.1, chunk_steps=4096) as w:
        w.begin_episode()
        w.steps(poses)
        w.end_episode()


@pytest.mark.parametrize("where", [0.05, 0.5, 0.999])
def test_threaded_checksums_catch_damage_anywhere(tmp_path: Path, where: float) -> None:
    assert zlib.crc32(b"123456789") == 0xCBF43926  # CRC-32 check value [memory]
    path = tmp_path / "long.tape"
    steps = PARALLEL_CRC_BYTES // 48 + 20000  # above the size checked on worker threads
    _long_tape(path, steps)
    clean = open_tape(path)
    ref = clean.episode(0).poses
    assert ref.shape == (steps, 2, 3)
    entry = clean._entries[0]
    data = bytearray(path.read_bytes())
    at = int(entry.begin + where * (entry.end - entry.begin))
    data[at] ^= 0x01
    path.write_bytes(bytes(data))
    damaged = open_tape(path)
    for read in (lambda: damaged.episode(0), lambda: damaged.episodes(0, 1)):
        with pytest.raises(TapeError, match=r"episode 0 (chunk \d+ )?byte \d+: record checksum"):
            read()


def test_threaded_checksum_names_the_damaged_record(tmp_path: Path) -> None:
    path = tmp_path / "long.tape"
    _long_tape(path, PARALLEL_CRC_BYTES // 48 + 20000)
    tape = open_tape(path)
    begin = tape._entries[0].begin
    data = bytearray(path.read_bytes())
    first_chunk = begin + 5 + struct.unpack_from("<I", data, begin)[0] + 4
    second = first_chunk + 5 + struct.unpack_from("<I", data, first_chunk)[0] + 4
    data[second + 100] ^= 0x80  # inside the second chunk's pose bytes
    path.write_bytes(bytes(data))
    with pytest.raises(TapeError, match=f"byte {second}: record checksum mismatch"):
        open_tape(path).episode(0)


FREE = free_space(load_scene(SCENES / "greenhouse.scene.json"), 0.24)
TEST = InsideTest(FREE)


@settings(max_examples=25, deadline=None)
@given(st.integers(0, 2**32 - 1))
def test_inside_test_answers_like_geos(seed: int) -> None:
    rng = np.random.default_rng(seed)
    # points all over the hall, on and next to the free-space boundary, and off the map
    boundary = shapely.line_interpolate_point(
        FREE.boundary, rng.uniform(0, FREE.boundary.length, 3000)
    )
    bx, by = shapely.get_x(boundary), shapely.get_y(boundary)
    eps = rng.choice([0.0, 1e-12, -1e-12, 1e-7, -1e-7, 0.05], (2, 3000))
    xs = np.concatenate([rng.uniform(-2, 24, 4000), bx + eps[0], [np.nan, np.inf, -1e300]])
    ys = np.concatenate([rng.uniform(-2, 12, 4000), by + eps[1], [1.0, 2.0, 3.0]])
    got = TEST.contains_xy(xs, ys)
    assert np.array_equal(got, shapely.intersects_xy(FREE, xs, ys))  # reference: GEOS
