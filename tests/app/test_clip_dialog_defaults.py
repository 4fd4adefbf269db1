"""The clip dialog's defaults: never into the bundled demo folder, a failed episode's still
at the moment the metrics diagnose, the outcome drawn under the frame (with a switch),
and the "where to save" hint only while no path is set.

The expected diagnosis and its time come from core.analysis.metrics.episode_metrics, the
same judge the replay and ``arena-studio stats`` use; the still is read back with Pillow.
"""

from __future__ import annotations

import pytest
from PIL import Image

from arena_studio.app.clip_dialog import HINT, KINDS, ClipDialog, default_folder
from arena_studio.core.analysis.diagnosis_words import diagnosis_words
from arena_studio.core.analysis.metrics import episode_metrics
from arena_studio.core.analysis.statement import episode_statement
from arena_studio.core.resources import demo_path
from arena_studio.core.tape import open_tape
from arena_studio.core.wording import LandmarkNames

from .test_replay_support import write_test_tape


@pytest.fixture
def tape(tmp_path):
    return open_tape(write_test_tape(tmp_path / "hall.tape", episodes=2))


def test_a_failed_episode_defaults_to_its_diagnosis(qtbot, tape):
    m = episode_metrics(tape.scene, tape.episode(1))
    assert not m.success and m.diagnosis and m.diagnosis_step is not None
    dialog = ClipDialog(None, tape, 1, time=0.0)
    qtbot.addWidget(dialog)
    assert dialog.moment.value() == pytest.approx(m.diagnosis_step * tape.dt, abs=0.01)
    assert dialog.frame_options().statement
    # what the frame says under the scene: the metrics' diagnosis, landmarks named by label
    said = diagnosis_words(m.diagnosis, LandmarkNames.of(tape.scene), m.diagnosis_code)
    statement = episode_statement(tape.scene, tape.episode(1))
    assert "failed" in statement and said in statement and "Who went where" in statement
    assert m.goal_key not in statement and "West valve + East valve" in statement
    # the caption line is only what the user typed
    assert dialog.frame_options().caption is None
    dialog.caption.setText("Run 12")
    assert dialog.frame_options().caption == "Run 12"


def test_a_success_keeps_the_playhead_and_says_it_succeeded(qtbot, tape):
    dialog = ClipDialog(None, tape, 0, time=1.5)
    qtbot.addWidget(dialog)
    assert dialog.moment.value() == pytest.approx(1.5)
    assert "succeeded" in episode_statement(tape.scene, tape.episode(0))


def test_the_still_carries_the_statement(qtbot, tape, tmp_path):
    dialog = ClipDialog(None, tape, 1)
    qtbot.addWidget(dialog)
    dialog.kind.setCurrentIndex([ext for _l, ext in KINDS].index(".png"))
    with_line = tmp_path / "with.png"
    dialog.path.setText(str(with_line))
    assert dialog.export(), dialog.status.text()
    dialog.statement.setChecked(False)
    without = tmp_path / "without.png"
    dialog.path.setText(str(without))
    assert dialog.export(), dialog.status.text()
    with Image.open(with_line) as a, Image.open(without) as b:
        assert a.size == b.size
        # the caption band at the bottom differs: text is drawn there only with the line
        h = a.size[1]
        band = (0, h - 20, a.size[0], h)
        assert a.crop(band).tobytes() != b.crop(band).tobytes()


def test_the_hint_shows_only_without_a_path(qtbot, tape):
    dialog = ClipDialog(None, tape, 0)
    qtbot.addWidget(dialog)
    assert dialog.path.text() and dialog.status.text() != HINT
    dialog.path.setText("")
    assert dialog.status.text() == HINT
    dialog.path.setText("/tmp/x.mp4")
    assert dialog.status.text() == ""


def test_demo_tapes_export_outside_the_package(monkeypatch, tmp_path):
    monkeypatch.setenv("HOME", str(tmp_path))
    folder = default_folder(demo_path("greenhouse-greedy.tape"))
    assert folder.resolve() != demo_path().resolve()
    assert demo_path().resolve() not in folder.resolve().parents
    beside = tmp_path / "runs" / "mine.tape"
    beside.parent.mkdir()
    assert default_folder(beside) == beside.parent


def test_the_statement_box_also_hides_who_went_where(qtbot, tape):
    dialog = ClipDialog(None, tape, 0)
    qtbot.addWidget(dialog)
    assert dialog.frame_options().statement  # on by default
    dialog.statement.setChecked(False)
    assert not dialog.frame_options().statement
