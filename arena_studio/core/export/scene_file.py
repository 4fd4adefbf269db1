"""json / msgpack export: the scene file itself in canonical form.

A scene file refuses unknown keys (so typos never pass), so the content hash and the caution
cannot live inside it; they go to a sidecar ``OUT.about.json``. The hash can always be
recomputed from the scene file itself.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

from arena_studio.core.atomic import write_set_atomic
from arena_studio.core.export.meta import (
    json_bytes,
    provenance,
    sidecar_path,
)
from arena_studio.core.scene.files import encode_scene
from arena_studio.core.scene.model import Scene


def write_scene_export(scene: Scene, path: Path, fmt: str) -> list[Path]:
    """The scene file and its sidecar, published as one set (the sidecar last)."""
    data = encode_scene(scene, fmt)
    about = {**provenance(scene, fmt), "file": path.name}
    about["file_sha256"] = hashlib.sha256(data).hexdigest()
    return write_set_atomic([(path, data), (sidecar_path(path), json_bytes(about))])


__all__ = ["write_scene_export"]
