"""Reading tapes lazily: ``open_tape`` reads the header and index, ``episode(i)`` one episode.

The header is read by ``_header.py``, the index and the recovery scan are in ``_index.py``,
the decoding of one episode's records in ``_decode.py``; this module keeps the lazy file
access, the spans of several episodes and the damage found so far.

A cut or damaged tape (no trailer, half a record at the end, a bad checksum) is scanned record
by record instead: every complete chunk is recovered, ``truncated`` is True and
``recovery_message`` says what was recovered and where the file was cut. Anything else that
is wrong (not a tape, a newer version, a field with the wrong dtype or shape) raises
:class:`TapeError` naming the file and the place.
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any, cast

import numpy as np

from arena_studio.core.safe_open import InputFileError, open_input
from arena_studio.core.tape._decode import EpisodeDecoder, chunk_number
from arena_studio.core.tape._header import read_header
from arena_studio.core.tape._index import Entry, read_index, scan_records
from arena_studio.core.tape.damage import Damage, EpisodeDamaged
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape.format import (
    PARALLEL_CRC_BYTES,
    TapeError,
    finish_crc_checks,
    first_bad_in_ranges,
    start_crc_checks,
)

_BYTE_AT = re.compile(r"byte (\d+)")


@dataclass(frozen=True)
class EpisodeSpan:
    """Raw bytes of consecutive episodes, from :meth:`Tape.read_span`."""

    start: int
    entries: list[Entry]
    data: memoryview


def open_tape(path: str | Path) -> Tape:
    """Open a tape lazily (header and index only); see :class:`Tape`."""
    return Tape(Path(path))


class Tape:
    """A recorded tape: header values, and episodes decoded on demand."""

    def __init__(self, path: Path) -> None:
        self.path = path
        self._src = str(path)
        self._goal_cache: dict[bytes, np.ndarray] = {}
        #: episodes found damaged so far (while scanning, or when they were decoded)
        self.damage: dict[int, Damage] = {}
        self._damage_text: dict[int, tuple[str, str]] = {}  # (where, problem) as first reported
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

    def to_table(self, episodes: list[int] | None = None) -> Any:
        """Every step of every agent as an Apache Arrow table in long form (needs pyarrow);
        columns in :mod:`arena_studio.core.tape.tables`."""
        from arena_studio.core.tape.tables import to_table

        return to_table(self, episodes)

    @property
    def total_steps(self) -> int:
        return sum(e.steps for e in self._entries)

    def episode(self, i: int, *, verify: bool = True) -> Episode:
        """Decode episode ``i``; ``verify`` checks each record's CRC-32."""
        i = self._check_index(i)
        self._raise_known(i)
        entry = self._entries[i]
        span = self._read_span(entry.begin, entry.end, f"episode {i}")
        return self._decode_checked(i, entry, span, verify, True)

    def check_episode(self, i: int) -> Damage | None:
        """Decode episode ``i`` with checksums; its :class:`Damage` record, or None when sound."""
        try:
            self.episode(i)
        except EpisodeDamaged as exc:
            return exc.damage
        return None

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
        for k in range(start, stop):
            self._raise_known(k)
        if verify:
            found = first_bad_in_ranges(span, [(e.begin - lo, e.end - lo) for e in entries])
            if found is not None:
                k, bad = found
                e = entries[k]
                self._damaged(start + k, span[e.begin - lo : e.end - lo], e.begin, lo + bad)
        return EpisodeSpan(start, entries, span)

    def decode_span(self, span: EpisodeSpan, *, copy: bool = True) -> list[Episode]:
        """Decode the episodes of a :meth:`read_span` (checksums were checked there)."""
        if not span.entries:
            return []
        lo = span.entries[0].begin
        return [
            self._decode_checked(
                span.start + k, e, span.data[e.begin - lo : e.end - lo], False, copy
            )
            for k, e in enumerate(span.entries)
        ]

    # -- damage ----------------------------------------------------------------------------
    def _decode_checked(
        self, i: int, entry: Entry, buf: memoryview, verify: bool, copy: bool
    ) -> Episode:
        """:meth:`_decode_episode`, with anything wrong inside the episode turned into a
        :class:`Damage` record (remembered) and raised as :class:`EpisodeDamaged`."""
        try:
            return self._decode_episode(i, entry, buf, verify, copy)
        except EpisodeDamaged as exc:
            self._remember(exc)
            raise
        except TapeError as exc:
            prefix = f"episode {i}"
            rest = exc.where[len(prefix) :] if exc.where.startswith(prefix) else exc.where
            field = rest.rpartition(".")[2] if "." in rest else ""
            reason = f"{field}: {exc.problem}" if field else exc.problem
            found = _BYTE_AT.search(rest)
            byte = int(found.group(1)) if found else None
            chunk = chunk_number(buf, entry.begin, byte)
            damage = Damage(i, reason, chunk=chunk, byte=byte)
            found_here = EpisodeDamaged(self._src, damage, exc.where, exc.problem)
            raise self._remember(found_here) from None

    def _damaged(self, i: int, buf: memoryview, begin: int, byte: int) -> None:
        """Record and raise a checksum mismatch at file offset ``byte`` of episode ``i``."""
        damage = Damage(
            i,
            "record checksum mismatch (damaged bytes)",
            chunk=chunk_number(buf, begin, byte),
            byte=byte,
        )
        raise self._remember(EpisodeDamaged(self._src, damage))

    def _remember(self, exc: EpisodeDamaged) -> EpisodeDamaged:
        self.damage[exc.damage.episode] = exc.damage
        self._damage_text[exc.damage.episode] = (exc.where, exc.problem)
        return exc

    def _raise_known(self, i: int) -> None:
        """Raise the damage already found in episode ``i`` again, in the same words."""
        known = self.damage.get(i)
        if known is not None:
            where, problem = self._damage_text.get(i, (None, None))
            raise EpisodeDamaged(self._src, known, where, problem)

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

    # -- header, index, recovery scan (see _header.py and _index.py) ------------------------
    def _read_header(self, f: Any) -> None:
        header = read_header(f, self._src, self.file_size)
        self.header_end = header.header_end
        self.version = header.version
        self.dt = header.dt
        self.scene = header.scene
        self.agent_ids = header.agent_ids
        self.metadata: dict[str, Any] = header.metadata
        self.scene_hash: str | None = header.scene_hash
        #: True when the stored hash matches the embedded scene, None when none is stored
        self.scene_hash_ok: bool | None = header.scene_hash_ok
        #: one line for users when the stored hash is wrong, else None
        self.scene_hash_warning: str | None = header.scene_hash_warning
        self._decoder = EpisodeDecoder(
            self._src, self.dt, len(self.agent_ids), len(self.scene.landmarks)
        )

    def _read_index(self, f: Any) -> list[Entry] | None:
        """Entries from the trailer's index, or None when the tape must be scanned."""
        entries, problem = read_index(
            f, self._src, self.file_size, self.header_end, len(self.agent_ids)
        )
        #: why a finished-looking tape's index was not used (the scan's message says it)
        self._index_problem = problem
        return entries

    def _scan(self) -> tuple[list[Entry], str]:
        """Walk the records after the header; stop at the first cut or damaged one."""
        with open(self.path, "rb") as f:
            return scan_records(
                f, self._src, self.file_size, self.header_end, self._index_problem, self.damage
            )

    # -- decoding ---------------------------------------------------------------------------
    def _check_index(self, i: int) -> int:
        if isinstance(i, bool) or not isinstance(i, int | np.integer) or not 0 <= i < len(self):
            raise IndexError(f"{self._src}: no episode {i} (the tape has {len(self)})")
        return int(i)

    def _decode_episode(
        self, i: int, entry: Entry, buf: memoryview, verify: bool, copy: bool = True
    ) -> Episode:
        if not verify or len(buf) < PARALLEL_CRC_BYTES:
            return self._decoder.decode_records(i, entry, buf, verify, copy)
        # large spans: checksums run on worker threads (zlib releases the GIL) while the
        # records are decoded here; all are checked before anything is returned, and damage
        # is reported as such even when it also broke the decoding
        checks = start_crc_checks(buf)
        try:
            episode = self._decoder.decode_records(i, entry, buf, False, copy)
        except TapeError:
            self._raise_if_damaged(i, entry, buf, finish_crc_checks(checks))
            raise
        self._raise_if_damaged(i, entry, buf, finish_crc_checks(checks))
        return episode

    def _raise_if_damaged(self, i: int, entry: Entry, buf: memoryview, bad: int | None) -> None:
        if bad is not None:
            self._damaged(i, buf, entry.begin, entry.begin + bad)


__all__ = ["Damage", "EpisodeDamaged", "Tape", "TapeError", "open_tape"]
