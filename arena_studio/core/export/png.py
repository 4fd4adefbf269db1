"""A small PNG encoder (8-bit RGB or grey) so core exports need no imaging library.

Follows the PNG specification (ISO/IEC 15948, W3C PNG 2nd ed.): signature, IHDR, tEXt,
IDAT (zlib stream of filter-type-0 scanlines), IEND, each chunk with a CRC-32.
"""

from __future__ import annotations

import struct
import zlib

import numpy as np

_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def _chunk(kind: bytes, data: bytes) -> bytes:
    crc = zlib.crc32(kind + data) & 0xFFFFFFFF
    return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", crc)


def encode_png(pixels: np.ndarray, text: dict[str, str] | None = None) -> bytes:
    """Encode an (H, W) grey or (H, W, 3) RGB uint8 array; row 0 is the top of the image.

    ``text`` becomes tEXt chunks (Latin-1 keywords of 1-79 characters, as the spec requires).
    """
    img = np.ascontiguousarray(pixels)
    if img.dtype != np.uint8 or img.ndim not in (2, 3) or (img.ndim == 3 and img.shape[2] != 3):
        raise ValueError("expected an (H, W) or (H, W, 3) uint8 array")
    height, width = img.shape[:2]
    if height == 0 or width == 0:
        raise ValueError("a PNG needs at least one pixel")
    colour_type = 0 if img.ndim == 2 else 2
    header = struct.pack(">IIBBBBB", width, height, 8, colour_type, 0, 0, 0)
    rows = img.reshape(height, -1)
    raw = np.concatenate([np.zeros((height, 1), dtype=np.uint8), rows], axis=1)
    out = [_SIGNATURE, _chunk(b"IHDR", header)]
    for key, value in (text or {}).items():
        if not 1 <= len(key) <= 79:
            raise ValueError(f"PNG text keyword {key!r} must have 1-79 characters")
        payload = key.encode("latin-1") + b"\x00" + value.encode("latin-1", "replace")
        out.append(_chunk(b"tEXt", payload))
    out.append(_chunk(b"IDAT", zlib.compress(raw.tobytes(), 6)))
    out.append(_chunk(b"IEND", b""))
    return b"".join(out)


__all__ = ["encode_png"]
