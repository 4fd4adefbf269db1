"""Per-tape figures remembered between runs, in the user cache folder.

An entry is reused only when the tape's path, size, modification time (ns) and header hash
all match what was stored, so a rewritten or touched tape is recomputed and the others are
not. One msgpack file per sweep folder holds the entries; it is replaced atomically, and a
cache file that cannot be read is ignored (and rewritten), never an error.

The folder is ``platformdirs.user_cache_dir("arena-studio")/runs``, or the folder named by
the environment variable ``ARENA_STUDIO_CACHE_DIR`` (tests point it at a temp folder, so they
never touch a user's cache).
"""

from __future__ import annotations

import contextlib
import hashlib
import os
from pathlib import Path
from typing import Any

import msgpack

from arena_studio.core.atomic import write_bytes_atomic
from arena_studio.core.runs.per_tape import TapeFigures
from arena_studio.core.runs.sweep import SweepTape

ENV_VAR = "ARENA_STUDIO_CACHE_DIR"
#: bump when the figures computed from a tape change meaning
CACHE_VERSION = 1


def cache_dir() -> Path:
    """The folder for cache files (created on first write)."""
    override = os.environ.get(ENV_VAR)
    if override:
        return Path(override)
    import platformdirs

    return Path(platformdirs.user_cache_dir("arena-studio")) / "runs"


def _key(tape: SweepTape) -> str:
    return str(tape.path.resolve())


def _stamp(tape: SweepTape) -> list[Any]:
    return [tape.size, tape.mtime_ns, tape.header_hash]


class FigureCache:
    """Figures by tape, loaded from and saved to one cache file."""

    def __init__(self, root: Path, folder: Path | None = None) -> None:
        name = hashlib.blake2b(str(root.resolve()).encode(), digest_size=10).hexdigest()
        self.file = (folder or cache_dir()) / f"sweep-{name}.msgpack"
        self._entries: dict[str, list[Any]] = {}
        self._dirty = False
        self._load()

    def _load(self) -> None:
        try:
            data = msgpack.unpackb(self.file.read_bytes(), raw=False, strict_map_key=False)
        except (OSError, ValueError, msgpack.UnpackException):
            return
        if isinstance(data, dict) and data.get("version") == CACHE_VERSION:
            entries = data.get("entries")
            if isinstance(entries, dict):
                self._entries = entries

    def get(self, tape: SweepTape) -> TapeFigures | None:
        """Stored figures of ``tape`` if its identity is unchanged, else None."""
        entry = self._entries.get(_key(tape))
        if not isinstance(entry, list) or len(entry) != 2 or entry[0] != _stamp(tape):
            return None
        try:
            result = TapeFigures.from_dict(entry[1])
        except (KeyError, TypeError, ValueError, AttributeError):
            return None
        result.path = str(tape.path)
        return result

    def put(self, tape: SweepTape, figures: TapeFigures) -> None:
        self._entries[_key(tape)] = [_stamp(tape), figures.to_dict()]
        self._dirty = True

    def save(self) -> None:
        """Write the cache file if anything changed (failures to write are ignored)."""
        if not self._dirty:
            return
        data = msgpack.packb({"version": CACHE_VERSION, "entries": self._entries})
        with contextlib.suppress(OSError):
            self.file.parent.mkdir(parents=True, exist_ok=True)
            write_bytes_atomic(self.file, data)
            self._dirty = False


__all__ = ["CACHE_VERSION", "ENV_VAR", "FigureCache", "cache_dir"]
