"""The replay on a tape that is still being written: episodes appear, the strip says so."""

from __future__ import annotations

import numpy as np
import pytest

from arena_studio.app.replay.replay_window import ReplayWindow
from arena_studio.core.tape import TapeWriter, open_tape, partial_path

REPO_DEMO = "scenes/greenhouse-shared.tape"


@pytest.fixture
def demo():
    from pathlib import Path

    return open_tape(Path(__file__).resolve().parents[2] / REPO_DEMO)


def _add(writer: TapeWriter, episode) -> None:
    writer.begin_episode(team_goal=episode.team_goal)
    writer.steps(episode.poses)
    writer.end_episode()


def test_growing_tape_lists_new_episodes_and_shows_recording(qtbot, tmp_path, demo):
    path = tmp_path / "live.tape"
    writer = TapeWriter(path, demo.scene, dt=demo.dt)
    _add(writer, demo.episode(0))
    _add(writer, demo.episode(1))
    writer.begin_episode()
    writer.steps(demo.episode(2).poses[:40])  # half an episode: stays out of the list
    writer._flush_chunk(writer._episode)  # as a long episode would: its chunks are on disk
    w = ReplayWindow("light")
    qtbot.addWidget(w)
    w.resize(1280, 800)
    w.show()
    w.open_tape(partial_path(path))
    assert w.wait_loaded()
    assert w.following is not None
    assert w.recording_line.isVisible() and w.recording_line.state == "recording"
    assert "2 episodes finished; episode 2 at step 40" in w.recording_line.text()
    assert w.episode_list.model.rowCount() == 2
    # the writer finishes episode 2 and closes the tape; the next poll (called here instead
    # of waiting for the timer) lists it and the strip says the recording is over
    writer.steps(demo.episode(2).poses[40:])
    writer.end_episode()
    assert w.following.tick() == [2]
    assert w.episode_list.model.rowCount() == 3
    writer.close()
    assert w.following.tick() == []
    assert w.recording_line.state == "finished"
    assert not w.following.timer.isActive()
    qtbot.waitUntil(lambda: w.session.summaries_done, timeout=20000)
    w.select_episode(2)
    assert w.wait_loaded()
    np.testing.assert_array_equal(w.prepared.episode.poses, demo.episode(2).poses)
    w.close_tape()
    assert not w.recording_line.isVisible()


def test_a_finished_tape_has_no_recording_strip(qtbot, demo):
    w = ReplayWindow("light")
    qtbot.addWidget(w)
    w.open_tape(demo.path)
    assert w.wait_loaded()
    assert w.following is None and not w.recording_line.isVisible()
    w.close_tape()


def test_recording_mismatches_are_marked_on_timeline_and_canvas(qtbot, tmp_path, demo):
    # a recording whose rover crosses a bench: the timeline gets a "mismatch" mark at the
    # step core.tape_checks names, and the canvas draws its square once the clock gets there
    from arena_studio.core.tape_checks import check_episode

    poses = demo.episode(0).poses.copy()
    a = 0
    start = poses[0, a, :2].copy()
    poses[:, a, :2] = start
    poses[5:, a, 1] = start[1] + 1.5  # one step of 1.5 m: a jump
    path = tmp_path / "odd.tape"
    with TapeWriter(path, demo.scene, dt=demo.dt) as w:
        w.begin_episode(team_goal=demo.episode(0).team_goal)
        w.steps(poses)
        w.end_episode()
    want = check_episode(demo.scene, open_tape(path).episode(0))
    assert [(f.code, f.step) for f in want] == [("jump", 5)]
    win = ReplayWindow("light")
    qtbot.addWidget(win)
    win.resize(1280, 800)
    win.show()
    win.open_tape(path)
    assert win.wait_loaded()
    marks = [m for m in win.timeline.events if m.kind == "mismatch"]
    assert [(m.step, m.agent) for m in marks] == [(5, 0)]
    assert "jump" in marks[0].text
    error = win.theme.qcolor("error").name()

    def error_pixels() -> int:
        img = win.canvas.viewport().grab().toImage()
        at = win.canvas.mapFromScene(*want[0].point)
        return sum(
            img.pixelColor(at.x() + dx, at.y() + dy).name() == error
            for dx in range(-8, 9)
            for dy in range(-8, 9)
        )

    win.clock.seek(0)
    before = error_pixels()
    win.clock.seek(6)
    assert error_pixels() > before + 20  # the square's outline (14 px a side) appeared
    win.close_tape()
