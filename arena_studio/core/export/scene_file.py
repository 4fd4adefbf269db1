"""json / msgpack export: the scene file itself in canonical form.

A scene file refuses unknown keys (so typos never pass), so the content hash and the caution
cannot live inside it; they go to a sidecar ``OUT.about.json``. The hash can always be
recomputed from the scene file itself.
"""

from __future__ import annotations

from pathlib import Path

from arena_studio.core.export.meta import (
    provenance,
    sidecar_path,
    write_export_bytes,
    write_json_atomic,
)
from arena_studio.core.scene.files import encode_scene
from arena_studio.core.scene.model import Scene


def write_scene_export(scene: Scene, path: Path, fmt: str) -> list[Path]:
    write_export_bytes(path, encode_scene(scene, fmt))
    about = sidecar_path(path)
    write_json_atomic(about, {**provenance(scene, fmt), "file": path.name})
    return [path, about]
