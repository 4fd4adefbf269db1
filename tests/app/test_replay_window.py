"""The replay window on a real tape: list, failed cooperative episode, diagnosis, canvas.

Reference values come from outside the viewer: the tape reader's poses and
``core.metrics.episode_metrics`` computed here on the same episode; the drawn colour at an
agent's position is compared with the theme's identity colour read from the palette file.
"""

from __future__ import annotations

import html
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import QPoint, QPointF, Qt

from arena_studio.app.replay.replay_window import ReplayWindow
from arena_studio.core.analysis.diagnosis_words import diagnosis_words
from arena_studio.core.analysis.metrics import episode_metrics
from arena_studio.core.tape import open_tape
from arena_studio.core.wording import LandmarkNames

from .test_replay_support import write_test_tape

REPO = Path(__file__).resolve().parents[2]
DEMO_TAPES = sorted((REPO / "scenes").glob("*.tape"))


@pytest.fixture
def written_tape(tmp_path) -> Path:
    return write_test_tape(tmp_path / "hall.tape")


def open_window(qtbot, path: Path, theme: str = "light", now=None) -> ReplayWindow:
    w = ReplayWindow(theme, now=now)
    qtbot.addWidget(w)
    w.resize(1280, 800)
    w.show()
    w.open_tape(path)
    assert w.wait_loaded()
    assert w.session.wait_summaries(60000)
    qtbot.waitUntil(lambda: w.session.summaries_done, timeout=10000)
    return w


def tapes_to_try(tmp_path) -> list[Path]:
    return [write_test_tape(tmp_path / "hall.tape"), *DEMO_TAPES[:1]]


def test_failed_cooperative_episode_diagnosis_and_canvas_state(qtbot, tmp_path):
    for path in tapes_to_try(tmp_path):
        tape = open_tape(path)
        w = open_window(qtbot, path)
        w.episode_list.set_preset("failed_cooperative")
        rows = w.episode_list.visible_summaries()
        # reference: the metrics module on the tape reader's episodes
        expected = [
            i
            for i in range(len(tape))
            if (m := episode_metrics(tape.scene, tape.episode(i))).kind == "cooperative"
            and not m.success
        ]
        assert [r.index for r in rows] == expected
        with_diag = [r for r in rows if r.diagnosis_step is not None]
        assert with_diag, f"{path.name}: no failed cooperative episode with a diagnosis"
        row = with_diag[0]
        w.episode_list.table.setFocus()
        assert w.episode_list.select_episode(row.index)
        assert w.wait_loaded()
        assert w.prepared.episode.index == row.index
        w.clock.end()
        qtbot.keyClick(w, Qt.Key.Key_D)  # go to diagnosis
        ref = episode_metrics(tape.scene, tape.episode(row.index))
        assert w.clock.step == ref.diagnosis_step == row.diagnosis_step
        said = diagnosis_words(ref.diagnosis, LandmarkNames.of(tape.scene), ref.diagnosis_code)
        assert html.escape(said) in w.verdict.text()
        w.canvas.viewport().repaint()
        assert w.canvas.layer_episode.painted_step == ref.diagnosis_step
        poses = tape.episode(row.index).poses[ref.diagnosis_step]
        np.testing.assert_allclose(w.canvas.agent_positions(), poses[:, :2])
        w.close()


def test_agent_bodies_are_drawn_at_the_tape_poses(qtbot, written_tape):
    tape = open_tape(written_tape)
    w = open_window(qtbot, written_tape)
    w.select_episode(1)
    assert w.wait_loaded()
    w.clock.seek(20)
    w.canvas.viewport().repaint()
    image = w.canvas.viewport().grab().toImage()
    poses = tape.episode(1).poses[20]
    for a, (x, y, heading) in enumerate(poses):
        r = tape.scene.agents[a].radius * 0.5  # half-way to the rim, behind the heading tick
        px = w.canvas.mapFromScene(QPointF(x - r * np.cos(heading), y - r * np.sin(heading)))
        got = image.pixelColor(px)
        want = w.theme.agent_color(a)
        diff = max(
            abs(got.red() - want.red()),
            abs(got.green() - want.green()),
            abs(got.blue() - want.blue()),
        )
        assert diff <= 40, f"agent {a}: drawn {got.name()} at its pose, identity {want.name()}"
    w.close()


class FakeTime:
    """Seconds that pass only when the test says so (playback never reads the wall clock)."""

    def __init__(self) -> None:
        self.now = 0.0

    def __call__(self) -> float:
        return self.now


def test_transport_shortcuts(qtbot, written_tape):
    clock = FakeTime()
    w = open_window(qtbot, written_tape, now=clock)
    c = w.clock
    w.canvas.setFocus()
    qtbot.keyClick(w.canvas, Qt.Key.Key_Right)
    assert c.step == 1
    qtbot.keyClick(w.canvas, Qt.Key.Key_Right, Qt.KeyboardModifier.ShiftModifier)
    assert c.step == 11  # 1 s at dt 0.1 s
    qtbot.keyClick(w.canvas, Qt.Key.Key_Left)
    assert c.step == 10
    qtbot.keyClick(w.canvas, Qt.Key.Key_Left, Qt.KeyboardModifier.ShiftModifier)
    assert c.step == 0
    qtbot.keyClick(w.canvas, Qt.Key.Key_End)
    assert c.step == c.steps - 1
    qtbot.keyClick(w.canvas, Qt.Key.Key_Home)
    assert c.step == 0
    later = [s for s in c.event_steps if s > 0]
    assert len(later) >= 2
    qtbot.keyClick(w.canvas, Qt.Key.Key_N)
    assert c.step == later[0]
    qtbot.keyClick(w.canvas, Qt.Key.Key_N)
    assert c.step == later[1]
    qtbot.keyClick(w.canvas, Qt.Key.Key_P)
    assert c.step == later[0]
    qtbot.keyClick(w.canvas, Qt.Key.Key_BracketRight)
    assert c.speed == 2.0
    qtbot.keyClick(w.canvas, Qt.Key.Key_Space)
    assert c.playing
    start = c.step
    clock.now += 0.35  # 0.35 s at 2x speed with 0.1 s steps: 7 steps on
    c.tick()  # what the playback timer does at each tick
    assert c.step == start + 7
    qtbot.keyClick(w.canvas, Qt.Key.Key_Space)
    assert not c.playing
    w.close()


def test_hover_card_reports_pose_speed_role_and_reward(qtbot, written_tape):
    tape = open_tape(written_tape)
    w = open_window(qtbot, written_tape)
    w.select_episode(0)
    assert w.wait_loaded()
    w.clock.seek(10)
    ep = tape.episode(0)
    x, y, _ = ep.poses[10, 0]
    pos = QPointF(w.canvas.mapFromScene(QPointF(x, y)))
    assert w.canvas.agent_at(pos) == 0
    text = w.canvas.agent_tooltip(0)
    # speed: step length / dt between steps 9 and 10 (finite difference, common practice)
    speed = np.hypot(*(ep.poses[10, 0, :2] - ep.poses[9, 0, :2])) / ep.dt
    assert f"speed {speed:.2f} m/s" in text
    assert f"x {x:.2f} m, y {y:.2f} m" in text
    assert f"reward so far {ep.rewards[:11, 0].sum():.3g}" in text
    assert "role " in text
    w.close()


def test_batch_goal_click_filters_list_and_compare_ghosts(qtbot, written_tape):
    w = open_window(qtbot, written_tape)
    w.dock_batch.raise_()
    qtbot.waitUntil(
        lambda: bool(w.batch.grid.cells()) or w.batch.grid.repaint() or False, timeout=3000
    )
    rect, stat = w.batch.grid.cells()[0]
    qtbot.mouseClick(w.batch.grid, Qt.MouseButton.LeftButton, pos=rect.center().toPoint())
    shown = w.episode_list.visible_summaries()
    assert shown and all(s.goal == stat.goal for s in shown)
    assert stat.episodes == len(shown) and stat.successes == sum(bool(s.success) for s in shown)
    other = 1 if w.prepared.episode.index == 0 else 0  # never the shown episode itself
    assert w.compare_with(other, "ghost")
    qtbot.waitUntil(lambda: w.compare is not None, timeout=5000)
    assert w.canvas.layer_ghost.episode is not None
    assert w.canvas.layer_ghost.episode.index == other
    # the ghost shows only where the other team went: no goal rings, pursued lines or roles,
    # even before any view option was touched
    ghost = w.canvas.layer_ghost.options
    assert not ghost.team_goal and not ghost.pursued and ghost.roles == "none"
    w.set_compare_mode("side")
    assert w.canvas_b.isVisible() and w.canvas_b.prepared.episode.index == other
    w.clock.seek(7)
    assert w.canvas_b.step == 7  # shared timeline
    w.close()


def test_scene_file_beside_the_tape_is_compared_by_content_hash(qtbot, written_tape):
    # reference: core.scene.Scene.content_hash (SHA-256 of the canonical JSON)
    from dataclasses import replace

    from arena_studio.core.scene.model import save_scene

    w = open_window(qtbot, written_tape)
    said: list[str] = []
    w.warn = lambda title, text: said.append(text)
    same = w.scene_value
    save_scene(same, written_tape.parent / "same.scene.json")
    assert not w.warn_if_scene_differs(same, written_tape.parent / "same.scene.json")
    assert said == []
    moved = replace(same, name="hall, edited")
    assert moved.content_hash() != same.content_hash()
    assert w.warn_if_scene_differs(moved, written_tape.parent / "edited.scene.json")
    assert said and "edited.scene.json is not the scene this tape was recorded in" in said[0]
    w.close()


def test_plot_click_and_timeline_drag_seek(qtbot, written_tape):
    w = open_window(qtbot, written_tape)
    w.select_episode(1)
    assert w.wait_loaded()
    plot = w.plots.plots["distance"]
    w.plots.cursors["distance"].setValue(4.0)
    w.plots.cursors["distance"].sigDragged.emit(w.plots.cursors["distance"])
    assert w.clock.step == 40  # 4 s at dt 0.1 s
    assert (
        set(w.plots.plots) == {"distance", "reward", "channel:battery"} - {"channel:battery"}
        or "distance" in w.plots.plots
    )
    w.clock.seek(70)
    assert w.plots.cursors["distance"].value() == pytest.approx(7.0)
    bar = w.timeline
    x = 300  # the track runs from 14 px to width - 14 px over steps 0 .. steps - 1
    qtbot.mousePress(bar, Qt.MouseButton.LeftButton, pos=QPoint(x, 30))
    assert w.clock.step == round((x - 14) / (bar.width() - 28) * (w.clock.steps - 1))
    del plot
    w.close()


def test_typing_in_the_search_box_does_not_trigger_playback_keys(qtbot, written_tape):
    w = open_window(qtbot, written_tape)
    w.activateWindow()
    w.episode_list.search.setFocus()
    qtbot.keyClicks(w.episode_list.search, "n p d l")  # letters that are shortcuts elsewhere
    assert w.episode_list.search.text() == "n p d l"
    assert w.clock.step == 0 and not w.clock.playing and w.clock.loop is None
    w.close()


def test_dark_theme_reaches_every_part(qtbot, written_tape):
    # the colours come from resources/palettes/dark.json, read here with the json module
    import json

    palette = json.loads((REPO / "resources/palettes/dark.json").read_text())["colors"]
    w = open_window(qtbot, written_tape)
    w.set_theme("dark")
    w.timeline.repaint()
    corner = w.timeline.grab().toImage().pixelColor(2, 2).name().upper()
    assert corner == palette["room_fill"][:7].upper()
    w.canvas.viewport().repaint()
    img = w.canvas.viewport().grab().toImage()
    assert img.pixelColor(img.width() - 2, img.height() // 2).name().upper() in {
        palette["background"][:7].upper(),
        palette["grid_minor"][:7].upper(),
        palette["grid_major"][:7].upper(),
    }
    w.close()


def test_a_cut_tape_opens_with_the_recovery_message(qtbot, tmp_path):
    # reference: the tape reader's own recovery message for the same cut file
    path = write_test_tape(tmp_path / "cut.tape", episodes=4)
    data = path.read_bytes()
    path.write_bytes(data[: int(len(data) * 0.7)])
    tape = open_tape(path)
    assert tape.truncated and tape.recovery_message
    w = ReplayWindow("light")
    qtbot.addWidget(w)
    said: list[str] = []
    w.statusMessage.connect(said.append)
    w.open_tape(path)
    assert w.wait_loaded()
    assert tape.recovery_message in said
    assert w.episode_list.model.rowCount() == len(tape)
    w.session.wait_summaries()
    w.close()


def test_an_episode_that_cannot_be_prepared_says_so(qtbot, written_tape, monkeypatch):
    from arena_studio.app.replay import session as session_module

    w = open_window(qtbot, written_tape)

    def broken(scene, episode):
        raise ValueError(f"episode {episode.index}: 3 agents, scene has 2")

    monkeypatch.setattr(session_module, "load_prepared", broken)
    w.select_episode(2)
    qtbot.waitUntil(lambda: "cannot be shown" in w.verdict.text(), timeout=5000)
    assert "3 agents, scene has 2" in w.verdict.text()
    assert w.wait_loaded(100)  # nothing left pending
    w.close()
