"""Atomic file writes: a crash or a full disk never leaves a half-written file in place."""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import BinaryIO


@contextlib.contextmanager
def atomic_writer(path: str | Path) -> Iterator[BinaryIO]:
    """Yield a binary file; on success it replaces ``path`` atomically, on error it vanishes.

    The temp file lives in the target's folder so ``os.replace`` stays on one file system;
    data is flushed and fsynced before the rename so the new name never points at a torn file.
    """
    target = Path(path)
    fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    tmp = Path(tmp_name)
    try:
        with os.fdopen(fd, "wb") as handle:
            yield handle
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise


def write_bytes_atomic(path: str | Path, data: bytes) -> None:
    with atomic_writer(path) as handle:
        handle.write(data)
