"""Atomic saves: a finished save leaves exactly the target file; a failed one leaves the old
file byte for byte. (POSIX rename(2) replaces atomically within one file system; Python's
os.replace documents the same — common practice, no further source.)"""

from __future__ import annotations

import os
from dataclasses import replace
from pathlib import Path

import pytest

from arena_studio.core import atomic
from arena_studio.core.scene.model import Landmark, load_scene, save_scene

GREENHOUSE = Path(__file__).resolve().parents[3] / "scenes" / "greenhouse.scene.json"


@pytest.mark.parametrize("name", ["g.scene.json", "g.scene.msgpack"])
def test_save_leaves_no_temp_file(tmp_path: Path, name: str) -> None:
    scene = load_scene(GREENHOUSE)
    target = tmp_path / name
    save_scene(scene, target)
    save_scene(scene.with_changes(name="again"), target)  # overwrite an existing file
    assert [p.name for p in tmp_path.iterdir()] == [name]
    assert load_scene(target).name == "again"


def test_failing_write_keeps_old_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    scene = load_scene(GREENHOUSE)
    target = tmp_path / "g.scene.json"
    save_scene(scene, target)
    before = target.read_bytes()

    def broken_fsync(fd: int) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(atomic.os, "fsync", broken_fsync)
    with pytest.raises(OSError, match="No space left"):
        save_scene(scene.with_changes(name="lost"), target)
    assert target.read_bytes() == before
    assert [p.name for p in tmp_path.iterdir()] == ["g.scene.json"]


def test_exception_inside_writer_keeps_old_file(tmp_path: Path) -> None:
    target = tmp_path / "data.bin"
    target.write_bytes(b"old")
    with pytest.raises(RuntimeError), atomic.atomic_writer(target) as fh:
        fh.write(b"half of the new")
        raise RuntimeError("crash mid-write")
    assert target.read_bytes() == b"old"
    assert os.listdir(tmp_path) == ["data.bin"]


def test_unencodable_scene_keeps_old_file(tmp_path: Path) -> None:
    # A model built in code can hold NaN; JSON (RFC 8259) has no NaN, so the save refuses
    # before touching the file.
    scene = load_scene(GREENHOUSE)
    target = tmp_path / "g.scene.json"
    save_scene(scene, target)
    before = target.read_bytes()
    bad = replace(scene.landmarks[0], position=(float("nan"), 0.0))
    assert isinstance(bad, Landmark)
    with pytest.raises(ValueError):
        save_scene(scene.with_changes(landmarks=(bad, *scene.landmarks[1:])), target)
    assert target.read_bytes() == before
    assert os.listdir(tmp_path) == ["g.scene.json"]


def test_saved_json_is_readable_text(tmp_path: Path) -> None:
    target = tmp_path / "g.scene.json"
    save_scene(load_scene(GREENHOUSE), target)
    text = target.read_text(encoding="utf-8")
    assert '"outline": [[0.0, 0.0], [16.0, 0.0], [16.0, 10.0], [0.0, 10.0]]' in text
    assert text.endswith("}\n")
