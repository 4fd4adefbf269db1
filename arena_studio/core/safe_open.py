"""Open input files safely: regular files only, each format with a size bound.

A path given by a user may name a folder, a pipe (reading blocks until someone writes), a
device such as ``/dev/zero`` (an endless stream) or a socket; a symlink may point at any of
them. Every reader goes through :func:`open_input` or :func:`read_input`, which refuse such
paths with one line naming what the path is, and refuse a file over its format's bound
before reading it. The file is opened without blocking and checked again on the open
descriptor, so a path swapped for a pipe between the check and the open is still refused.
README.md ("Limits") states the bounds.
"""

from __future__ import annotations

import os
import stat
from typing import BinaryIO

from arena_studio.core.errors import ArenaError

MIB = 1 << 20
GIB = 1 << 30

#: Largest file each input format is read from (bytes).
MAX_BYTES: dict[str, int] = {
    "scene": 16 * MIB,
    "tape": 64 * GIB,
    "csv": 64 * GIB,  # read in blocks, episode by episode
    "npz": 2 * GIB,
    "map": 1 * MIB,
    "map image": 1 * GIB,
    "bag": 64 * GIB,
}

#: What a user reads in messages for each format.
FORMAT_NAMES = {
    "scene": "a scene file",
    "tape": "a tape",
    "csv": "a CSV file",
    "npz": "an NPZ file",
    "map": "a map description",
    "map image": "a map image",
    "bag": "a ROS 2 bag file",
}


class InputFileError(ArenaError, OSError):
    """A path that is not a readable regular file of an acceptable size."""


def describe_mode(mode: int) -> str:
    """What a non-regular file is, in words a user knows."""
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a pipe (FIFO)"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def _size_text(n: int) -> str:
    return f"{n / GIB:g} GiB" if n >= GIB else f"{n / MIB:g} MiB"


def check_input(path: str | os.PathLike[str], kind: str) -> os.stat_result:
    """The stat of ``path`` when it is a regular file within the bound, else InputFileError."""
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise InputFileError(f"{os.fspath(path)}: no such file") from None
    except OSError as exc:
        raise InputFileError(f"{os.fspath(path)}: cannot read ({exc.strerror or exc})") from None
    return _check_stat(path, st, kind)


def _check_stat(path: str | os.PathLike[str], st: os.stat_result, kind: str) -> os.stat_result:
    name = FORMAT_NAMES[kind]
    if not stat.S_ISREG(st.st_mode):
        raise InputFileError(f"{os.fspath(path)}: is {describe_mode(st.st_mode)}, not {name}")
    limit = MAX_BYTES[kind]
    if st.st_size > limit:
        raise InputFileError(
            f"{os.fspath(path)}: {st.st_size:,} bytes, more than {name} may have "
            f"({_size_text(limit)})"
        )
    return st


def open_input(path: str | os.PathLike[str], kind: str) -> BinaryIO:
    """``open(path, "rb")`` for a regular file within the bound of ``kind``; never blocks."""
    check_input(path, kind)
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0)
    try:
        fd = os.open(path, flags)
    except OSError as exc:
        raise InputFileError(f"{os.fspath(path)}: cannot read ({exc.strerror or exc})") from None
    try:
        _check_stat(path, os.fstat(fd), kind)  # the path may have changed since the check
        if hasattr(os, "set_blocking"):
            os.set_blocking(fd, True)
        return os.fdopen(fd, "rb")
    except BaseException:
        os.close(fd)
        raise


def read_input(path: str | os.PathLike[str], kind: str) -> bytes:
    """The whole file, read with its bound (a file that grows past it is refused)."""
    limit = MAX_BYTES[kind]
    with open_input(path, kind) as f:
        try:
            data = f.read(limit + 1)
        except OSError as exc:
            raise InputFileError(
                f"{os.fspath(path)}: cannot read ({exc.strerror or exc})"
            ) from None
    if len(data) > limit:
        raise InputFileError(
            f"{os.fspath(path)}: grew past {_size_text(limit)} while being read, more than "
            f"{FORMAT_NAMES[kind]} may have"
        )
    return data


__all__ = [
    "MAX_BYTES",
    "InputFileError",
    "check_input",
    "describe_mode",
    "open_input",
    "read_input",
]
