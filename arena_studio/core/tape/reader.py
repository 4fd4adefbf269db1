"""Reading tapes lazily: ``open_tape`` reads the header and index, ``episode(i)`` one episode.

A cut or damaged tape (no trailer, half a record at the end, a bad checksum) is scanned record
by record instead: every complete chunk is recovered, ``truncated`` is True and
``recovery_message`` says what was recovered and where the file was cut. Anything else that
is wrong (not a tape, a newer version, a field with the wrong dtype or shape) raises
:class:`TapeError` naming the file and the place.
"""

from __future__ import annotations

import math
import os
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any, cast

import numpy as np

from arena_studio.core.errors import ArenaError
from arena_studio.core.safe_open import InputFileError, open_input
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode, RoleTimeline
from arena_studio.core.tape.format import (
    BOOL_DTYPES,
    FLOAT_DTYPES,
    FORMAT_NAME,
    FORMAT_VERSION,
    FRAME_CRC,
    FRAME_HEAD,
    FRAME_OVERHEAD,
    GOAL_DTYPES,
    INDEX_DTYPES,
    KIND_BEGIN,
    KIND_CHUNK,
    KIND_END,
    KIND_HEADER,
    KIND_INDEX,
    KINDS,
    MAGIC,
    MAX_RECORD,
    NUMBER_DTYPES,
    PARALLEL_CRC_BYTES,
    TRAILER,
    TRAILER_MAGIC,
    TRAILER_SIZE,
    TapeError,
    decode_array,
    finish_crc_checks,
    first_bad_in_ranges,
    read_frame,
    start_crc_checks,
    unpack,
    unpack_views,
)

#: chunk payloads at least this large are decoded without copying their array bytes
ZERO_COPY_BYTES = 1 << 16
#: checked goal vectors a Tape remembers (they repeat across episodes)
GOAL_CACHE_SIZE = 4096
#: smallest number of bytes one recorded step of one agent occupies (a float32 pose)
MIN_STEP_BYTES = 12
#: per-step fields a chunk may carry besides the poses
_OPTIONAL_FIELDS = frozenset(("rewards", "actions", "done", "channels"))


@dataclass(frozen=True)
class _Entry:
    begin: int  # offset of the episode's begin record
    end: int  # offset just after its last readable record
    steps: int
    complete: bool


@dataclass(frozen=True)
class EpisodeSpan:
    """Raw bytes of consecutive episodes, from :meth:`Tape.read_span`."""

    start: int
    entries: list[_Entry]
    data: memoryview


def open_tape(path: str | Path) -> Tape:
    """Open a tape lazily (header and index only); see :class:`Tape`."""
    return Tape(Path(path))


def _frame_at(f: Any, pos: int, size: int) -> tuple[int, memoryview, int]:
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


class Tape:
    """A recorded tape: header values, and episodes decoded on demand."""

    def __init__(self, path: Path) -> None:
        self.path = path
        self._src = str(path)
        self._goal_cache: dict[bytes, np.ndarray] = {}
        try:
            with open_input(path, "tape") as f:  # regular files only, size bounded
                self.file_size = os.fstat(f.fileno()).st_size
                self._read_header(f)
                entries = self._read_index(f)
        except InputFileError:
            raise
        except OSError as exc:
            raise TapeError(self._src, "", f"cannot read: {exc.strerror or exc}") from None
        self.truncated = entries is None
        self.recovery_message: str | None = None
        if entries is None:
            entries, self.recovery_message = self._scan()
        self._entries = entries

    # -- public ----------------------------------------------------------------------------
    def __len__(self) -> int:
        return len(self._entries)

    def __iter__(self) -> Iterator[Episode]:
        for i in range(len(self)):
            yield self.episode(i)

    def __repr__(self) -> str:
        cut = ", truncated" if self.truncated else ""
        return f"Tape({self._src!r}, {len(self)} episodes{cut})"

    def episode_steps(self, i: int) -> int:
        """Steps of episode ``i`` without decoding it."""
        return self._entries[self._check_index(i)].steps

    @property
    def total_steps(self) -> int:
        return sum(e.steps for e in self._entries)

    def episode(self, i: int, *, verify: bool = True) -> Episode:
        """Decode episode ``i``; ``verify`` checks each record's CRC-32."""
        entry = self._entries[self._check_index(i)]
        span = self._read_span(entry.begin, entry.end, f"episode {i}")
        return self._decode_episode(i, entry, span, verify)

    def episodes(
        self, start: int, stop: int, *, verify: bool = True, copy: bool = True
    ) -> list[Episode]:
        """Episodes ``start .. stop - 1`` decoded from one file read (cheaper than one by one).

        With ``copy=False`` the arrays are read-only views into that read, for callers that
        only look at them (metrics); the default gives each episode arrays of its own.
        """
        return self.decode_span(self.read_span(start, stop, verify=verify), copy=copy)

    def read_span(self, start: int, stop: int, *, verify: bool = True) -> EpisodeSpan:
        """The bytes of episodes ``start .. stop - 1`` in one read, checksums verified.

        Only file reading and CRC-32 (both release the GIL), so a reader thread can fetch the
        next span while the caller decodes and computes on this one (see ``decode_span``).
        """
        if stop <= start:
            return EpisodeSpan(start, [], memoryview(b""))
        self._check_index(start)
        self._check_index(stop - 1)
        entries = self._entries[start:stop]
        lo = entries[0].begin
        span = self._read_span(lo, entries[-1].end, f"episodes {start}..{stop - 1}")
        if verify:
            found = first_bad_in_ranges(span, [(e.begin - lo, e.end - lo) for e in entries])
            if found is not None:
                k, bad = found
                raise TapeError(
                    self._src,
                    f"episode {start + k} byte {lo + bad}",
                    "record checksum mismatch (damaged bytes)",
                )
        return EpisodeSpan(start, entries, span)

    def decode_span(self, span: EpisodeSpan, *, copy: bool = True) -> list[Episode]:
        """Decode the episodes of a :meth:`read_span` (checksums were checked there)."""
        if not span.entries:
            return []
        lo = span.entries[0].begin
        return [
            self._decode_episode(
                span.start + k, e, span.data[e.begin - lo : e.end - lo], False, copy=copy
            )
            for k, e in enumerate(span.entries)
        ]

    def _read_span(self, begin: int, end: int, where: str) -> memoryview:
        try:
            span = np.empty(end - begin, dtype=np.uint8)  # no zero-fill
            with open(self.path, "rb", buffering=0) as f:
                f.seek(begin)
                got = f.readinto(cast(Any, span))  # an ndarray is a writable buffer
        except OSError as exc:
            raise TapeError(self._src, where, f"cannot read: {exc}") from None
        if got != end - begin:
            raise TapeError(self._src, where, "file shrank while reading")
        return memoryview(cast(Any, span)).cast("B")

    # -- header --------------------------------------------------------------------------
    def _read_header(self, f: Any) -> None:
        magic = f.read(len(MAGIC))
        if magic != MAGIC:
            raise TapeError(self._src, "", "not an arena-studio tape (wrong first bytes)")
        head = f.read(FRAME_HEAD.size)
        if len(head) < FRAME_HEAD.size:
            raise TapeError(self._src, "header", "file ends inside the header")
        length, kind = FRAME_HEAD.unpack(head)
        if kind != KIND_HEADER:
            raise TapeError(self._src, "header", "first record is not a header")
        if length > min(MAX_RECORD, self.file_size):
            raise TapeError(
                self._src, "header", f"header claims {length} bytes, file has {self.file_size}"
            )
        rest = f.read(length + FRAME_OVERHEAD - FRAME_HEAD.size)
        buf = memoryview(head + rest)
        try:
            _, payload, end = read_frame(buf, 0)
        except EOFError:
            raise TapeError(self._src, "header", "file ends inside the header") from None
        except ValueError as exc:
            raise TapeError(self._src, "header", str(exc)) from None
        self.header_end = len(MAGIC) + end
        header = self._unpack(payload, "header")
        if not isinstance(header, dict):
            raise TapeError(self._src, "header", "expected a map")
        if header.get("format") != FORMAT_NAME:
            raise TapeError(self._src, "header.format", f"expected {FORMAT_NAME!r}")
        version = header.get("version")
        if isinstance(version, bool) or not isinstance(version, int) or version < 1:
            raise TapeError(self._src, "header.version", "expected a whole number >= 1")
        if version > FORMAT_VERSION:
            raise TapeError(
                self._src,
                "header.version",
                f"tape version {version} is newer than this arena_studio reads "
                f"({FORMAT_VERSION}); update arena_studio",
            )
        self.version = version
        dt = header.get("dt")
        if isinstance(dt, bool) or not isinstance(dt, int | float) or not math.isfinite(dt):
            raise TapeError(self._src, "header.dt", "expected a finite number")
        if dt <= 0:
            raise TapeError(self._src, "header.dt", f"expected a time step > 0, got {dt}")
        self.dt = float(dt)
        scene_dict = header.get("scene")
        if not isinstance(scene_dict, dict):
            raise TapeError(self._src, "header.scene", "expected the embedded scene as a map")
        try:
            self.scene = Scene.from_dict(scene_dict)
        except ArenaError as exc:
            raise TapeError(self._src, "header.scene", str(exc)) from None
        ids = header.get("agent_ids")
        if not isinstance(ids, list) or not all(isinstance(s, str) for s in ids):
            raise TapeError(self._src, "header.agent_ids", "expected a list of strings")
        if tuple(ids) != tuple(a.id for a in self.scene.agents):
            raise TapeError(
                self._src, "header.agent_ids", "must equal the embedded scene's agent ids in order"
            )
        self.agent_ids = tuple(ids)
        stored_hash = header.get("scene_hash")
        self.scene_hash = stored_hash if isinstance(stored_hash, str) else None
        #: False when the embedded scene no longer hashes to the stored value
        self.scene_hash_ok = self.scene_hash == self.scene.content_hash()
        meta = header.get("metadata", {})
        if not isinstance(meta, dict):
            raise TapeError(self._src, "header.metadata", "expected a map")
        self.metadata: dict[str, Any] = meta

    # -- index -----------------------------------------------------------------------------
    def _read_index(self, f: Any) -> list[_Entry] | None:
        """Entries from the trailer's index, or None when the tape must be scanned."""
        size = self.file_size
        if size < self.header_end + TRAILER_SIZE:
            return None
        f.seek(size - TRAILER_SIZE)
        at, magic = TRAILER.unpack(f.read(TRAILER_SIZE))
        if magic != TRAILER_MAGIC or not self.header_end <= at < size - TRAILER_SIZE:
            return None
        f.seek(at)
        buf = memoryview(f.read(size - TRAILER_SIZE - at))
        try:
            kind, payload, end = read_frame(buf, 0)
        except (EOFError, ValueError):
            return None
        if kind != KIND_INDEX or end != len(buf):
            return None
        try:
            index = self._unpack(payload, "index")
            return self._index_entries(index, at)
        except TapeError:
            return None

    def _index_entries(self, index: Any, limit: int) -> list[_Entry]:
        where = "index"
        if not isinstance(index, dict) or not isinstance(index.get("episodes"), int):
            raise TapeError(self._src, where, "malformed index")
        n = index["episodes"]
        cols = {
            k: decode_array(index.get(k), f"index.{k}", self._src, dtypes=INDEX_DTYPES, shape=(n,))
            for k in ("begin", "end", "steps")
        }
        begin, end, steps = cols["begin"], cols["end"], cols["steps"]
        if n:
            ok = (
                begin[0] >= self.header_end
                and end[-1] <= limit
                and bool((begin < end).all())
                and bool((begin[1:] >= end[:-1]).all())
                and bool((steps >= 1).all())
                # a step of every agent needs at least MIN_STEP_BYTES: bounds the claim by size
                and bool((steps * len(self.agent_ids) * MIN_STEP_BYTES <= end - begin).all())
            )
            if not ok:
                raise TapeError(self._src, where, "offsets or step counts out of bounds")
        return [
            _Entry(int(b), int(e), int(s), True)
            for b, e, s in zip(begin.tolist(), end.tolist(), steps.tolist(), strict=True)
        ]

    # -- recovery scan -----------------------------------------------------------------------
    def _scan(self) -> tuple[list[_Entry], str]:
        """Walk the records after the header; stop at the first cut or damaged one."""
        with open(self.path, "rb") as f:
            return self._scan_file(f)

    def _scan_file(self, f: Any) -> tuple[list[_Entry], str]:
        size = self.file_size
        pos = self.header_end
        entries: list[_Entry] = []
        open_begin: int | None = None
        open_steps = 0
        last_good = pos
        problem = "the file ends without an index (the writer did not finish)"
        while pos < size:
            try:
                kind, payload, end = _frame_at(f, pos, size)
                record = self._unpack(payload, f"record at byte {pos}")
                if not isinstance(record, dict):
                    raise ValueError("record is not a map")
            except EOFError:
                problem = f"the file was cut inside a record at byte {pos}"
                break
            except (ValueError, TapeError) as exc:
                problem = f"damaged record at byte {pos} ({exc})"
                break
            if kind == KIND_BEGIN:
                if open_begin is not None and open_steps:
                    entries.append(_Entry(open_begin, last_good, open_steps, False))
                if record.get("episode") != len(entries):
                    problem = f"episode numbering breaks at byte {pos}"
                    open_begin = None
                    break
                open_begin, open_steps = pos, 0
            elif kind == KIND_CHUNK and open_begin is not None:
                steps = record.get("steps")
                if record.get("start") != open_steps or not isinstance(steps, int) or steps < 1:
                    problem = f"chunk out of sequence at byte {pos}"
                    break
                open_steps += steps
            elif kind == KIND_END and open_begin is not None:
                if open_steps:
                    entries.append(_Entry(open_begin, end, open_steps, True))
                open_begin, open_steps = None, 0
            elif kind == KIND_INDEX:
                problem = f"the index at byte {pos} has no valid trailer"
                last_good = end
                break
            else:
                problem = f"record out of place at byte {pos}"
                break
            pos = end
            last_good = end
        if open_begin is not None and open_steps:
            entries.append(_Entry(open_begin, last_good, open_steps, False))
        complete = [e for e in entries if e.complete]
        partial = [e for e in entries if not e.complete]
        text = (
            f"{self._src}: tape is incomplete: {problem}; size {size} bytes. Recovered "
            f"{len(complete)} complete episode(s) ({sum(e.steps for e in complete)} steps)"
        )
        if partial:
            text += f" and {partial[0].steps} step(s) of unfinished episode {len(complete)}"
        return entries, text + "."

    # -- decoding ---------------------------------------------------------------------------
    def _check_index(self, i: int) -> int:
        if isinstance(i, bool) or not isinstance(i, int | np.integer) or not 0 <= i < len(self):
            raise IndexError(f"{self._src}: no episode {i} (the tape has {len(self)})")
        return int(i)

    def _unpack(self, payload: memoryview, where: str) -> Any:
        try:
            return unpack(payload)
        except Exception as exc:  # msgpack raises several unrelated types for bad bytes
            raise TapeError(self._src, where, f"not valid msgpack ({exc})") from None

    def _decode_episode(
        self, i: int, entry: _Entry, buf: memoryview, verify: bool, copy: bool = True
    ) -> Episode:
        if not verify or len(buf) < PARALLEL_CRC_BYTES:
            return self._decode_records(i, entry, buf, verify, copy)
        # large spans: checksums run on worker threads (zlib releases the GIL) while the
        # records are decoded here; all are checked before anything is returned, and damage
        # is reported as such even when it also broke the decoding
        checks = start_crc_checks(buf)
        try:
            episode = self._decode_records(i, entry, buf, False, copy)
        except TapeError:
            self._raise_if_damaged(i, entry, finish_crc_checks(checks))
            raise
        self._raise_if_damaged(i, entry, finish_crc_checks(checks))
        return episode

    def _raise_if_damaged(self, i: int, entry: _Entry, bad: int | None) -> None:
        if bad is not None:
            raise TapeError(
                self._src,
                f"episode {i} byte {entry.begin + bad}",
                "record checksum mismatch (damaged bytes)",
            )

    def _decode_records(
        self, i: int, entry: _Entry, buf: memoryview, verify: bool, copy: bool
    ) -> Episode:
        where = f"episode {i}"
        records: list[tuple[int, Any, int]] = []
        pos = 0
        size = len(buf)
        head = FRAME_HEAD.unpack_from
        while pos < size:
            # a sound frame whose checksum was already checked is cut out here; read_frame
            # takes every other case (checksums to verify, or something to name)
            length, kind = head(buf, pos) if pos + FRAME_HEAD.size <= size else (0, -1)
            end = pos + FRAME_OVERHEAD + length
            if verify or kind not in KINDS or length > MAX_RECORD or end > size:
                try:
                    kind, payload, end = read_frame(buf, pos, verify)
                except (EOFError, ValueError) as exc:
                    place = f"{where} byte {entry.begin + pos}"
                    raise TapeError(self._src, place, str(exc)) from None
            else:
                payload = buf[pos + FRAME_HEAD.size : end - FRAME_CRC.size]
            try:
                big = kind == KIND_CHUNK and len(payload) >= ZERO_COPY_BYTES
                record = unpack_views(payload) if big else unpack(payload)
            except Exception as exc:  # msgpack raises several unrelated types for bad bytes
                raise TapeError(self._src, where, f"not valid msgpack ({exc})") from None
            records.append((kind, record, entry.begin + pos))
            pos = end
        if not records or records[0][0] != KIND_BEGIN or not isinstance(records[0][1], dict):
            raise TapeError(self._src, where, "does not start with an episode record")
        begin = records[0][1]
        a, n_lm = len(self.agent_ids), len(self.scene.landmarks)
        team_goal = self._goal(begin.get("team_goal"), n_lm, copy, where, "team_goal")
        pursued_raw = begin.get("pursued_goals")
        pursued: tuple[np.ndarray | None, ...] = ()
        if pursued_raw is not None:
            if not isinstance(pursued_raw, list) or len(pursued_raw) != a:
                raise TapeError(self._src, f"{where}.pursued_goals", f"expected {a} entries")
            goal = self._goal
            pursued = tuple(
                [goal(g, n_lm, copy, where, "pursued_goals", k) for k, g in enumerate(pursued_raw)]
            )
        roles_raw = begin.get("roles")
        roles = () if roles_raw is None else self._roles(roles_raw, f"{where}.roles", a)
        messages = begin.get("messages", [])
        if not isinstance(messages, list):
            raise TapeError(self._src, f"{where}.messages", "expected a list")
        chunks = [r for r in records[1:] if r[0] == KIND_CHUNK]
        ends = [r for r in records[1:] if r[0] == KIND_END]
        if len(chunks) + len(ends) != len(records) - 1 or len(ends) > 1:
            raise TapeError(self._src, where, "unexpected record inside the episode")
        arrays = self._chunks(chunks, where, a, copy)
        steps = arrays["poses"].shape[0]
        if steps != entry.steps:
            raise TapeError(self._src, where, f"holds {steps} steps, the index says {entry.steps}")
        outcome = None
        if ends:
            end_rec = ends[0][1]
            if not isinstance(end_rec, dict) or end_rec.get("steps") != steps:
                raise TapeError(self._src, f"{where}.end", "step count does not match the chunks")
            outcome = end_rec.get("outcome")
            if outcome is not None and not isinstance(outcome, dict):
                raise TapeError(self._src, f"{where}.outcome", "expected a map or nil")
        return Episode._of_fields(  # Episode(...) in field order, built faster
            i,  # index
            self.dt,  # dt
            arrays["poses"],  # poses
            team_goal,  # team_goal
            pursued,  # pursued_goals
            roles,  # roles
            arrays.get("rewards"),  # rewards
            arrays.get("actions"),  # actions
            arrays.get("done"),  # done
            arrays.get("channels", {}),  # channels
            tuple(messages),  # messages
            outcome,  # outcome
            entry.complete and bool(ends),  # complete
        )

    def _chunks(
        self, chunks: list[tuple[int, Any, int]], where: str, a: int, copy: bool = True
    ) -> dict[str, Any]:
        if not chunks:
            raise TapeError(self._src, where, "has no steps")
        if len(chunks) == 1:
            quick = self._poses_only_chunk(chunks[0], where, a, copy)
            if quick is not None:
                return quick
        parts: dict[str, list[np.ndarray]] = {}
        channel_parts: dict[str, list[np.ndarray]] = {}
        optional = ("rewards", "actions", "done", "channels")
        layout: tuple[str, ...] | None = None
        start = 0
        k_actions: int | None = None
        for _, rec, offset in chunks:
            cw = f"{where} chunk at byte {offset}"
            if not isinstance(rec, dict):
                raise TapeError(self._src, cw, "expected a map")
            n = rec.get("steps")
            if isinstance(n, bool) or not isinstance(n, int) or n < 1 or rec.get("start") != start:
                raise TapeError(self._src, cw, "bad start or step count")
            present = tuple(k for k in optional if k in rec)
            if layout is None:
                layout = present
            elif present != layout:
                raise TapeError(self._src, cw, "optional fields differ from the first chunk")
            dec = self._array
            parts.setdefault("poses", []).append(
                dec(rec.get("poses"), f"{cw}.poses", FLOAT_DTYPES, (n, a, 3))
            )
            if "rewards" in rec:
                parts.setdefault("rewards", []).append(
                    dec(rec["rewards"], f"{cw}.rewards", FLOAT_DTYPES, (n, a))
                )
            if "actions" in rec:
                act = dec(rec["actions"], f"{cw}.actions", FLOAT_DTYPES, (n, a, k_actions))
                k_actions = act.shape[2]
                parts.setdefault("actions", []).append(act)
            if "done" in rec:
                parts.setdefault("done", []).append(
                    dec(rec["done"], f"{cw}.done", BOOL_DTYPES, (n, a)).view(np.uint8) != 0
                )
            if "channels" in rec:
                chans = rec["channels"]
                if not isinstance(chans, dict) or (
                    channel_parts and set(chans) != set(channel_parts)
                ):
                    raise TapeError(self._src, f"{cw}.channels", "expected the same named arrays")
                for name, value in chans.items():
                    cshape: tuple[int | None, ...] = (n,)
                    if isinstance(value, dict) and isinstance(value.get("shape"), list):
                        cshape = (n,) if len(value["shape"]) == 1 else (n, a)
                    arr = dec(value, f"{cw}.channels.{name}", NUMBER_DTYPES, cshape)
                    channel_parts.setdefault(name, []).append(arr)
            start += n
        out: dict[str, Any] = {}
        for name, arrs in parts.items():
            joined = (
                np.concatenate(arrs, axis=0)
                if len(arrs) > 1
                else arrs[0].copy()
                if copy
                else arrs[0]
            )
            out[name] = joined.astype(np.float64, copy=False) if name != "done" else joined
        self._check_finite(out["poses"], where)
        if channel_parts:
            out["channels"] = {
                name: np.concatenate(arrs, axis=0) if len(arrs) > 1 else arrs[0].copy()
                for name, arrs in channel_parts.items()
            }
            shapes = {arr.shape[1:] for arr in out["channels"].values()}
            if any(len(s) > 1 for s in shapes):
                raise TapeError(self._src, f"{where}.channels", "channels must be (T,) or (T, A)")
        return out

    def _poses_only_chunk(
        self, chunk: tuple[int, Any, int], where: str, a: int, copy: bool
    ) -> dict[str, Any] | None:
        """:meth:`_chunks` of an episode held in one chunk of poses alone (what the writer
        usually makes): the same checks and messages, without the bookkeeping for several
        chunks and optional fields. None when the chunk is anything else."""
        _, rec, offset = chunk
        if type(rec) is not dict or not _OPTIONAL_FIELDS.isdisjoint(rec):
            return None
        n = rec.get("steps")
        if type(n) is not int or n < 1 or rec.get("start") != 0:
            return None  # the general path names the problem
        poses = self._array(
            rec.get("poses"), f"{where} chunk at byte {offset}.poses", FLOAT_DTYPES, (n, a, 3)
        )
        if copy:
            poses = poses.copy()
        poses = poses.astype(np.float64, copy=False)
        self._check_finite(poses, where)
        return {"poses": poses}

    def _check_finite(self, poses: np.ndarray, where: str) -> None:
        """Refuse a pose that is not a finite number, naming its step and agent (the writer
        refuses them; a foreign tape may not)."""
        if np.isfinite(poses).all():
            return
        t, agent = (int(v) for v in np.argwhere(~np.isfinite(poses).all(axis=2))[0])
        raise TapeError(self._src, f"{where} step {t} agent {agent}", "pose is not a finite number")

    def _array(
        self, value: Any, where: str, dtypes: tuple[str, ...], shape: tuple[int | None, ...]
    ) -> np.ndarray:
        return decode_array(value, where, self._src, dtypes=dtypes, shape=shape)

    def _goal(
        self, value: Any, n_lm: int, copy: bool, where: str, field: str, k: int | None = None
    ) -> np.ndarray | None:
        """A checked goal vector; ``where.field[k]`` names it in errors. With ``copy`` False
        the remembered read-only array itself (callers that only look at it)."""
        if value is None:
            return None
        # the same few goal vectors recur in every episode: remember the checked ones
        key = None
        if type(value) is dict and len(value) == 3:
            data, shape = value.get("data"), value.get("shape")
            # exact types, as decode_array checks them: 3.0 == 3 must not pass for a length
            if (
                type(data) is bytes
                and value.get("dtype") == "|u1"
                and type(shape) is list
                and len(shape) == 1
                and type(shape[0]) is int
                and shape[0] == n_lm
            ):
                key = data
                known = self._goal_cache.get(key)
                if known is not None:
                    return known.copy() if copy else known
        place = f"{where}.{field}" if k is None else f"{where}.{field}[{k}]"
        arr = self._array(value, place, GOAL_DTYPES, (n_lm,))
        if n_lm and max(value["data"]) > 1:  # |u1 bytes: a goal holds only 0 and 1
            raise TapeError(self._src, place, "a goal holds only 0 and 1")
        if key is not None and len(self._goal_cache) < GOAL_CACHE_SIZE:
            kept = arr.copy()
            kept.flags.writeable = False
            self._goal_cache[key] = kept
        return arr.copy()

    def _roles(self, value: Any, where: str, a: int) -> tuple[RoleTimeline, ...]:
        if value is None:
            return ()
        if not isinstance(value, list) or len(value) != a:
            raise TapeError(self._src, where, f"expected {a} role timelines")
        out: list[RoleTimeline] = []
        for k, timeline in enumerate(value):
            ok = isinstance(timeline, list) and all(
                isinstance(p, list)
                and len(p) == 2
                and isinstance(p[0], int)
                and not isinstance(p[0], bool)
                and p[0] >= 0
                and isinstance(p[1], str)
                for p in timeline
            )
            if not ok or [p[0] for p in timeline] != sorted(p[0] for p in timeline):
                raise TapeError(self._src, f"{where}[{k}]", "expected sorted [step, label] pairs")
            out.append(tuple((int(s), str(label)) for s, label in timeline))
        return tuple(out)


__all__ = ["Tape", "TapeError", "open_tape"]
