"""Output checks before writing (issue: an export overwrote the scene it came from).

Every export format, render, rollout and import is run onto one of its own inputs and onto a
stranger's file; both must be refused before anything is written, the input byte-identical
afterwards. Re-running onto an earlier output of the same kind needs no --force. Exit codes
follow the CLI rule in arena_studio/cli.py (2: refused), common practice for command-line
tools.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest

from arena_studio.cli import main
from arena_studio.core.export import FORMATS, output_paths
from arena_studio.core.outputs import Output, OutputClash, check_outputs, path_kind
from tests.conftest import SCENES

GREENHOUSE = SCENES / "greenhouse.scene.json"


@pytest.fixture
def scene_copy(tmp_path: Path) -> Path:
    path = tmp_path / "mine.scene.json"
    path.write_bytes(GREENHOUSE.read_bytes())
    return path


def test_grid_export_onto_its_own_scene_is_refused(scene_copy: Path, capsys) -> None:
    # the measured case: -o mine.scene writes mine.scene.json as the grid's sidecar
    before = scene_copy.read_bytes()
    out = str(scene_copy.with_name("mine.scene"))
    assert main(["export", str(scene_copy), "--format", "grid", "-o", out]) == 2
    err = capsys.readouterr().err
    assert "mine.scene.json" in err and "input" in err and err.count("\n") == 1
    assert scene_copy.read_bytes() == before
    assert not scene_copy.with_name("mine.scene.npy").exists()  # nothing written at all


# (format, name of the scene file, -o value): one file of each format's set lands on it
ONTO_SOURCE = [
    ("json", "s.scene.json", "s.scene.json"),
    ("json", "s.json.about.json", "s.json"),  # the sidecar lands on the scene
    ("msgpack", "s.scene.json", "s.scene.json"),
    ("msgpack", "s.msgpack.about.json", "s.msgpack"),
    ("npz", "s.scene.json", "s.scene.json"),
    ("wkt", "s.scene.json", "s.scene.json"),
    ("svg", "s.scene.json", "s.scene.json"),
    ("grid", "s.scene.json", "s.scene"),  # the measured case, sidecar on the scene
    ("grid", "s.json", "s.npy"),  # -o with a part's suffix names the same set
]


@pytest.mark.parametrize(("fmt", "scene_name", "out"), ONTO_SOURCE)
def test_every_format_refuses_to_write_onto_its_source(
    fmt: str, scene_name: str, out: str, tmp_path: Path
) -> None:
    assert {f for f, _, _ in ONTO_SOURCE} == set(FORMATS)  # every format is covered
    scene = tmp_path / scene_name
    scene.write_bytes(GREENHOUSE.read_bytes())
    assert any(p.name == scene_name for p in output_paths(fmt, tmp_path / out))
    assert main(["export", str(scene), "--format", fmt, "-o", str(tmp_path / out)]) == 2
    assert scene.read_bytes() == GREENHOUSE.read_bytes()
    assert sorted(p.name for p in tmp_path.iterdir()) == [scene_name]  # nothing else written


@pytest.mark.parametrize("fmt", FORMATS)
def test_every_format_needs_force_over_a_strangers_file(fmt: str, tmp_path: Path) -> None:
    base = tmp_path / "out"
    out = str(base) + ("" if fmt == "grid" else f".{fmt}")
    first = output_paths(fmt, out)[0]
    first.write_bytes(b"someone else's notes\n")
    assert main(["export", str(GREENHOUSE), "--format", fmt, "-o", out]) == 2
    assert first.read_bytes() == b"someone else's notes\n"
    assert main(["export", str(GREENHOUSE), "--format", fmt, "-o", out, "--force"]) == 0
    # an earlier output of the same kind is replaced without --force
    assert main(["export", str(GREENHOUSE), "--format", fmt, "-o", out]) == 0


def test_a_hard_link_to_the_input_is_the_input(scene_copy: Path) -> None:
    link = scene_copy.with_name("alias.json")
    os.link(scene_copy, link)
    with pytest.raises(OutputClash, match="input"):
        check_outputs([Output(link, "export-json")], [scene_copy])


def test_rollout_and_import_refuse_their_inputs(scene_copy: Path, tmp_path: Path) -> None:
    before = scene_copy.read_bytes()
    assert main(["rollout", str(scene_copy), "-o", str(scene_copy), "--quiet"]) == 2
    csv = tmp_path / "in.csv"
    csv.write_text("episode,step,agent,x,y,heading\n0,0,0,1,1,0\n", encoding="utf-8")
    args = ["import", "csv", str(csv), "--scene", str(scene_copy), "--quiet"]
    assert main([*args, "-o", str(csv)]) == 2
    assert main([*args, "-o", str(scene_copy)]) == 2
    assert scene_copy.read_bytes() == before
    stranger = tmp_path / "notes.tape"
    stranger.write_text("not a tape", encoding="utf-8")
    assert main(["rollout", str(scene_copy), "-o", str(stranger), "--episodes", "1"]) == 2
    assert stranger.read_text(encoding="utf-8") == "not a tape"


def test_render_refuses_its_tape_and_strangers(qapp, tmp_path: Path) -> None:
    from tests.render.demo_episode import write_demo_tape

    tape = write_demo_tape(tmp_path / "demo.tape")
    before = tape.read_bytes()
    assert main(["render", str(tape), "-o", str(tape)]) == 2
    assert tape.read_bytes() == before
    photo = tmp_path / "holiday.png"
    photo.write_bytes(b"\x89PNG\r\n\x1a\nnot ours")
    assert main(["render", str(tape), "-o", str(photo), "--size", "320x180"]) == 2
    assert photo.read_bytes().endswith(b"not ours")
    # our own still is recognised on the second run
    still = tmp_path / "still.png"
    assert main(["render", str(tape), "-o", str(still), "--size", "320x180"]) == 0
    assert main(["render", str(tape), "-o", str(still), "--size", "320x180"]) == 0


def test_path_kinds_are_named(tmp_path: Path) -> None:
    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    assert path_kind(fifo) == "a pipe"
    assert path_kind(tmp_path) == "a folder"
    assert path_kind(Path("/dev/null")) == "a device"
    with pytest.raises(OutputClash, match="a pipe"):
        check_outputs([Output(fifo, "tape")], [])


def test_grid_reader_refuses_a_mixed_set(tmp_path: Path) -> None:
    from arena_studio.core.export import ExportError
    from arena_studio.core.export.grid import read_grid

    out = tmp_path / "g"
    assert main(["export", str(GREENHOUSE), "--format", "grid", "-o", str(out)]) == 0
    grid, doc = read_grid(tmp_path / "g.json")
    assert list(grid.shape) == doc["shape"]
    np.save(tmp_path / "g.npy", np.zeros((3, 3), np.uint8))  # another grid under the name
    with pytest.raises(ExportError, match="does not match"):
        read_grid(tmp_path / "g.json")
