"""File > Import Map, the underlay on the canvas, calibration, and File > Import Robot Run."""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest
from PIL import Image

from arena_studio.app.underlay_view import pixel_to_world
from arena_studio.core.scene import Underlay, load_scene, save_scene

from ..core.robot.bag_helpers import BagBuilder, circle, line, sample_times
from ..core.robot.bag_helpers import scene as yard
from ..core.robot.map_helpers import RES, draw_stairs_map, write_map
from .conftest import view_point

#: set ARENA_STUDIO_SHOTS to a folder to keep the grabs and look at them
SHOTS_ENV = "ARENA_STUDIO_SHOTS"


def _accepting(win, answers: dict | None = None):
    """Replace the window's questions: dialogs are accepted, files answered from ``answers``."""
    answers = answers or {}
    win.run_dialog = lambda dialog: True
    win.ask_save_file = lambda title, suggestion, f: answers.get("save")
    win.ask_open_file = lambda title, f: answers.get("open")


def test_import_map_previews_and_adopts_the_scene(make_window, tmp_path: Path, qtbot) -> None:
    win = make_window()
    path = write_map(tmp_path, origin=(-1.0, 0.5, 0.0), img=draw_stairs_map())
    _accepting(win)
    assert win.import_map(path)
    dialog = win.last_map_dialog
    assert "1 room, 2 obstacles" in dialog.counts.text()
    before = dialog.traced.vertex_count
    dialog.tolerance.setValue(0)  # no simplification: more vertices
    dialog.retrace()
    assert dialog.traced.vertex_count > before
    assert str(dialog.traced.vertex_count) in dialog.counts.text()
    scene = win.document.scene
    assert [r.id for r in scene.rooms] == ["room-1"] and win.document.dirty
    assert scene.underlay is not None and scene.underlay.scale == RES
    assert win.underlay_view.item.isVisible()
    assert win.canvas.layer.theme.name.endswith("+underlay")
    # saving writes the image path relative to the scene file
    (tmp_path / "out").mkdir()
    target = tmp_path / "out" / "floor.scene.json"
    assert win.save_to(target)
    assert json.loads(target.read_text())["underlay"]["image"] == "../floor.pgm"


def test_underlay_item_places_pixels_where_the_scene_says() -> None:
    u = Underlay("a.png", origin=(2.0, 1.0), scale=0.5, rotation=0.0)
    t = pixel_to_world(u, 40, 20)
    # the image's lower-left corner (pixel (0, 20)) sits at the origin, (40, 0) at top right
    lower_left, top_right = t.map(0.0, 20.0), t.map(40.0, 0.0)
    assert lower_left == pytest.approx((2.0, 1.0))
    assert top_right == pytest.approx((22.0, 11.0))
    turned = pixel_to_world(Underlay("a.png", (0.0, 0.0), 1.0, np.pi / 2), 10, 10)
    assert turned.map(10.0, 10.0) == pytest.approx((0.0, 10.0), abs=1e-9)


def test_missing_underlay_image_is_a_status_message(make_window, tmp_path: Path, qtbot) -> None:
    scene = load_scene(Path(__file__).parents[1] / "data" / "underlay.scene.json")
    path = tmp_path / "u.scene.json"
    save_scene(scene, path)
    win = make_window()
    assert win.open_path(path)  # the image is missing: the scene opens all the same
    assert not win.underlay_view.item.isVisible()
    qtbot.waitUntil(lambda: "not found" in win.message_label.text())


def test_calibration_by_two_clicks(make_window, tmp_path: Path, qtbot) -> None:
    from PySide6.QtCore import Qt

    Image.new("L", (100, 50), 200).save(tmp_path / "plan.png")
    win = make_window()
    under = Underlay((tmp_path / "plan.png").as_posix(), (0.0, 0.0), 0.1, 0.0, 0.5, False)
    win.document.reset(yard().with_changes(underlay=under), None)
    win.canvas.fit_scene()
    win.editor.set_tool("tool.calibrate_underlay")
    win.editor.tools["tool.calibrate_underlay"].ask = lambda measured: measured * 2
    for x, y in ((1.0, 1.0), (4.0, 1.0)):
        qtbot.mouseClick(
            win.canvas.viewport(), Qt.MouseButton.LeftButton, pos=view_point(win, x, y)
        )
    got = win.document.scene.underlay
    assert got.scale == pytest.approx(0.2, rel=0.02)
    win.document.undo_stack.undo()
    assert win.document.scene.underlay == under


def test_import_run_maps_topics_and_opens_the_tape(make_window, tmp_path: Path) -> None:
    b = BagBuilder()
    t = sample_times(0, 4, 1)
    b.odometry("/robot1/odom", t, circle(t))
    b.pose_stamped("/robot2/pose", t, line(t))
    b.blob("/acme/blob", 1.0)
    bag = b.write(tmp_path / "run", "mcap")
    win = make_window()
    win.document.reset(yard(), None)
    out = tmp_path / "run.tape"
    _accepting(win, {"save": str(out)})
    assert win.import_run(bag / "metadata.yaml"), win.dialogs.errors
    dialog = win.last_run_dialog
    assert [c.currentData() for c in dialog.combos] == ["/robot1/odom", "/robot2/pose"]
    assert out.is_file() and len(win.last_run_report.episodes) == 1
    assert win.mode == "replay"
    assert any("/acme/blob" in text for _, text in win.dialogs.infos)


def test_bad_map_is_one_error_and_nothing_changes(make_window, tmp_path: Path) -> None:
    win = make_window()
    before = win.document.scene
    (tmp_path / "bad.yaml").write_text("image: x.pgm\n", encoding="utf-8")
    assert not win.import_map(tmp_path / "bad.yaml")
    assert "resolution" in win.dialogs.errors[-1][1] and win.document.scene == before


@pytest.mark.parametrize("theme", ["light", "dark"])
@pytest.mark.parametrize("size", [(1280, 800), (1920, 1080)])
def test_screens_for_a_look(make_window, tmp_path: Path, theme: str, size) -> None:
    """Grabs of the dialogs and the canvas with its underlay, to look at (non-blank checked)."""
    shots_dir = Path(os.environ.get(SHOTS_ENV) or tmp_path / "shots")
    shots_dir.mkdir(exist_ok=True)
    win = make_window(theme)
    win.resize(*size)
    path = write_map(tmp_path)
    _accepting(win)
    win.import_map(path)
    tag = f"{theme}-{size[0]}"
    _look(win, shots_dir / f"window-underlay-{tag}.png")
    shots = {"map-dialog": win.last_map_dialog}
    bag = BagBuilder()
    t = sample_times(0, 2, 1)
    bag.odometry("/robot1/odom", t, circle(t))
    bag.pose_stamped("/robot2/pose", t, line(t))
    bag_path = bag.write(tmp_path / "b", "sqlite3")
    win.document.reset(yard().with_changes(underlay=win.document.scene.underlay), None)
    win.run_dialog = lambda dialog: False
    win.import_run(bag_path)
    shots["run-dialog"] = win.last_run_dialog
    win.edit_underlay()
    shots["underlay-dialog"] = win.last_underlay_dialog
    for name, widget in shots.items():
        widget.show()
        _look(widget, shots_dir / f"{name}-{tag}.png")
        widget.close()


def _look(widget, out: Path) -> None:
    assert widget.grab().save(str(out))
    pixels = np.asarray(Image.open(out).convert("L"))
    assert pixels.std() > 5  # not a blank grab


def test_underlay_dialog_places_a_map_from_its_yaml(make_window, tmp_path: Path) -> None:
    path = write_map(tmp_path, origin=(3.0, -2.0, 0.5))
    win = make_window()
    win.document.reset(yard(), tmp_path / "yard.scene.json")
    captured = {}

    def run(dialog) -> bool:
        dialog.choose(str(path))
        dialog.opacity.setValue(30)
        captured["dialog"] = dialog
        return True

    win.run_dialog = run
    assert win.edit_underlay()
    u = win.document.scene.underlay
    assert u.image == "floor.pgm" and u.origin == (3.0, -2.0) and u.scale == RES
    assert u.rotation == pytest.approx(0.5, abs=1e-5) and u.opacity == pytest.approx(0.3)
    assert win.underlay_view.item.isVisible()
    win.run_dialog = lambda d: (d._remove(), True)[1]
    assert win.edit_underlay() and win.document.scene.underlay is None


def test_ok_without_changes_is_no_edit(make_window, tmp_path: Path) -> None:
    win = make_window()
    under = Underlay("plan.png", (-10.0125, 3.00004), 0.0512345678, 0.123456789, 0.333, True)
    win.document.reset(yard().with_changes(underlay=under), tmp_path / "yard.scene.json")
    win.run_dialog = lambda dialog: True
    assert not win.edit_underlay() and not win.document.undo_stack.canUndo()


def test_cancelled_run_import_writes_nothing(make_window, tmp_path: Path, monkeypatch) -> None:
    from arena_studio.app import window_robot

    b = BagBuilder()
    t = sample_times(0, 30, 1)  # 600 messages a topic: the progress callback gets a say
    b.odometry("/robot1/odom", t, circle(t))
    b.pose_stamped("/robot2/pose", t, line(t))
    bag = b.write(tmp_path / "long", "sqlite3")
    win = make_window()
    win.document.reset(yard(), None)
    out = tmp_path / "long.tape"
    _accepting(win, {"save": str(out)})
    monkeypatch.setattr(window_robot.QProgressDialog, "wasCanceled", lambda self: True)
    assert not win.import_run(bag)
    assert not out.exists() and not list(tmp_path.glob("long.tape*"))
    assert "cancelled" in win.message_label.text()
