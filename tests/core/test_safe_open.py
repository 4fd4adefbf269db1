"""Input files: only regular files are read, each within its format's size bound.

File kinds are the POSIX ones (IEEE Std 1003.1, <sys/stat.h> S_ISREG, S_ISDIR, S_ISFIFO,
S_ISCHR, S_ISSOCK; Python's ``stat`` module mirrors them). Opening a FIFO for reading blocks
until a writer appears and /dev/zero never ends (POSIX open(2) and the Linux null(4) page,
from memory): both must be refused by name, without blocking or reading.
"""

from __future__ import annotations

import os
import socket
from pathlib import Path

import pytest

from arena_studio.core import safe_open
from arena_studio.core.errors import ArenaError
from arena_studio.core.safe_open import InputFileError, check_input, open_input, read_input
from arena_studio.core.scene.model import load_scene
from arena_studio.core.tape import open_tape


def test_regular_file_is_read_whole(tmp_path):
    p = tmp_path / "a.scene.json"
    p.write_bytes(b"x" * 1000)
    assert read_input(p, "scene") == b"x" * 1000
    with open_input(p, "csv") as f:
        assert f.read(3) == b"xxx"


@pytest.mark.parametrize("kind", ["scene", "tape", "csv", "npz"])
def test_fifo_is_refused_without_blocking(tmp_path, kind):
    fifo = tmp_path / f"in.{kind}"
    os.mkfifo(fifo)
    with pytest.raises(InputFileError, match=r"is a pipe \(FIFO\)"):
        read_input(fifo, kind)
    with pytest.raises(InputFileError, match=r"is a pipe \(FIFO\)"):
        open_input(fifo, kind)


def test_symlink_to_an_endless_device_is_refused(tmp_path):
    for dev in ("/dev/zero", "/dev/urandom"):
        link = tmp_path / f"{Path(dev).name}.scene.json"
        link.symlink_to(dev)
        with pytest.raises(ArenaError, match="is a device, not a scene file"):
            load_scene(link)
        tape = tmp_path / f"{Path(dev).name}.tape"
        tape.symlink_to(dev)
        with pytest.raises(ArenaError, match="is a device, not a tape"):
            open_tape(tape)


def test_folder_socket_and_missing_path_are_named(tmp_path):
    with pytest.raises(InputFileError, match="is a folder"):
        check_input(tmp_path, "scene")
    with pytest.raises(InputFileError, match="no such file"):
        check_input(tmp_path / "gone.tape", "tape")
    sock_path = tmp_path / "s.tape"
    with socket.socket(socket.AF_UNIX) as s:
        s.bind(str(sock_path))
        with pytest.raises(InputFileError, match="is a socket"):
            open_input(sock_path, "tape")


def test_file_over_its_bound_is_refused_before_reading(tmp_path, monkeypatch):
    p = tmp_path / "big.scene.json"
    p.write_bytes(b"{" * 2000)
    monkeypatch.setitem(safe_open.MAX_BYTES, "scene", 1000)
    with pytest.raises(InputFileError, match=r"2,000 bytes, more than a scene file may have"):
        read_input(p, "scene")


def test_path_swapped_for_a_pipe_after_the_check_is_still_refused(tmp_path, monkeypatch):
    p = tmp_path / "a.tape"
    p.write_bytes(b"x")
    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    real_check = safe_open.check_input

    def check_then_swap(path, kind):
        st = real_check(path, kind)
        os.replace(fifo, p)  # what a hostile process could do between the check and the open
        return st

    monkeypatch.setattr(safe_open, "check_input", check_then_swap)
    with pytest.raises(InputFileError, match="is a pipe"):
        open_input(p, "tape")


def test_every_format_has_a_stated_bound():
    assert (
        set(safe_open.MAX_BYTES)
        == set(safe_open.FORMAT_NAMES)
        == {"scene", "tape", "csv", "npz", "map", "map image", "bag"}
    )
    readme = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    for kind, limit in safe_open.MAX_BYTES.items():
        assert safe_open._size_text(limit) in readme, kind
