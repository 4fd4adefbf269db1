"""Atomic file writes: a crash or a full disk never leaves a half-written file in place."""

from __future__ import annotations

import contextlib
import os
import stat
import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import BinaryIO


def _read_umask() -> int:
    # os.umask can only be read by setting it; do it once, at import, before any threads.
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


_UMASK = _read_umask()


def publish_mode(target: Path, directory: bool = False) -> int:
    """Permissions a finished file should get: the old file's, else 0666 minus the umask
    (0777 minus the umask for a folder).

    ``mkstemp`` creates temp files as 0600; renaming one over a user's file would silently
    make it private, so every writer calls this before its rename.
    """
    try:
        return stat.S_IMODE(target.stat().st_mode)
    except OSError:
        return (0o777 if directory else 0o666) & ~_UMASK


def make_temp(target: Path, suffix: str = ".tmp") -> tuple[int, Path]:
    """A temp file beside ``target`` (same file system, so ``os.replace`` is atomic)."""
    fd, name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=suffix, dir=target.parent)
    return fd, Path(name)


def publish(tmp: Path, target: Path, directory: bool = False) -> None:
    """Give ``tmp`` the target's permissions and rename it over ``target`` atomically."""
    os.chmod(tmp, publish_mode(target, directory))
    os.replace(tmp, target)


@contextlib.contextmanager
def atomic_writer(path: str | Path) -> Iterator[BinaryIO]:
    """Yield a binary file; on success it replaces ``path`` atomically, on error it vanishes.

    Data is flushed and fsynced before the rename so the new name never points at a torn file.
    """
    target = Path(path)
    fd, tmp = make_temp(target)
    try:
        with os.fdopen(fd, "wb") as handle:
            yield handle
            handle.flush()
            os.fsync(handle.fileno())
        publish(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise


def write_bytes_atomic(path: str | Path, data: bytes) -> None:
    with atomic_writer(path) as handle:
        handle.write(data)
