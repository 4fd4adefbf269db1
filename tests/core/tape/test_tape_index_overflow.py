"""An index that claims 2**62 steps is refused without an integer overflow.

The size check bounds a claimed step count by the bytes the episode spans; in int64,
2**62 steps x 2 agents x 12 bytes wraps around to 0 and used to pass. The tape layout
(record = u32 length | u8 kind | msgpack payload | u32 CRC-32 of kind + payload; trailer =
u64 index offset | "ASTAPEND") is DEVELOPERS.md "Tape format"; zlib.crc32 and the msgpack
package (msgpack specification) are the outside references that re-sign the forged record.
"""

from __future__ import annotations

import struct
import zlib
from pathlib import Path

import msgpack
import numpy as np

from arena_studio.core.tape import open_tape
from tests.core.tape_helpers import box_scene, write_small_tape


def _forge_index_steps(path: Path, steps0: int) -> None:
    data = bytearray(path.read_bytes())
    (offset,) = struct.unpack("<Q", data[-16:-8])
    (length,) = struct.unpack("<I", data[offset : offset + 4])
    kind = data[offset + 4 : offset + 5]
    payload = msgpack.unpackb(bytes(data[offset + 5 : offset + 5 + length]), raw=False)
    steps = np.frombuffer(payload["steps"]["data"], "<i8").copy()
    steps[0] = steps0
    payload["steps"]["data"] = steps.tobytes()
    packed = msgpack.packb(payload, use_bin_type=True)
    assert len(packed) == length  # same size: every offset stays valid
    crc = zlib.crc32(bytes(kind) + packed)
    data[offset + 5 : offset + 5 + length] = packed
    data[offset + 5 + length : offset + 9 + length] = struct.pack("<I", crc)
    path.write_bytes(bytes(data))


def test_index_claiming_2_pow_62_steps_is_not_believed(tmp_path: Path) -> None:
    scene = box_scene()  # two agents: 2**62 * 2 * 12 == 0 (mod 2**64)
    path = tmp_path / "forged.tape"
    write_small_tape(path, scene, episodes=3, steps=5)
    assert (np.array([2**62], np.int64) * 2 * 12)[0] == 0  # the wrap the old check fell for
    _forge_index_steps(path, 2**62)
    tape = open_tape(path)
    # the index is refused; the records themselves are walked and tell the truth
    assert len(tape) == 3
    assert [tape.episode(i).steps for i in range(3)] == [5, 5, 5]
