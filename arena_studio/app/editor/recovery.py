"""Recovery copies of unsaved work in the user data folder, offered back after a crash.

Each running window owns one ``<session>.scene.json`` plus a ``<session>.meta.json`` naming the
file it belongs to and the process id. A clean exit or a save removes both; copies left behind
by a process that is no longer running are what a crash leaves, and are offered on next start.
"""

from __future__ import annotations

import contextlib
import json
import os
import time
import uuid
from dataclasses import dataclass
from pathlib import Path

from arena_studio.core.atomic import write_bytes_atomic
from arena_studio.core.errors import ArenaError
from arena_studio.core.scene.model import Scene, load_scene, save_scene


@dataclass(frozen=True)
class RecoveryCopy:
    scene_path: Path
    meta_path: Path
    original: Path | None
    saved_at: float
    name: str


def _alive(pid: int) -> bool:
    if pid == os.getpid():
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


class RecoveryStore:
    def __init__(self, folder: Path) -> None:
        self.folder = folder
        self.session = uuid.uuid4().hex[:12]

    @property
    def scene_path(self) -> Path:
        return self.folder / f"{self.session}.scene.json"

    @property
    def meta_path(self) -> Path:
        return self.folder / f"{self.session}.meta.json"

    def save(self, scene: Scene, original: Path | None) -> None:
        self.folder.mkdir(parents=True, exist_ok=True)
        save_scene(scene, self.scene_path)
        meta = {
            "original": None if original is None else str(original),
            "saved_at": time.time(),
            "pid": os.getpid(),
            "name": scene.name,
        }
        write_bytes_atomic(self.meta_path, json.dumps(meta).encode("utf-8"))

    def discard(self) -> None:
        for p in (self.scene_path, self.meta_path):
            with contextlib.suppress(OSError):
                p.unlink()

    def orphans(self) -> list[RecoveryCopy]:
        """Copies left by processes that are gone, newest first."""
        out: list[RecoveryCopy] = []
        if not self.folder.is_dir():
            return out
        for meta_path in self.folder.glob("*.meta.json"):
            session = meta_path.name.removesuffix(".meta.json")
            if session == self.session:
                continue
            try:
                meta = json.loads(meta_path.read_text(encoding="utf-8"))
                pid = int(meta.get("pid", -1))
            except (OSError, ValueError, TypeError):
                continue
            if pid > 0 and _alive(pid):
                continue
            scene_path = self.folder / f"{session}.scene.json"
            if scene_path.is_file():
                original = meta.get("original")
                out.append(
                    RecoveryCopy(
                        scene_path,
                        meta_path,
                        Path(original) if original else None,
                        float(meta.get("saved_at", 0.0)),
                        str(meta.get("name", "")),
                    )
                )
        return sorted(out, key=lambda c: -c.saved_at)

    @staticmethod
    def load(copy: RecoveryCopy) -> Scene:
        return load_scene(copy.scene_path)

    @staticmethod
    def remove(copy: RecoveryCopy) -> None:
        for p in (copy.scene_path, copy.meta_path):
            with contextlib.suppress(OSError):
                p.unlink()


__all__ = ["ArenaError", "RecoveryCopy", "RecoveryStore"]
