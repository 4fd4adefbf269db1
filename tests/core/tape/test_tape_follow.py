"""Following a tape while it is written (core/tape/follow.py)."""

from __future__ import annotations

import threading

import numpy as np
import pytest

from arena_studio.core.tape import TapeWriter, open_tape, partial_path
from arena_studio.core.tape.follow import follow_tape
from tests.core.tape_helpers import box_scene, write_small_tape


def test_every_cut_of_a_tape_reads_without_error(tmp_path):
    # a growing file is a prefix of the finished one: every prefix must poll cleanly and list
    # exactly the episodes whose end record lies inside it (layout: DEVELOPERS.md "Tape format")
    scene = box_scene()
    whole = tmp_path / "whole.tape"
    write_small_tape(whole, scene, episodes=4, steps=5)
    data = whole.read_bytes()
    reference = open_tape(whole)
    ends = [reference._entries[i].end for i in range(len(reference))]
    header_end = reference.header_end
    grow = tmp_path / "g.tape"
    part = partial_path(grow)
    part.write_bytes(data[:header_end])
    tape = follow_tape(grow)
    assert len(tape) == 0 and tape.recording
    for cut in range(header_end, len(data) - 24, 3):  # stop before the index record
        with open(part, "wb") as f:
            f.write(data[:cut])
        tape.poll()
        assert len(tape) == sum(1 for e in ends if e <= cut), cut
        assert tape.problem is None
    # finishing: the .partial is renamed to the final name, the follower moves along
    part.unlink()
    grow.write_bytes(data)
    before = len(tape)
    assert tape.poll() == list(range(before, 4))
    assert tape.finished and not tape.recording and len(tape) == 4
    for i in range(4):
        np.testing.assert_array_equal(tape.episode(i).poses, reference.episode(i).poses)


def test_a_writer_thread_and_a_polling_reader(tmp_path):
    scene = box_scene()
    path = tmp_path / "live.tape"
    writer = TapeWriter(path, scene, dt=0.1, chunk_steps=3)
    written: list[np.ndarray] = []
    step_done = threading.Semaphore(0)

    def write() -> None:
        rng = np.random.default_rng(7)
        for _ in range(12):
            writer.begin_episode(team_goal=[0, 1, 0])
            poses = rng.uniform(1, 9, size=(int(rng.integers(1, 9)), 2, 3))
            for t in range(len(poses)):
                writer.step(poses[t].copy(), reward=[0.5, 0.25])
                step_done.release()  # the reader may poll between any two steps
            writer.end_episode()
            written.append(poses)
        writer.close()
        step_done.release()

    tape = follow_tape(path)
    thread = threading.Thread(target=write)
    thread.start()
    seen: list[int] = []
    while tape.recording:
        step_done.acquire()
        new = tape.poll()  # must never raise, whatever the writer is doing
        seen.extend(new)
        for i in new:  # a listed episode is complete and readable at once
            assert tape.episode(i).complete
    thread.join()
    assert tape.finished and tape.problem is None
    assert seen == list(range(12))
    for i, poses in enumerate(written):
        np.testing.assert_array_equal(tape.episode(i).poses, poses)


def test_damage_stops_following_without_raising(tmp_path):
    scene = box_scene()
    whole = tmp_path / "w.tape"
    write_small_tape(whole, scene, episodes=3, steps=5)
    data = bytearray(whole.read_bytes())
    ref = open_tape(whole)
    data[ref._entries[1].begin + 12] ^= 0xFF  # inside episode 1's first record
    part = partial_path(tmp_path / "d.tape")
    part.write_bytes(bytes(data[: ref._entries[2].end]))
    tape = follow_tape(tmp_path / "d.tape")
    assert tape.poll() == [0]
    assert len(tape) == 1 and tape.problem is not None and "byte" in tape.problem
    assert tape.poll() == []


def test_nothing_there_is_one_clear_error(tmp_path):
    from arena_studio.core.tape import TapeError

    with pytest.raises(TapeError, match="no such file"):
        follow_tape(tmp_path / "none.tape")
