"""Playback keys work while the episode list has the keyboard focus, as they do on the canvas:
after picking an episode with the arrow keys, Space plays and Left/Right step.

Up/Down stay list navigation (a table's usual keys); Space, Left and Right in a table that
selects whole rows would only toggle a selection or move a hidden column cursor, so the
replay keys take them (common practice, no source). Steps are read from the playback clock.
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtTest import QTest

from .test_replay_support import write_test_tape
from .test_replay_window import open_window


def test_space_and_arrows_in_the_episode_list(qtbot, tmp_path):
    w = open_window(qtbot, write_test_tape(tmp_path / "hall.tape", episodes=3))
    table = w.episode_list.table
    table.setFocus()
    qtbot.waitUntil(table.hasFocus, timeout=2000)
    QTest.keyClick(table, Qt.Key.Key_Down)  # list navigation still works
    qtbot.waitUntil(lambda: w.prepared is not None and w.prepared.episode.index == 1, timeout=20000)
    w.clock.seek(10)
    QTest.keyClick(table, Qt.Key.Key_Right)
    assert w.clock.step == 11
    QTest.keyClick(table, Qt.Key.Key_Left)
    QTest.keyClick(table, Qt.Key.Key_Left)
    assert w.clock.step == 9
    QTest.keyClick(table, Qt.Key.Key_Space)
    assert w.clock.playing
    QTest.keyClick(table, Qt.Key.Key_Space)
    assert not w.clock.playing
    assert table.hasFocus() and w.prepared.episode.index == 1  # still the same episode


def test_playback_keys_from_the_list_inside_the_main_window(make_window, qtbot, tmp_path):
    win = make_window()
    assert win.open_path(write_test_tape(tmp_path / "hall.tape", episodes=2))
    page = win.replay_page
    assert page.wait_loaded()
    table = page.episode_list.table
    table.setFocus()
    qtbot.waitUntil(table.hasFocus, timeout=2000)
    QTest.keyClick(table, Qt.Key.Key_Right)
    QTest.keyClick(table, Qt.Key.Key_Right)
    assert page.clock.step == 2
    QTest.keyClick(table, Qt.Key.Key_Space)
    assert page.clock.playing
    QTest.keyClick(table, Qt.Key.Key_Space)
    assert not page.clock.playing
