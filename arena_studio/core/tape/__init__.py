"""Tapes: the recording format simulators write and viewers, metrics and stats read.

::

    from arena_studio.core.tape import TapeWriter, open_tape, Tape, TapeError

The layout is described in :mod:`arena_studio.core.tape.format` and in DEVELOPERS.md.
"""

from __future__ import annotations

from arena_studio.core.tape.format import FORMAT_NAME, FORMAT_VERSION, TapeError
from arena_studio.core.tape.reader import Tape, open_tape
from arena_studio.core.tape.writer import TapeWriter, partial_path

__all__ = [
    "FORMAT_NAME",
    "FORMAT_VERSION",
    "Tape",
    "TapeError",
    "TapeWriter",
    "open_tape",
    "partial_path",
]
