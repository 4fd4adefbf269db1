"""Reading and writing scene files (``*.scene.json`` and ``*.scene.msgpack``)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import msgpack

from arena_studio.core.atomic import write_bytes_atomic
from arena_studio.core.errors import SceneFormatError
from arena_studio.core.safe_open import MAX_BYTES, InputFileError, check_input, read_input
from arena_studio.core.scene.model import Scene

#: Scene files are small; anything larger is refused before it is read into memory.
MAX_SCENE_BYTES = MAX_BYTES["scene"]


def scene_kind(path: Path) -> str:
    """``"json"`` or ``"msgpack"`` from the file name; other names are refused."""
    name = path.name.lower()
    if name.endswith(".json"):
        return "json"
    if name.endswith((".msgpack", ".mpk")):
        return "msgpack"
    raise SceneFormatError(
        "", "unknown scene file type (expected .scene.json or .scene.msgpack)", str(path)
    )


def _refuse_constant(name: str) -> float:
    raise ValueError(f"{name} is not allowed in a scene file (coordinates must be finite)")


def decode_scene_bytes(data: bytes, kind: str) -> Any:
    """Bytes to a plain document; raises SceneFormatError naming the line for bad JSON."""
    if not data.strip():
        raise SceneFormatError("", "the file is empty")
    if kind == "json":
        try:
            text = data.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise SceneFormatError("", f"not UTF-8 text (byte {exc.start})") from None
        try:
            return json.loads(text, parse_constant=_refuse_constant)
        except json.JSONDecodeError as exc:
            raise SceneFormatError(
                "", f"invalid JSON at line {exc.lineno}, column {exc.colno}: {exc.msg}"
            ) from None
        except (ValueError, RecursionError) as exc:
            raise SceneFormatError("", f"invalid JSON: {exc}") from None
    try:
        return msgpack.unpackb(
            data, raw=False, strict_map_key=True, ext_hook=_refuse_ext, max_bin_len=0
        )
    except SceneFormatError:
        raise
    except (ValueError, msgpack.UnpackException, TypeError, RecursionError) as exc:
        raise SceneFormatError("", f"invalid msgpack: {exc}") from None


def _refuse_ext(code: int, data: bytes) -> Any:
    raise SceneFormatError("", f"msgpack extension type {code} is not allowed in a scene file")


def encode_scene(scene: Scene, kind: str) -> bytes:
    doc = scene.to_dict()
    if kind == "json":
        return (dumps_readable(doc) + "\n").encode("utf-8")
    return msgpack.packb(doc, use_bin_type=True)


#: Lists of points are written on one line when they fit in this many characters.
_INLINE_WIDTH = 88


def dumps_readable(value: Any, indent: int = 0) -> str:
    """JSON with one key per line but points and short point lists inline (diff-friendly).

    The text is ordinary JSON: ``json.loads(dumps_readable(d)) == d`` for any scene dict.
    """
    flat = json.dumps(value, ensure_ascii=False, allow_nan=False)
    if not isinstance(value, dict | list) or (
        isinstance(value, list) and _shallow(value) and len(flat) + indent <= _INLINE_WIDTH
    ):
        return flat
    pad, inner = " " * indent, " " * (indent + 2)
    if isinstance(value, list):
        if not value:
            return "[]"
        items = [inner + dumps_readable(v, indent + 2) for v in value]
        return "[\n" + ",\n".join(items) + "\n" + pad + "]"
    if not value:
        return "{}"
    items = [
        f"{inner}{json.dumps(str(k), ensure_ascii=False)}: {dumps_readable(v, indent + 2)}"
        for k, v in value.items()
    ]
    return "{\n" + ",\n".join(items) + "\n" + pad + "}"


def _shallow(items: list[Any]) -> bool:
    """Scalars, or lists of scalars (a point list): small enough to read on one line."""
    return all(
        not isinstance(v, dict | list)
        or (isinstance(v, list) and not any(isinstance(w, dict | list) for w in v))
        for v in items
    )


def read_scene_file(path: Path) -> Scene:
    try:
        check_input(path, "scene")  # a folder, pipe or device is named before the file type
        kind = scene_kind(path)
        data = read_input(path, "scene")  # regular files only, within the size bound
    except InputFileError as exc:
        raise SceneFormatError("", str(exc)) from None
    try:
        return Scene.from_dict(decode_scene_bytes(data, kind))
    except SceneFormatError as exc:
        raise exc.with_source(str(path)) from None


def write_scene_file(scene: Scene, path: Path) -> None:
    write_bytes_atomic(path, encode_scene(scene, scene_kind(path)))


__all__ = [
    "MAX_SCENE_BYTES",
    "decode_scene_bytes",
    "dumps_readable",
    "encode_scene",
    "read_scene_file",
    "scene_kind",
    "write_scene_file",
]
