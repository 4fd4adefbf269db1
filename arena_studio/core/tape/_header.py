"""A tape's first record: the header (format, version, time step, embedded scene, agents).

:func:`read_header` checks every field and raises :class:`TapeError` naming the file and the
field; a stored scene hash that does not match the embedded scene is a warning only.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from arena_studio.core.errors import ArenaError
from arena_studio.core.scene.model import Scene, scene_hash
from arena_studio.core.tape.format import (
    FORMAT_NAME,
    FORMAT_VERSION,
    FRAME_HEAD,
    FRAME_OVERHEAD,
    KIND_HEADER,
    MAGIC,
    MAX_RECORD,
    TapeError,
    read_frame,
    unpack,
)
from arena_studio.core.value_limits import DT_MAX, DT_MIN

__all__ = ["TapeHeader", "read_header", "unpack_checked"]


@dataclass(frozen=True)
class TapeHeader:
    header_end: int  # file offset just after the header record
    version: int
    dt: float
    scene: Scene
    agent_ids: tuple[str, ...]
    metadata: dict[str, Any]
    scene_hash: str | None  # as stored, or None
    scene_hash_ok: bool | None  # True when it matches the embedded scene; None: none stored
    scene_hash_warning: str | None  # one line for users when the stored hash is wrong


def unpack_checked(payload: memoryview, src: str, where: str) -> Any:
    """msgpack-decode a record, any failure raised as :class:`TapeError` at ``where``."""
    try:
        return unpack(payload)
    except Exception as exc:  # msgpack raises several unrelated types for bad bytes
        raise TapeError(src, where, f"not valid msgpack ({exc})") from None


def read_header(f: Any, src: str, file_size: int) -> TapeHeader:
    """The checked header of the open tape file ``f`` (read from its start)."""
    header, header_end = _header_record(f, src, file_size)
    if header.get("format") != FORMAT_NAME:
        raise TapeError(src, "header.format", f"expected {FORMAT_NAME!r}")
    version = header.get("version")
    if isinstance(version, bool) or not isinstance(version, int) or version < 1:
        raise TapeError(src, "header.version", "expected a whole number >= 1")
    if version > FORMAT_VERSION:
        raise TapeError(
            src,
            "header.version",
            f"tape version {version} is newer than this arena_studio reads "
            f"({FORMAT_VERSION}); update arena_studio",
        )
    dt = header.get("dt")
    if isinstance(dt, bool) or not isinstance(dt, int | float) or not math.isfinite(dt):
        raise TapeError(src, "header.dt", "expected a finite number")
    if not DT_MIN <= dt <= DT_MAX:
        raise TapeError(
            src,
            "header.dt",
            f"expected a time step from {DT_MIN:g} s to {DT_MAX:g} s, got {dt:g}",
        )
    scene_dict = header.get("scene")
    if not isinstance(scene_dict, dict):
        raise TapeError(src, "header.scene", "expected the embedded scene as a map")
    try:
        scene = Scene.from_dict(scene_dict)
    except ArenaError as exc:
        raise TapeError(src, "header.scene", str(exc)) from None
    ids = header.get("agent_ids")
    if not isinstance(ids, list) or not all(isinstance(s, str) for s in ids):
        raise TapeError(src, "header.agent_ids", "expected a list of strings")
    if tuple(ids) != tuple(a.id for a in scene.agents):
        raise TapeError(
            src, "header.agent_ids", "must equal the embedded scene's agent ids in order"
        )
    stored, ok, warning = _scene_hash_check(header, scene, src)
    meta = header.get("metadata", {})
    if not isinstance(meta, dict):
        raise TapeError(src, "header.metadata", "expected a map")
    return TapeHeader(header_end, version, float(dt), scene, tuple(ids), meta, stored, ok, warning)


def _header_record(f: Any, src: str, file_size: int) -> tuple[dict[str, Any], int]:
    """The header record as a map, and the file offset just after it."""
    magic = f.read(len(MAGIC))
    if magic != MAGIC:
        raise TapeError(src, "", "not an arena-studio tape (wrong first bytes)")
    head = f.read(FRAME_HEAD.size)
    if len(head) < FRAME_HEAD.size:
        raise TapeError(src, "header", "file ends inside the header")
    length, kind = FRAME_HEAD.unpack(head)
    if kind != KIND_HEADER:
        raise TapeError(src, "header", "first record is not a header")
    if length > min(MAX_RECORD, file_size):
        raise TapeError(src, "header", f"header claims {length} bytes, file has {file_size}")
    rest = f.read(length + FRAME_OVERHEAD - FRAME_HEAD.size)
    buf = memoryview(head + rest)
    try:
        _, payload, end = read_frame(buf, 0)
    except EOFError:
        raise TapeError(src, "header", "file ends inside the header") from None
    except ValueError as exc:
        raise TapeError(src, "header", str(exc)) from None
    header = unpack_checked(payload, src, "header")
    if not isinstance(header, dict):
        raise TapeError(src, "header", "expected a map")
    return header, len(MAGIC) + end


def _scene_hash_check(
    header: dict[str, Any], scene: Scene, src: str
) -> tuple[str | None, bool | None, str | None]:
    """Compare the stored scene hash with the embedded scene's own (a warning, not an
    error: the scene itself is what the tape holds and what is used)."""
    stored = header.get("scene_hash")
    actual = scene_hash(scene)
    ok = None if stored is None else stored == actual
    warning = None
    if ok is False:
        shown = repr(stored) if not isinstance(stored, str) else stored[:16] + "..."
        warning = (
            f"{src}: header.scene_hash {shown} does not match the embedded scene "
            f"(its hash is {actual[:16]}...; see arena_studio.core.scene.model.scene_hash)"
        )
    return (stored if isinstance(stored, str) else None), ok, warning
