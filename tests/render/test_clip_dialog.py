"""The clip dialog exports what the command line exports, shows progress and cancels cleanly.

Outputs are read back with Pillow (independent decoder). pytest-qt drives the dialog.
"""

from __future__ import annotations

import pytest
from PIL import Image

from arena_studio.app.clip_dialog import KINDS, ClipDialog, open_clip_dialog
from arena_studio.core.tape import open_tape

from .demo_episode import write_demo_tape


@pytest.fixture(scope="module")
def tape(tmp_path_factory):
    return open_tape(write_demo_tape(tmp_path_factory.mktemp("tapes") / "demo.tape"))


def _small(dialog: ClipDialog, kind: str, path) -> None:
    dialog.kind.setCurrentIndex([ext for _l, ext in KINDS].index(kind))
    dialog.path.setText(str(path))
    dialog.size_choice.setCurrentIndex(dialog.size_choice.count() - 1)  # custom
    dialog.width_box.setValue(320)
    dialog.height_box.setValue(180)
    dialog.fps.setValue(10)


def test_gif_export_with_progress(qtbot, tape, tmp_path):
    dialog = open_clip_dialog(None, tape, 1)
    qtbot.addWidget(dialog)
    _small(dialog, ".gif", tmp_path / "clip.gif")
    dialog.title.setText("Episode one")
    assert dialog.export()
    assert dialog.progress.value() == dialog.progress.maximum() > 0
    with Image.open(tmp_path / "clip.gif") as im:
        # 2 s title card + 2 s of episode at 10 fps
        assert im.size == (320, 180) and im.n_frames == 40
    assert "Saved" in dialog.status.text()


def test_cancel_leaves_nothing(qtbot, tape, tmp_path):
    dialog = ClipDialog(None, tape, 0)
    qtbot.addWidget(dialog)
    _small(dialog, ".mp4", tmp_path / "clip.mp4")
    original = dialog._progress

    def progress_then_cancel(done, total):
        original(done, total)
        if done == 3:
            dialog.close_button.click()  # the button reads "Cancel" while exporting

    dialog._progress = progress_then_cancel
    assert not dialog.export()
    assert list(tmp_path.iterdir()) == []
    assert "cancelled" in dialog.status.text()
    assert dialog.close_button.text() == "Close"


def test_still_and_errors(qtbot, tape, tmp_path):
    dialog = ClipDialog(None, tape, 0, time=1.0)
    qtbot.addWidget(dialog)
    _small(dialog, ".svg", tmp_path / "still.svg")
    assert not dialog.fps.isEnabled()  # clip timing does not apply to a still
    assert dialog.export() and (tmp_path / "still.svg").read_bytes().startswith(b"<?xml")
    dialog.path.setText(str(tmp_path / "missing" / "x.png"))
    assert not dialog.export()
    assert "does not exist" in dialog.status.text()
    dialog.kind.setCurrentIndex(0)
    dialog.mode.setCurrentIndex(2)
    dialog.more.setText("1, 0")
    dialog.path.setText(str(tmp_path / "cmp.mp4"))
    assert not dialog.export()
    assert "exactly one" in dialog.status.text()


def test_look_of_the_dialog(qtbot, tape, tmp_path):
    dialog = ClipDialog(None, tape, 0)
    qtbot.addWidget(dialog)
    dialog.show()
    qtbot.waitExposed(dialog)
    shot = tmp_path / "clip_dialog.png"
    assert dialog.grab().save(str(shot))
    assert dialog.width() < 1100 and dialog.height() < 1000  # fits a laptop screen


def test_dialog_never_writes_over_its_tape_and_asks_about_strangers(qtbot, tape, tmp_path):
    dialog = ClipDialog(None, tape, 0, time=1.0)
    qtbot.addWidget(dialog)
    before = tape.path.read_bytes()
    _small(dialog, ".png", tape.path)
    dialog.path.setText(str(tape.path))  # typed by hand: the tape itself
    assert not dialog.export()
    assert "input" in dialog.status.text() and tape.path.read_bytes() == before
    photo = tmp_path / "holiday.png"
    photo.write_bytes(b"\x89PNG\r\n\x1a\nsomeone's photo")
    asked = []
    dialog.confirm_replace = lambda target: asked.append(target) or False
    dialog.path.setText(str(photo))
    assert not dialog.export()
    assert asked == [photo] and photo.read_bytes().endswith(b"someone's photo")
    dialog.confirm_replace = lambda target: True
    assert dialog.export()
    with Image.open(photo) as image:  # Pillow reads the new still
        assert image.size == (320, 180)
    asked.clear()
    dialog.confirm_replace = lambda target: asked.append(target) or False
    assert dialog.export() and asked == []  # an earlier still of ours: no question
def test_dialog_boxes_take_the_command_line_ranges(qtbot, tape):
    """The boxes accept what ``arena-studio render`` accepts (core.limits is the one table)."""
    from arena_studio.core import limits

    dialog = ClipDialog(None, tape, 0)
    qtbot.addWidget(dialog)
    for box, limit in (
        (dialog.fps, limits.FPS),
        (dialog.speed, limits.SPEED),
        (dialog.width_box, limits.FRAME_SIDE),
        (dialog.height_box, limits.FRAME_SIDE),
        (dialog.start, limits.TIME),
        (dialog.end, limits.TIME),
        (dialog.trail, limits.TRAIL),
        (dialog.title_seconds, limits.TITLE_SECONDS),
    ):
        assert (box.minimum(), box.maximum()) == (limit.low, limit.high)
        box.setValue(limit.high * 10 + 1)  # Qt clamps typed values into the range
        assert box.value() == limit.high


def test_still_of_two_episodes_side_by_side(qtbot, tape, tmp_path):
    dialog = ClipDialog(None, tape, 0, time=1.0)
    qtbot.addWidget(dialog)
    _small(dialog, ".png", tmp_path / "pair.png")
    assert dialog.mode.isEnabled()  # a still may compare two episodes
    dialog.mode.setCurrentIndex(2)
    dialog.more.setText("1")
    assert dialog.export()
    with Image.open(tmp_path / "pair.png") as im:
        assert im.size == (320, 180)
    dialog.mode.setCurrentIndex(1)  # a sequence has no single moment
    dialog.more.setText("1")
    dialog.path.setText(str(tmp_path / "seq.png"))
    assert not dialog.export()
    assert "two compared side by side" in dialog.status.text()
    assert not (tmp_path / "seq.png").exists()
