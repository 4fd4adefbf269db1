"""File > Export for Simulator… writes what ``arena-studio export`` writes, checks every
output first (the scene itself is refused, a stranger's file only replaced after asking).

The npz is read back with numpy.load (allow_pickle=False), the JSON with the standard-library
json parser: outside readers of both formats. The command's own output is the comparison.
"""

from __future__ import annotations

import argparse
import json

import numpy as np

from arena_studio.commands import export as export_command
from arena_studio.core.export import FORMATS
from arena_studio.core.resources import DEFAULT_DEMO_SCENE, demo_path


def _open_copy(win, tmp_path):
    scene = tmp_path / "hall.scene.json"
    scene.write_bytes(demo_path(DEFAULT_DEMO_SCENE).read_bytes())
    assert win.open_path(scene)
    return scene


def test_every_format_is_offered_with_its_outputs(main_window, tmp_path):
    scene = _open_copy(main_window, tmp_path)
    dialog = main_window.make_export_dialog()
    assert [dialog.format.itemData(i) for i in range(dialog.format.count())] == list(FORMATS)
    assert dialog.path.text().startswith(str(tmp_path))
    dialog.format.setCurrentIndex(FORMATS.index("grid"))
    assert dialog.resolution.isEnabled() and dialog.clearance.isEnabled()
    # the grid is a set of three files and the dialog lists them all before writing
    assert dialog.files.text() == "Will write: hall-grid.npy, hall-grid.png, hall-grid.json"
    dialog.format.setCurrentIndex(FORMATS.index("svg"))
    assert not dialog.resolution.isEnabled()
    assert dialog.path.text().endswith("hall.svg")
    assert scene.exists()


def test_npz_matches_the_command(main_window, tmp_path):
    _open_copy(main_window, tmp_path)
    dialog = main_window.make_export_dialog()
    dialog.format.setCurrentIndex(FORMATS.index("npz"))
    ours = tmp_path / "dialog.npz"
    dialog.path.setText(str(ours))
    assert dialog.export(), dialog.status.text()
    theirs = tmp_path / "command.npz"
    args = argparse.Namespace(
        scene=str(tmp_path / "hall.scene.json"),
        format="npz",
        output=str(theirs),
        resolution=0.05,
        clearance=0.0,
        force=False,
        quiet=True,
    )
    assert export_command.run(args) == 0
    with np.load(ours, allow_pickle=False) as a, np.load(theirs, allow_pickle=False) as b:
        assert sorted(a.files) == sorted(b.files)
        for key in a.files:
            np.testing.assert_array_equal(a[key], b[key])
        scene = main_window.document.scene
        assert list(a["landmark_ids"]) == [lm.id for lm in scene.landmarks]


def test_json_export_writes_its_sidecar(main_window, tmp_path):
    _open_copy(main_window, tmp_path)
    dialog = main_window.make_export_dialog()
    assert dialog.export(), dialog.status.text()
    names = sorted(p.name for p in dialog.written)
    assert names == ["hall-export.scene.json", "hall-export.scene.json.about.json"]
    data = json.loads(dialog.written[0].read_text(encoding="utf-8"))
    assert data["name"] == main_window.document.scene.name


def test_the_scene_itself_is_refused(main_window, tmp_path):
    scene = _open_copy(main_window, tmp_path)
    before = scene.read_bytes()
    dialog = main_window.make_export_dialog()
    dialog.path.setText(str(scene))
    assert not dialog.export()
    assert "input" in dialog.status.text()
    assert scene.read_bytes() == before


def test_a_strangers_file_is_replaced_only_after_asking(main_window, tmp_path):
    _open_copy(main_window, tmp_path)
    notes = tmp_path / "notes.wkt"
    notes.write_text("my own notes\n", encoding="utf-8")
    dialog = main_window.make_export_dialog()
    dialog.format.setCurrentIndex(FORMATS.index("wkt"))
    dialog.path.setText(str(notes))
    asked: list[str] = []
    dialog.confirm_replace = lambda clash: asked.append(str(clash)) or False
    assert not dialog.export()
    assert asked and notes.read_text(encoding="utf-8") == "my own notes\n"
    dialog.confirm_replace = lambda clash: True
    assert dialog.export()
    assert notes.read_text(encoding="utf-8").startswith("#")
    # our earlier output is replaced without a question
    dialog.confirm_replace = lambda clash: asked.append("again") or False
    assert dialog.export() and asked[-1] != "again"


def test_demo_exports_default_to_home(main_window, monkeypatch, tmp_path):
    monkeypatch.setenv("HOME", str(tmp_path))
    assert main_window.open_demo()
    dialog = main_window.make_export_dialog()
    assert str(demo_path(DEFAULT_DEMO_SCENE).parent) not in dialog.path.text()
