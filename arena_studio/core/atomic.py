"""Atomic file writes: a crash or a full disk never leaves a half-written file in place.

Temporary names carry the writing process's id (``.NAME.~PID.XXXXXXXX.tmp`` or ``.part``),
so a later run can tell the leftovers of a killed run (its process is gone) from the work
of a run still going, and :func:`clean_stale_temps` removes only the former. Outputs made
of several files (the grid export's ``.npy``, ``.png`` and ``.json``) are published by
:func:`write_set_atomic`: every part is written under a temporary name first, the old
metadata file is removed, the data parts are renamed into place and the metadata file comes
last. Readers go through the metadata file (which records a checksum of each part), so a
kill at any moment leaves either the old set, no set, or the new set, never a mixture that
passes for one.
"""

from __future__ import annotations

import contextlib
import os
import re
import shutil
import stat
import tempfile
from collections.abc import Iterator, Sequence
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


#: Suffixes of our temporary files and folders.
TEMP_SUFFIXES = (".tmp", ".part")
_TEMP_NAME = re.compile(r"^\..+\.~(?P<pid>\d+)\.[A-Za-z0-9_]+\.(?:tmp|part)$")


def temp_prefix(target: Path) -> str:
    """``.NAME.~PID.``: hidden, next to the target, naming the process that writes it."""
    return f".{target.name}.~{os.getpid()}."


def make_temp(target: Path, suffix: str = ".tmp") -> tuple[int, Path]:
    """A temp file beside ``target`` (same file system, so ``os.replace`` is atomic)."""
    fd, name = tempfile.mkstemp(prefix=temp_prefix(target), suffix=suffix, dir=target.parent)
    return fd, Path(name)


def make_temp_dir(target: Path, suffix: str = ".part") -> Path:
    """A temp folder beside ``target``, named like :func:`make_temp`'s files."""
    return Path(tempfile.mkdtemp(prefix=temp_prefix(target), suffix=suffix, dir=target.parent))


def temp_owner(name: str) -> int | None:
    """The process id in one of our temp names, or None for any other name."""
    match = _TEMP_NAME.match(name)
    return int(match.group("pid")) if match else None


def process_alive(pid: int) -> bool:
    """True when a process with this id exists on this machine (ours, or another user's)."""
    if pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OSError):
        return True  # exists but belongs to someone else, or we cannot tell: keep its files
    return True


def clean_stale_temps(folder: str | Path) -> list[Path]:
    """Remove temp files and folders that killed runs left in ``folder``; returns them.

    Only names of our own pattern whose process no longer runs are touched, so a run still
    writing next door keeps its work. (Process ids are of this machine: on a folder shared
    between machines, a run elsewhere counts as gone; don't share output folders live.)
    Recoverable ``.tape.partial`` files are not temps and are never removed here."""
    removed: list[Path] = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        pid = temp_owner(entry.name)
        if pid is None or pid == os.getpid() or process_alive(pid):
            continue
        path = Path(entry.path)
        try:
            if entry.is_dir(follow_symlinks=False):
                shutil.rmtree(path)
            else:
                path.unlink()
        except OSError:
            continue  # not ours to remove after all (permissions): leave it
        removed.append(path)
    return removed


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


def _fsync_folder(folder: Path) -> None:
    """Make renames in ``folder`` durable (POSIX); a no-op where folders cannot be opened."""
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def write_set_atomic(parts: Sequence[tuple[str | Path, bytes]]) -> list[Path]:
    """Write several files that belong together; the LAST one is the metadata file.

    All parts go to temp names (flushed and fsynced) before any is published. Then the old
    metadata file is removed, the other parts are renamed over their targets in order and
    the metadata file is renamed last. An error before publishing leaves the old set as it
    was; a kill while publishing leaves no metadata file, so no reader takes the new parts
    for a set (see the module docstring)."""
    targets = [Path(p) for p, _ in parts]
    temps: list[Path] = []
    try:
        for target, (_, data) in zip(targets, parts, strict=True):
            fd, tmp = make_temp(target)
            temps.append(tmp)
            with os.fdopen(fd, "wb") as handle:
                handle.write(data)
                handle.flush()
                os.fsync(handle.fileno())
        _publish_set(list(zip(temps, targets, strict=True)))
    except BaseException:
        for tmp in temps:
            with contextlib.suppress(OSError):
                tmp.unlink()
        raise
    return targets


def _publish_set(pairs: list[tuple[Path, Path]]) -> None:
    *data, (meta_tmp, meta_target) = pairs
    with contextlib.suppress(FileNotFoundError):
        meta_target.unlink()  # from here until the last rename there is no set at all
    for tmp, target in data:
        publish(tmp, target)
    publish(meta_tmp, meta_target)
    for folder in {t.parent for _, t in pairs}:
        _fsync_folder(folder)


__all__ = [
    "TEMP_SUFFIXES",
    "atomic_writer",
    "clean_stale_temps",
    "make_temp",
    "make_temp_dir",
    "process_alive",
    "publish",
    "publish_mode",
    "temp_owner",
    "temp_prefix",
    "write_bytes_atomic",
    "write_set_atomic",
]
