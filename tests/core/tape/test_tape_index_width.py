"""An index written with other integer widths is read; an unusable one is reported truthfully.

The tapes are written record by record following DEVELOPERS.md ("Tape format") with msgpack
and zlib (CRC-32) only, as an outside program would.
"""

from __future__ import annotations

import struct
import zlib
from pathlib import Path

import msgpack
import pytest

from arena_studio.core.tape import open_tape
from tests.core.tape_helpers import box_scene, header_record


def _record(kind: str, payload: dict) -> bytes:
    body = msgpack.packb(payload, use_bin_type=True)
    return (
        struct.pack("<IB", len(body), ord(kind))
        + body
        + struct.pack("<I", zlib.crc32(kind.encode() + body))
    )


def _tape(path: Path, index_dtype: str) -> Path:
    """Two one-chunk episodes (2 agents, 2 steps) and an index of ``index_dtype`` arrays."""
    out = bytearray(b"\x89ASTAPE\n") + _record("H", header_record(box_scene()))
    rows = []
    for e in range(2):
        begin = len(out)
        out += _record("B", {"episode": e})
        poses = struct.pack("<12d", *([1.0 + e] * 12))
        chunk = {
            "episode": e,
            "start": 0,
            "steps": 2,
            "poses": {"dtype": "<f8", "shape": [2, 2, 3], "data": poses},
        }
        out += _record("C", chunk)
        out += _record("E", {"episode": e, "steps": 2})
        rows.append((begin, len(out), 2))
    code = {"<i8": "q", "<i4": "i", "<u4": "I", "<u8": "Q", "<f8": "d"}[index_dtype]

    def col(k: int) -> dict:
        data = struct.pack(f"<2{code}", *(r[k] for r in rows))
        return {"dtype": index_dtype, "shape": [2], "data": data}

    at = len(out)
    out += _record("I", {"episodes": 2, "begin": col(0), "end": col(1), "steps": col(2)})
    out += struct.pack("<Q", at) + b"ASTAPEND"
    path.write_bytes(bytes(out))
    return path


@pytest.mark.parametrize("dtype", ["<i8", "<i4", "<u4", "<u8"])
def test_whole_number_index_of_any_width_is_used(tmp_path: Path, dtype: str) -> None:
    tape = open_tape(_tape(tmp_path / "t.tape", dtype))
    assert not tape.truncated and tape.recovery_message is None
    assert len(tape) == 2 and tape.episode(1).poses[0, 0, 0] == 2.0


def test_unusable_index_is_named_not_called_a_missing_trailer(tmp_path: Path) -> None:
    tape = open_tape(_tape(tmp_path / "f.tape", "<f8"))
    assert tape.truncated and len(tape) == 2  # every episode is still found by the walk
    msg = tape.recovery_message or ""
    assert "index.begin" in msg and "'<f8' not allowed" in msg
    assert "no valid trailer" not in msg
