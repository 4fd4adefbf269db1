"""Playback clock and scrub bar: stepping, jumps, events, speed, loop, wall-time playback.

Expected positions are derived in each test from the definition "position = start step +
elapsed wall seconds x speed / dt" (common practice for time-based playback, no source).
"""

from __future__ import annotations

import pytest
from PySide6.QtCore import QPoint, QPointF, Qt
from PySide6.QtGui import QImage
from PySide6.QtWidgets import QApplication

from arena_studio.app.replay.prepared import EventMark
from arena_studio.app.replay.timeline import TimelineBar, nice_tick
from arena_studio.app.replay.transport import MAX_SPEED, MIN_SPEED, PlaybackClock


class FakeTime:
    def __init__(self) -> None:
        self.now = 0.0

    def __call__(self) -> float:
        return self.now


@pytest.fixture
def clock(qtbot):
    fake = FakeTime()
    c = PlaybackClock(now=fake)
    c.fake = fake  # type: ignore[attr-defined]
    c.set_episode(steps=101, dt=0.1, event_steps=[10, 40, 75])
    return c


def test_step_jump_home_end(clock):
    clock.step_by(1)
    assert clock.step == 1
    clock.step_by(-5)
    assert clock.step == 0  # clamped at the start
    clock.jump_seconds(1.0)
    assert clock.step == 10  # 1 s / 0.1 s per step
    clock.jump_seconds(-0.3)
    assert clock.step == 7
    clock.end()
    assert clock.step == 100
    clock.step_by(1)
    assert clock.step == 100  # clamped at the end
    clock.home()
    assert clock.step == 0


def test_next_and_previous_event(clock):
    assert clock.next_event() and clock.step == 10
    assert clock.next_event() and clock.step == 40
    assert clock.previous_event() and clock.step == 10
    assert not clock.previous_event() and clock.step == 10
    clock.seek(80)
    assert not clock.next_event() and clock.step == 80
    assert clock.previous_event() and clock.step == 75


def test_playback_follows_wall_time_and_drops_frames(clock):
    clock.seek(5)
    clock.play()
    clock.fake.now = 0.55  # 0.55 s at 1x and dt 0.1 -> 5.5 steps later: step 10
    clock.tick()
    assert clock.step == 10
    clock.set_speed(4.0)  # re-anchors at step 10
    clock.fake.now = 1.05  # 0.5 s x 4 / 0.1 = 20 steps, dropped frames in between
    clock.tick()
    assert clock.step == 30
    clock.fake.now = 100.0
    clock.tick()
    assert clock.step == 100 and not clock.playing  # stops at the end


def test_speed_is_clamped_and_steps_through_the_offered_values(clock):
    clock.set_speed(1000)
    assert clock.speed == MAX_SPEED == 16.0
    clock.set_speed(0.0)
    assert clock.speed == MIN_SPEED == 0.1
    clock.set_speed(1.0)
    clock.faster()
    assert clock.speed == 2.0
    clock.slower()
    clock.slower()
    assert clock.speed == 0.5


def test_loop_range_wraps(clock):
    clock.set_loop(20, 29)  # ten steps: 20..29
    assert clock.step == 20
    clock.play()
    clock.fake.now = 1.25  # 12.5 steps after 20 -> 32.5 -> wraps to 20 + (12.5 mod 10) = 22
    clock.tick()
    assert clock.step == 22 and clock.playing
    clock.home()
    assert clock.step == 20
    clock.set_loop(None)
    assert clock.loop is None


def test_timeline_click_and_drag_seek(qtbot, clock):
    bar = TimelineBar(clock)
    qtbot.addWidget(bar)
    bar.resize(628, 60)  # track 600 px wide (14 px margins)
    bar.show()
    qtbot.mouseClick(bar, Qt.MouseButton.LeftButton, pos=bar.rect().center())
    assert clock.step == 50
    x = round(bar.x_of_step(75))
    qtbot.mouseClick(bar, Qt.MouseButton.LeftButton, pos=QPoint(x, 30))
    assert clock.step == 75


def test_timeline_finds_event_under_pointer(qtbot, clock):
    bar = TimelineBar(clock)
    qtbot.addWidget(bar)
    bar.resize(628, 60)
    marks = (
        EventMark(40, "reached", agent=0, text="rover-1 reached Pump"),
        EventMark(75, "diagnosis", text="went for different goals"),
    )
    bar.set_events(marks, agent_count=2)
    lower = bar._lane_y("reached")
    assert bar.event_at(QPointF(bar.x_of_step(40) + 2, lower)) == marks[0]
    assert bar.event_at(QPointF(bar.x_of_step(75), lower)) == marks[1]  # pole spans lanes
    assert bar.event_at(QPointF(bar.x_of_step(60), lower)) is None


@pytest.mark.parametrize(
    ("span", "width", "expected"),
    [(10.0, 600.0, 1.0), (100.0, 600.0, 10.0), (5.0, 600.0, 0.5), (30.0, 600.0, 5.0)],
)
def test_ruler_ticks_are_1_2_5_steps(span, width, expected):
    # 1-2-5 ruler spacing: common practice for axis ticks, no source
    assert nice_tick(span, width) == pytest.approx(expected)


def test_readme_lists_every_replay_shortcut():
    # the README's "Replay viewer" table is the user's reference; it must not drift
    from pathlib import Path

    from arena_studio.app.replay.actions import REPLAY_ACTIONS

    text = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    section = text.split("## Replay viewer", 1)[1].split("\n## ", 1)[0]
    for spec in REPLAY_ACTIONS:
        for key in spec.shortcuts:
            assert key in section, f"README does not mention {key} ({spec.title})"


def test_timeline_step_repaints_leave_the_same_pixels_as_a_full_paint(qtbot, clock):
    """A step change repaints only the strips under the old and new cursor; what is on screen
    (the window's backing store, read back with QScreen.grabWindow) must equal a full paint
    of the bar at that step (QWidget.grab). Common practice, no source."""
    bar = TimelineBar(clock)
    qtbot.addWidget(bar)
    bar.resize(628, 60)
    bar.set_events((EventMark(40, "reached", agent=0, text="r"),), agent_count=1)
    bar.show()
    qtbot.waitExposed(bar)
    for step in (10, 11, 60, 59, 99, 0):
        clock.seek(step)
        QApplication.processEvents()
        on_screen = bar.screen().grabWindow(bar.winId()).toImage()
        full = bar.grab().toImage()
        assert on_screen.size() == full.size()
        fmt = QImage.Format.Format_RGB32
        assert on_screen.convertToFormat(fmt) == full.convertToFormat(fmt), step
    # the cursor did move: a frame at another step differs
    clock.seek(30)
    QApplication.processEvents()
    assert bar.screen().grabWindow(bar.winId()).toImage().convertToFormat(
        fmt
    ) != full.convertToFormat(fmt)
