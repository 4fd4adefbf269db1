"""What every export records about where it came from."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from arena_studio import __version__
from arena_studio.core.atomic import write_bytes_atomic
from arena_studio.core.export import CAUTION
from arena_studio.core.scene.model import Scene


def provenance(scene: Scene, fmt: str) -> dict[str, Any]:
    """Content hash, caution and producer of an export, as plain values."""
    return {
        "format": f"arena-studio.export.{fmt}",
        "scene_name": scene.name,
        "content_hash": scene.content_hash(),
        "caution": CAUTION,
        "producer": f"arena-studio {__version__}",
    }


def write_export_bytes(path: Path, data: bytes) -> None:
    """Atomic write with the usual permissions (see :func:`arena_studio.core.atomic.publish`)."""
    write_bytes_atomic(path, data)


def json_bytes(doc: dict[str, Any]) -> bytes:
    text = json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
    return text.encode("utf-8")


def write_json_atomic(path: Path, doc: dict[str, Any]) -> None:
    write_export_bytes(path, json_bytes(doc))


def sidecar_path(path: Path) -> Path:
    """``out.scene.json`` -> ``out.scene.json.about.json``."""
    return path.with_name(path.name + ".about.json")


__all__ = ["json_bytes", "provenance", "sidecar_path", "write_export_bytes", "write_json_atomic"]
