"""Finding a tape's episodes: from the trailer's index, or by the recovery scan.

A finished tape ends with an index record and a trailer pointing at it; :func:`read_index`
reads it in one seek. A cut or damaged tape has none usable: :func:`scan_records` walks the
records after the header, keeps every complete chunk and stops at the first cut or damaged
record, saying in one message what was recovered and where the file was cut.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from arena_studio.core.tape._header import unpack_checked
from arena_studio.core.tape.damage import Damage
from arena_studio.core.tape.format import (
    FRAME_HEAD,
    FRAME_OVERHEAD,
    INDEX_DTYPES,
    KIND_BEGIN,
    KIND_CHUNK,
    KIND_END,
    KIND_INDEX,
    KINDS,
    MAX_RECORD,
    TRAILER,
    TRAILER_MAGIC,
    TRAILER_SIZE,
    TapeError,
    decode_array,
    read_frame,
)

__all__ = ["MIN_STEP_BYTES", "Entry", "frame_at", "read_index", "scan_records"]

#: smallest number of bytes one recorded step of one agent occupies (a float32 pose)
MIN_STEP_BYTES = 12


@dataclass(frozen=True)
class Entry:
    """Where one episode lies in the file, from the index or the recovery scan."""

    begin: int  # offset of the episode's begin record
    end: int  # offset just after its last readable record
    steps: int
    complete: bool


def frame_at(f: Any, pos: int, size: int) -> tuple[int, memoryview, int]:
    """Read and check the one record at ``pos`` (memory bounded by that record's size)."""
    f.seek(pos)
    head = f.read(FRAME_HEAD.size)
    if len(head) < FRAME_HEAD.size:
        raise EOFError("record header cut")
    length, kind = FRAME_HEAD.unpack(head)
    if kind not in KINDS:
        raise ValueError(f"unknown record kind {kind:#04x}")
    if length > MAX_RECORD:
        raise ValueError(f"record claims {length} bytes (limit {MAX_RECORD})")
    if pos + FRAME_OVERHEAD + length > size:
        raise EOFError("record cut")
    buf = memoryview(head + f.read(length + FRAME_OVERHEAD - FRAME_HEAD.size))
    kind, payload, end = read_frame(buf, 0)
    return kind, payload, pos + end


# -- index -------------------------------------------------------------------------------
def read_index(
    f: Any, src: str, size: int, header_end: int, agents: int
) -> tuple[list[Entry] | None, str | None]:
    """(entries from the trailer's index, or None when the tape must be scanned; why a
    finished-looking tape's index was not used, or None)."""
    if size < header_end + TRAILER_SIZE:
        return None, None
    f.seek(size - TRAILER_SIZE)
    at, magic = TRAILER.unpack(f.read(TRAILER_SIZE))
    if magic != TRAILER_MAGIC:
        return None, None
    if not header_end <= at < size - TRAILER_SIZE:
        return None, f"the trailer points at byte {at}, outside the records"
    f.seek(at)
    buf = memoryview(f.read(size - TRAILER_SIZE - at))
    try:
        kind, payload, end = read_frame(buf, 0)
    except (EOFError, ValueError) as exc:
        return None, f"the trailer points at byte {at}, not at a sound record ({exc})"
    if kind != KIND_INDEX or end != len(buf):
        return None, f"the trailer points at byte {at}, not at the index record"
    try:
        index = unpack_checked(payload, src, "index")
        return _index_entries(index, src, header_end, at, agents), None
    except TapeError as exc:
        return None, f"the index at byte {at} is unusable ({exc.where}: {exc.problem})"


def _index_entries(index: Any, src: str, header_end: int, limit: int, agents: int) -> list[Entry]:
    where = "index"
    if not isinstance(index, dict) or not isinstance(index.get("episodes"), int):
        raise TapeError(src, where, "malformed index")
    n = index["episodes"]
    cols = {  # any whole-number width is read; offsets past 2^63 cannot occur
        k: decode_array(index.get(k), f"index.{k}", src, dtypes=INDEX_DTYPES, shape=(n,)).astype(
            np.int64
        )
        for k in ("begin", "end", "steps")
    }
    begin, end, steps = cols["begin"], cols["end"], cols["steps"]
    # fewest bytes one step of every agent takes in a chunk (a Python int, > 0)
    step_bytes = max(1, agents) * MIN_STEP_BYTES
    if n:
        ok = (
            begin[0] >= header_end
            and end[-1] <= limit
            and bool((begin < end).all())
            and bool((begin[1:] >= end[:-1]).all())
            and bool((steps >= 1).all())
            # a step of every agent needs at least MIN_STEP_BYTES: bounds the claim by
            # size. Divided, not multiplied: 2**62 steps times the bytes of a step would
            # wrap around in int64 and pass
            and bool((steps <= (end - begin) // step_bytes).all())
        )
        if not ok:
            raise TapeError(src, where, "offsets or step counts out of bounds")
    return [
        Entry(int(b), int(e), int(s), True)
        for b, e, s in zip(begin.tolist(), end.tolist(), steps.tolist(), strict=True)
    ]


# -- recovery scan -------------------------------------------------------------------------
def scan_records(
    f: Any,
    src: str,
    size: int,
    header_end: int,
    index_problem: str | None,
    damage: dict[int, Damage],
) -> tuple[list[Entry], str]:
    """Walk the records after the header; stop at the first cut or damaged one. Episodes
    with a damaged record are added to ``damage``. Returns the entries and the message."""
    pos = header_end
    entries: list[Entry] = []
    open_begin: int | None = None
    open_steps = 0
    last_good = pos
    problem = "the file ends without an index (the writer did not finish)"
    while pos < size:
        try:
            kind, payload, end = frame_at(f, pos, size)
            record = unpack_checked(payload, src, f"record at byte {pos}")
            if not isinstance(record, dict):
                raise ValueError("record is not a map")
        except EOFError:
            problem = f"the file was cut inside a record at byte {pos}"
            break
        except (ValueError, TapeError) as exc:
            skip = _skippable(f, pos, size) if open_begin is not None else None
            if skip is None:
                problem = f"damaged record at byte {pos} ({exc})"
                break
            # a damaged record inside an episode: that episode is marked, the scan goes on
            # with the next record (the frame length still fits the file)
            reason = getattr(exc, "problem", None) or str(exc)
            damage.setdefault(len(entries), Damage(len(entries), reason, byte=pos))
            pos = last_good = skip
            continue
        hurt = len(entries) in damage
        if kind == KIND_BEGIN:
            if open_begin is not None and (open_steps or hurt):
                entries.append(Entry(open_begin, last_good, max(open_steps, 1), False))
            if record.get("episode") != len(entries):
                problem = f"episode numbering breaks at byte {pos}"
                open_begin = None
                break
            open_begin, open_steps = pos, 0
        elif kind == KIND_CHUNK and open_begin is not None:
            steps, start = record.get("steps"), record.get("start")
            if hurt and isinstance(start, int) and start >= open_steps:
                open_steps = start  # the steps of a damaged chunk before this one
            if start != open_steps or not isinstance(steps, int) or steps < 1:
                problem = f"chunk out of sequence at byte {pos}"
                break
            open_steps += steps
        elif kind == KIND_END and open_begin is not None:
            total = record.get("steps")
            if hurt and type(total) is int and total > open_steps:
                open_steps = total  # counting the steps of a damaged chunk
            if open_steps or hurt:
                entries.append(Entry(open_begin, end, max(open_steps, 1), True))
            open_begin, open_steps = None, 0
        elif kind == KIND_INDEX:
            problem = index_problem or f"the index at byte {pos} has no valid trailer"
            last_good = end
            break
        else:
            problem = f"record out of place at byte {pos}"
            break
        pos = end
        last_good = end
    if open_begin is not None and (open_steps or len(entries) in damage):
        entries.append(Entry(open_begin, last_good, max(open_steps, 1), False))
    return entries, _recovery_message(src, size, problem, entries, len(damage))


def _recovery_message(src: str, size: int, problem: str, entries: list[Entry], damaged: int) -> str:
    complete = [e for e in entries if e.complete]
    partial = [e for e in entries if not e.complete]
    text = (
        f"{src}: tape is incomplete: {problem}; size {size} bytes. Recovered "
        f"{len(complete)} complete episode(s) ({sum(e.steps for e in complete)} steps)"
    )
    if partial:
        text += f" and {partial[0].steps} step(s) of unfinished episode {len(complete)}"
    if damaged:
        text += f"; {damaged} damaged episode(s) are marked and skipped"
    return text + "."


def _skippable(f: Any, pos: int, size: int) -> int | None:
    """End of the record at ``pos`` when its head is sound (a known kind, a length that fits
    the file) although its contents are not, so a scan can step over it; else None."""
    f.seek(pos)
    head = f.read(FRAME_HEAD.size)
    if len(head) < FRAME_HEAD.size:
        return None
    length, kind = FRAME_HEAD.unpack(head)
    end = pos + FRAME_OVERHEAD + length
    if kind not in (KIND_CHUNK, KIND_END) or length > MAX_RECORD or end > size:
        return None
    if end < size:  # the next record must start with a sound head too
        f.seek(end)
        nxt = f.read(FRAME_HEAD.size)
        if len(nxt) < FRAME_HEAD.size or FRAME_HEAD.unpack(nxt)[1] not in KINDS:
            return None
    return end
