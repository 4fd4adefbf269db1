"""The tape file layout: framing, record kinds and the columnar array encoding.

A tape is ``MAGIC`` followed by framed records and, when the writer closed cleanly, a
fixed-size trailer pointing at the index record::

    MAGIC (8 bytes)  = 89 41 53 54 41 50 45 0A   ("\\x89ASTAPE\\n")
    record           = u32 LE payload length | u8 kind | payload (msgpack map) | u32 LE CRC-32
                       (CRC-32 as zlib.crc32 over the kind byte and the payload)
    trailer          = u64 LE offset of the index record | b"ASTAPEND"

Record kinds: ``H`` header (always first), ``B`` episode begin, ``C`` chunk of steps,
``E`` episode end, ``I`` index (last, once). Numeric arrays are msgpack maps
``{"dtype": "<f8", "shape": [...], "data": <bin>}``, C order, little-endian. The full
description for other programs is in DEVELOPERS.md ("Tape format").

Everything decoded here is bounded by the bytes actually present: a length that runs past the
end of the file is a cut, an array whose ``data`` does not hold exactly ``prod(shape)``
items of ``dtype`` is refused, and msgpack extension types are refused (nothing is unpickled
or evaluated).
"""

from __future__ import annotations

import struct
import threading
import zlib
from typing import Any

import msgpack
import numpy as np

from arena_studio.core.errors import ArenaError

FORMAT_NAME = "arena-studio.tape"
FORMAT_VERSION = 1
MAGIC = b"\x89ASTAPE\n"
TRAILER_MAGIC = b"ASTAPEND"
TRAILER_SIZE = 16
FRAME_HEAD = struct.Struct("<IB")  # payload length, kind
FRAME_CRC = struct.Struct("<I")
TRAILER = struct.Struct("<Q8s")
FRAME_OVERHEAD = FRAME_HEAD.size + FRAME_CRC.size

KIND_HEADER = ord("H")
KIND_BEGIN = ord("B")
KIND_CHUNK = ord("C")
KIND_END = ord("E")
KIND_INDEX = ord("I")
KINDS = {KIND_HEADER, KIND_BEGIN, KIND_CHUNK, KIND_END, KIND_INDEX}

#: Largest payload one record may claim (bytes); writers split longer episodes into chunks.
MAX_RECORD = 1 << 30
#: Dtypes a tape may carry, by field family. Byte order is always little-endian.
FLOAT_DTYPES = ("<f8", "<f4")
NUMBER_DTYPES = ("<f8", "<f4", "<i8", "<i4", "<i2", "|i1", "<u8", "<u4", "<u2", "|u1", "|b1")
REWARD_DTYPES = ("<f8", "<f4", "<i8", "<i4", "<i2", "|i1")
INDEX_DTYPES = ("<i8", "<i4", "<u8", "<u4")
GOAL_DTYPES = ("|u1", "|b1")
BOOL_DTYPES = ("|b1", "|u1")
_DTYPE_OBJECTS = {name: np.dtype(name) for name in NUMBER_DTYPES}
_ARRAY_KEYS = frozenset(("dtype", "shape", "data"))


class TapeError(ArenaError, ValueError):
    """A tape cannot be read or written; the message names the file and the place in it."""

    def __init__(self, source: str, where: str, problem: str) -> None:
        self.source = source
        self.where = where
        self.problem = problem
        place = f"{where}: " if where else ""
        super().__init__(f"{source}: {place}{problem}")


def _refuse_ext(code: int, data: bytes) -> Any:
    raise ValueError(f"msgpack extension type {code} is not allowed in a tape")


def frame(kind: int, payload: bytes) -> bytes:
    """One framed record (see the module docstring)."""
    head = FRAME_HEAD.pack(len(payload), kind)
    crc = zlib.crc32(payload, zlib.crc32(head[4:5]))
    return head + payload + FRAME_CRC.pack(crc)


def pack(obj: Any) -> bytes:
    """msgpack with bin for bytes and str for text (spec 2.0 types), no extension types."""
    return msgpack.packb(obj, use_bin_type=True, strict_types=False)


def unpack(payload: bytes | memoryview) -> Any:
    """Decode one record payload; container and string sizes are bounded by its length."""
    n = len(payload)
    return msgpack.unpackb(
        payload,
        raw=False,
        strict_map_key=True,
        ext_hook=_refuse_ext,
        max_bin_len=n,
        max_str_len=n,
        max_array_len=n,
        max_map_len=n,
        max_ext_len=0,
        use_list=True,
    )


def encode_array(array: np.ndarray, dtype: str) -> dict[str, Any]:
    """Columnar little-endian encoding of a numpy array as a msgpack map."""
    arr = np.ascontiguousarray(array, dtype=np.dtype(dtype))
    return {"dtype": np.dtype(dtype).str, "shape": list(arr.shape), "data": arr.tobytes()}


def decode_array(
    value: Any,
    where: str,
    source: str,
    *,
    dtypes: tuple[str, ...],
    shape: tuple[int | None, ...],
) -> np.ndarray:
    """Check dtype and shape against the expected ones, then view the bytes (no copy).

    ``shape`` entries of None accept any length. The item count is checked against the bytes
    present before numpy sees them, so a claimed size can never cause an allocation.
    """
    if type(value) is not dict or len(value) != 3 or set(value) != _ARRAY_KEYS:
        raise TapeError(source, where, "expected an array {dtype, shape, data}")
    dtype, dims, data = value["dtype"], value["shape"], value["data"]
    if type(dtype) is not str or dtype not in dtypes:
        raise TapeError(source, where, f"dtype {dtype!r} not allowed here (allowed: {dtypes})")
    if type(dims) is not list or len(dims) != len(shape):
        raise TapeError(source, where, f"expected {len(shape)} dimensions, got {dims!r}")
    count = 1
    for i, (got, want) in enumerate(zip(dims, shape, strict=True)):
        if type(got) is not int or got < 0:  # bool is excluded: its type is not int
            raise TapeError(source, where, f"shape[{i}] must be a whole number >= 0")
        if want is not None and got != want:
            raise TapeError(source, where, f"shape[{i}] is {got}, expected {want}")
        count *= got
    if not isinstance(data, bytes | memoryview):
        raise TapeError(source, where, "array data must be msgpack bin")
    np_dtype = _DTYPE_OBJECTS.get(dtype) or np.dtype(dtype)
    if count * np_dtype.itemsize != len(data):
        raise TapeError(
            source,
            where,
            f"shape {dims} of {dtype} needs {count * np_dtype.itemsize} bytes, has {len(data)}",
        )
    arr = np.frombuffer(data, dtype=np_dtype)
    return arr if len(dims) == 1 else arr.reshape(dims)


def read_frame(buf: memoryview, pos: int, verify: bool = True) -> tuple[int, memoryview, int]:
    """Parse the record at ``pos`` of ``buf``: (kind, payload view, end offset).

    Raises EOFError when the record runs past the end (a cut) and ValueError when it is
    damaged (unknown kind, bad CRC, absurd length).
    """
    if pos + FRAME_HEAD.size > len(buf):
        raise EOFError("record header cut")
    length, kind = FRAME_HEAD.unpack_from(buf, pos)
    if kind not in KINDS:
        raise ValueError(f"unknown record kind {kind:#04x}")
    if length > MAX_RECORD:
        raise ValueError(f"record claims {length} bytes (limit {MAX_RECORD})")
    start = pos + FRAME_HEAD.size
    end = start + length + FRAME_CRC.size
    if end > len(buf):
        raise EOFError("record cut")
    payload = buf[start : start + length]
    if verify:
        (crc,) = FRAME_CRC.unpack_from(buf, start + length)
        if zlib.crc32(payload, zlib.crc32(buf[pos + 4 : pos + 5])) != crc:
            raise ValueError("record checksum mismatch (damaged bytes)")
    return kind, payload, end


#: spans at least this large have their checksums computed on worker threads
PARALLEL_CRC_BYTES = 1 << 22
CRC_WORKERS = 2
_POOL: Any = None
_POOL_LOCK = threading.Lock()


def _crc_pool() -> Any:
    global _POOL
    with _POOL_LOCK:
        if _POOL is None:
            from concurrent.futures import ThreadPoolExecutor

            _POOL = ThreadPoolExecutor(CRC_WORKERS, thread_name_prefix="tape-crc")
        return _POOL


def _bad_records(buf: memoryview, frames: list[tuple[int, int]]) -> int | None:
    """Offset of the first record in ``frames`` ((offset, payload length)) whose CRC fails."""
    for pos, length in frames:
        start = pos + FRAME_HEAD.size
        (want,) = FRAME_CRC.unpack_from(buf, start + length)
        if zlib.crc32(buf[start : start + length], zlib.crc32(buf[pos + 4 : pos + 5])) != want:
            return pos
    return None


def first_bad_record(buf: memoryview) -> int | None:
    """Offset of the first complete record of ``buf`` whose CRC-32 fails, or None: what
    ``finish_crc_checks(start_crc_checks(buf, inline=True))`` answers, in one lean pass. The
    kind byte and the payload are adjacent, so one ``zlib.crc32`` call covers both."""
    head, tail = FRAME_HEAD.unpack_from, FRAME_CRC.unpack_from
    crc32 = zlib.crc32
    size = len(buf)
    pos = 0
    head_size, overhead = FRAME_HEAD.size, FRAME_OVERHEAD
    while pos + head_size <= size:
        length, _ = head(buf, pos)
        end = pos + overhead + length
        if length > MAX_RECORD or end > size:
            break
        if crc32(buf[pos + 4 : end - FRAME_CRC.size]) != tail(buf, end - FRAME_CRC.size)[0]:
            return pos
        pos = end
    return None


def first_bad_in_ranges(buf: memoryview, ranges: list[tuple[int, int]]) -> tuple[int, int] | None:
    """``first_bad_record`` over each ``buf[lo:hi]`` of ``ranges`` in turn, in one call:
    (index of the first range holding a damaged record, that record's offset in ``buf``), or
    None. Records are walked within each range only, exactly as one call per range would."""
    head, tail = FRAME_HEAD.unpack_from, FRAME_CRC.unpack_from
    crc32 = zlib.crc32
    head_size, overhead, crc_size = FRAME_HEAD.size, FRAME_OVERHEAD, FRAME_CRC.size
    for k, (lo, hi) in enumerate(ranges):
        pos = lo
        while pos + head_size <= hi:
            length, _ = head(buf, pos)
            end = pos + overhead + length
            if length > MAX_RECORD or end > hi:
                break
            if crc32(buf[pos + 4 : end - crc_size]) != tail(buf, end - crc_size)[0]:
                return k, pos
            pos = end
    return None


def start_crc_checks(buf: memoryview, inline: bool = False) -> list[Any]:
    """Check every complete record of ``buf`` on worker threads; see finish_crc_checks.

    zlib releases the GIL while it sums, so the checks run beside the caller's decoding.
    Only whole records are listed; a cut or malformed one is left to :func:`read_frame`.
    """
    frames: list[tuple[int, int]] = []
    pos = 0
    while pos + FRAME_HEAD.size <= len(buf):
        length, _ = FRAME_HEAD.unpack_from(buf, pos)
        end = pos + FRAME_OVERHEAD + length
        if length > MAX_RECORD or end > len(buf):
            break
        frames.append((pos, length))
        pos = end
    total = sum(n for _, n in frames) or 1
    groups: list[list[tuple[int, int]]] = [[] for _ in range(CRC_WORKERS)]
    done = 0
    for f in frames:
        groups[min(CRC_WORKERS - 1, done * CRC_WORKERS // total)].append(f)
        done += f[1]
    if inline:  # the caller is a worker itself: check here, same answer
        return [_Done(_bad_records(buf, frames))]
    pool = _crc_pool()
    return [pool.submit(_bad_records, buf, g) for g in groups if g]


class _Done:
    """A finished check, shaped like a Future for finish_crc_checks."""

    def __init__(self, value: int | None) -> None:
        self.value = value

    def result(self) -> int | None:
        return self.value


def finish_crc_checks(checks: list[Any]) -> int | None:
    """Wait for :func:`start_crc_checks`; the offset of the first damaged record, or None."""
    bad = [f.result() for f in checks]
    found = [b for b in bad if b is not None]
    return min(found) if found else None


class _Subset(Exception):
    """The payload uses a msgpack type the zero-copy walker leaves to msgpack itself."""


def unpack_views(payload: memoryview) -> Any:
    """Decode a record like :func:`unpack`, but return ``bin`` values as zero-copy views.

    Chunk records are mostly array bytes; copying them out of the read buffer costs as much
    as reading the file. This walker covers the msgpack subset tapes use (maps with str keys,
    arrays, str, bin, ints, floats, nil, booleans) following the msgpack specification's type
    table; anything else (including ext types, which are then refused) goes through
    :func:`unpack`.
    """
    try:
        value, end = _walk(payload, 0, 0)
    except (_Subset, IndexError, struct.error, UnicodeDecodeError):
        return unpack(payload)
    if end != len(payload):
        raise ValueError("extra bytes after the record")
    return value


_U16, _U32, _U64 = struct.Struct(">H"), struct.Struct(">I"), struct.Struct(">Q")
_I8, _I16, _I32, _I64 = (struct.Struct(f">{c}") for c in "bhiq")
_F32, _F64 = struct.Struct(">f"), struct.Struct(">d")


def _walk(buf: memoryview, pos: int, depth: int) -> tuple[Any, int]:
    if depth > 32:
        raise _Subset
    b = buf[pos]
    pos += 1
    if b <= 0x7F:
        return b, pos
    if b >= 0xE0:
        return b - 0x100, pos
    if 0x80 <= b <= 0x8F:
        return _map(buf, pos, b & 0x0F, depth)
    if 0x90 <= b <= 0x9F:
        return _array(buf, pos, b & 0x0F, depth)
    if 0xA0 <= b <= 0xBF:
        return _str(buf, pos, b & 0x1F)
    if b == 0xC0:
        return None, pos
    if b == 0xC2:
        return False, pos
    if b == 0xC3:
        return True, pos
    if b in (0xC4, 0xC5, 0xC6):
        size_fmt = {0xC4: None, 0xC5: _U16, 0xC6: _U32}[b]
        if size_fmt is None:
            n, pos = buf[pos], pos + 1
        else:
            (n,), pos = size_fmt.unpack_from(buf, pos), pos + size_fmt.size
        if pos + n > len(buf):
            raise ValueError("bin runs past the record")
        return buf[pos : pos + n], pos + n
    simple = {
        0xCA: _F32, 0xCB: _F64, 0xCD: _U16, 0xCE: _U32, 0xCF: _U64,
        0xD0: _I8, 0xD1: _I16, 0xD2: _I32, 0xD3: _I64,
    }  # fmt: skip
    if b == 0xCC:
        return buf[pos], pos + 1
    if b in simple:
        fmt = simple[b]
        return fmt.unpack_from(buf, pos)[0], pos + fmt.size
    if b == 0xD9:
        return _str(buf, pos + 1, buf[pos])
    if b == 0xDA:
        return _str(buf, pos + 2, _U16.unpack_from(buf, pos)[0])
    if b == 0xDB:
        return _str(buf, pos + 4, _U32.unpack_from(buf, pos)[0])
    if b == 0xDC:
        return _array(buf, pos + 2, _U16.unpack_from(buf, pos)[0], depth)
    if b == 0xDD:
        return _array(buf, pos + 4, _U32.unpack_from(buf, pos)[0], depth)
    if b == 0xDE:
        return _map(buf, pos + 2, _U16.unpack_from(buf, pos)[0], depth)
    if b == 0xDF:
        return _map(buf, pos + 4, _U32.unpack_from(buf, pos)[0], depth)
    raise _Subset  # ext types and anything unknown: msgpack decides (and ext is refused)


def _str(buf: memoryview, pos: int, n: int) -> tuple[str, int]:
    if pos + n > len(buf):
        raise ValueError("str runs past the record")
    return bytes(buf[pos : pos + n]).decode("utf-8"), pos + n


def _array(buf: memoryview, pos: int, n: int, depth: int) -> tuple[list[Any], int]:
    if n > len(buf) - pos:
        raise ValueError("array longer than the record")
    out = []
    for _ in range(n):
        value, pos = _walk(buf, pos, depth + 1)
        out.append(value)
    return out, pos


def _map(buf: memoryview, pos: int, n: int, depth: int) -> tuple[dict[str, Any], int]:
    if 2 * n > len(buf) - pos:
        raise ValueError("map longer than the record")
    out: dict[str, Any] = {}
    for _ in range(n):
        key, pos = _walk(buf, pos, depth + 1)
        if not isinstance(key, str):
            raise _Subset  # msgpack refuses non-str keys with its own message
        out[key], pos = _walk(buf, pos, depth + 1)
    return out, pos


__all__ = [
    "BOOL_DTYPES",
    "CRC_WORKERS",
    "FLOAT_DTYPES",
    "FORMAT_NAME",
    "FORMAT_VERSION",
    "FRAME_CRC",
    "FRAME_HEAD",
    "FRAME_OVERHEAD",
    "GOAL_DTYPES",
    "INDEX_DTYPES",
    "KINDS",
    "KIND_BEGIN",
    "KIND_CHUNK",
    "KIND_END",
    "KIND_HEADER",
    "KIND_INDEX",
    "MAGIC",
    "MAX_RECORD",
    "NUMBER_DTYPES",
    "PARALLEL_CRC_BYTES",
    "REWARD_DTYPES",
    "TRAILER",
    "TRAILER_MAGIC",
    "TRAILER_SIZE",
    "TapeError",
    "decode_array",
    "encode_array",
    "finish_crc_checks",
    "first_bad_in_ranges",
    "first_bad_record",
    "frame",
    "pack",
    "read_frame",
    "start_crc_checks",
    "unpack",
    "unpack_views",
]
