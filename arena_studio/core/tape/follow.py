"""Following a tape while it is written: new episodes as the writer finishes them.

::

    tape = follow_tape("runs/train.tape")      # the .partial while training runs
    while tape.recording:
        for i in tape.poll():                  # indices of newly finished episodes
            print(i, tape.episode(i).steps)
        time.sleep(1.0)

:class:`GrowingTape` is a :class:`~arena_studio.core.tape.reader.Tape` whose episode list
grows. It opens with no episodes listed; each ``poll()`` reads the records written since the last
call, from where it stopped; a
record the writer has only half written is left for the next poll (never an error), and the
unfinished episode is not listed (``open_steps`` says how far it got). When the writer
closes, ``NAME.tape.partial`` becomes ``NAME.tape``: the follower moves to it, reads the rest
and sets ``finished``. Damage (a bad checksum, a record out of place) stops following with
``problem`` set; ``poll()`` itself never raises.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from arena_studio.core.tape._index import Entry, frame_at
from arena_studio.core.tape.format import (
    KIND_BEGIN,
    KIND_CHUNK,
    KIND_END,
    KIND_INDEX,
    TapeError,
    unpack,
)
from arena_studio.core.tape.reader import Tape
from arena_studio.core.tape.writer import partial_path

PARTIAL_SUFFIX = ".partial"


def final_path(path: str | Path) -> Path:
    """``NAME.tape`` for ``NAME.tape.partial`` (and the path itself otherwise)."""
    p = Path(path)
    return p.with_name(p.name[: -len(PARTIAL_SUFFIX)]) if p.name.endswith(PARTIAL_SUFFIX) else p


def follow_tape(path: str | Path) -> GrowingTape:
    """Follow ``NAME.tape`` or ``NAME.tape.partial``, whichever exists now.

    Raises :class:`TapeError` when neither holds a readable tape header yet (a writer that
    has just started: try again a moment later).
    """
    final = final_path(path)
    part = partial_path(final)
    for candidate in (part, final) if not final.exists() else (final,):
        if candidate.exists():
            return GrowingTape(candidate)
    raise TapeError(str(path), "", "no such file (neither the tape nor its .partial)")


class GrowingTape(Tape):
    """A tape still being written; see the module docstring."""

    def __init__(self, path: Path) -> None:
        self.path = Path(path)
        self._src = str(self.path)
        self.damage = {}  # episode -> Damage, as Tape keeps it
        self._entries: list[Entry] = []
        self.final = final_path(self.path)
        try:
            self.file_size = os.path.getsize(self.path)
            with open(self.path, "rb") as f:
                self._read_header(f)
        except OSError as exc:
            raise TapeError(self._src, "", f"cannot read: {exc.strerror or exc}") from None
        self._pos = self.header_end
        self._open_begin: int | None = None
        #: steps written so far of the episode the writer is recording now
        self.open_steps = 0
        #: True once the writer has closed the tape (everything is read)
        self.finished = False
        #: why following stopped early (damage, the file vanished), or None
        self.problem: str | None = None
        self.truncated = True
        self.recovery_message: str | None = None
        self._describe()

    @property
    def recording(self) -> bool:
        """True while the writer may still add episodes."""
        return not self.finished and self.problem is None

    def poll(self) -> list[int]:
        """Read what was written since the last call; the indices of newly finished episodes."""
        if not self.recording:
            return []
        before = len(self._entries)
        try:
            self._follow_rename()
            if self.recording:
                self._read_more()
        except OSError as exc:  # renamed between two reads: the next poll finds it
            if not (self.path.exists() or self.final.exists()):
                self._stop(f"cannot read: {exc.strerror or exc}")
        self._describe()
        return list(range(before, len(self._entries)))

    def _follow_rename(self) -> None:
        if self.path.exists():
            return
        if self.path != self.final and self.final.exists():
            self.path = self.final  # the writer closed: same bytes plus index and trailer
            self._src = str(self.path)
            return
        self._stop("the file was removed before the writer finished")

    def _read_more(self) -> None:
        size = os.path.getsize(self.path)
        self.file_size = size
        with open(self.path, "rb") as f:
            while self._pos < size:
                try:
                    kind, payload, end = frame_at(f, self._pos, size)
                except EOFError:
                    return  # half written: the rest comes with the next poll
                except ValueError as exc:
                    self._stop(f"damaged record at byte {self._pos} ({exc})")
                    return
                try:
                    record = unpack(payload)
                except Exception as exc:  # msgpack raises several unrelated types
                    self._stop(f"damaged record at byte {self._pos} ({exc})")
                    return
                if not self._take(kind, record, end):
                    return
                self._pos = end

    def _take(self, kind: int, record: Any, end: int) -> bool:
        """Account for one complete record; False when following must stop."""
        if not isinstance(record, dict):
            self._stop(f"record at byte {self._pos} is not a map")
            return False
        if kind == KIND_BEGIN and record.get("episode") == len(self._entries):
            self._open_begin, self.open_steps = self._pos, 0
        elif kind == KIND_CHUNK and self._open_begin is not None:
            steps = record.get("steps")
            if record.get("start") != self.open_steps or not isinstance(steps, int) or steps < 1:
                self._stop(f"chunk out of sequence at byte {self._pos}")
                return False
            self.open_steps += steps
        elif kind == KIND_END and self._open_begin is not None:
            if self.open_steps:
                self._entries.append(Entry(self._open_begin, end, self.open_steps, True))
            self._open_begin, self.open_steps = None, 0
        elif kind == KIND_INDEX:
            self.finished = True
            self.truncated = False
            return False
        else:
            self._stop(f"record out of place at byte {self._pos}")
            return False
        return True

    def _stop(self, problem: str) -> None:
        self.problem = f"{self._src}: {problem}"

    def _describe(self) -> None:
        if self.finished:
            self.recovery_message = None
        elif self.problem is not None:
            self.recovery_message = f"{self.problem}; kept {len(self)} finished episode(s)"
        else:
            self.recovery_message = (
                f"{self._src}: still being written: {len(self)} finished episode(s)"
            )

    def _read_span(self, begin: int, end: int, where: str) -> memoryview:
        """As for a finished tape, but across the writer's rename of the file."""
        try:
            return super()._read_span(begin, end, where)
        except TapeError:
            if self.path != self.final and self.final.exists():
                self.path, self._src = self.final, str(self.final)
                return super()._read_span(begin, end, where)
            raise

    def __repr__(self) -> str:
        state = "finished" if self.finished else "recording" if self.recording else "stopped"
        return f"GrowingTape({self._src!r}, {len(self)} episodes, {state})"


__all__ = ["GrowingTape", "final_path", "follow_tape"]
