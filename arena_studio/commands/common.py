"""Helpers shared by the batch commands: one-line errors and scene loading."""

from __future__ import annotations

import contextlib
import sys
from pathlib import Path

from arena_studio.core.errors import ArenaError
from arena_studio.core.outputs import path_kind
from arena_studio.core.scene.fields import cap_text
from arena_studio.core.scene.model import Scene, load_scene

EXIT_OK = 0
EXIT_PROBLEMS = 1
EXIT_UNREADABLE = 2


class CommandError(Exception):
    """A failure to report as one line on stderr with an exit code."""

    def __init__(self, message: str, code: int = EXIT_UNREADABLE) -> None:
        super().__init__(message)
        self.code = code


#: Longest message printed; a longer one (a huge refused value) is cut, its length stated.
MAX_MESSAGE = 1000


def _say(kind: str, message: str) -> None:
    with contextlib.suppress(OSError, ValueError):  # stderr closed or full: nowhere to say it
        print(f"arena-studio: {kind}: {cap_text(message, MAX_MESSAGE)}", file=sys.stderr)


def error_line(message: str) -> None:
    """One line on stderr, at most :data:`MAX_MESSAGE` characters."""
    _say("error", message)


def warning_line(message: str) -> None:
    _say("warning", message)


def input_problem(path: str | Path, expected: str = "a file") -> str | None:
    """Why ``path`` cannot be read as an input file, naming what is there truthfully
    (missing, a folder, a pipe, a device), or None for a regular file."""
    kind = path_kind(Path(path))
    if kind == "a file":
        return None
    if kind == "missing":
        return f"{path}: no such file"
    return f"{path}: is {kind}, expected {expected}" if kind.startswith("a") else f"{path}: {kind}"


def read_scene(path: str) -> Scene:
    """Load a scene or raise CommandError with the file and field named.

    Folders, pipes, devices and files over the size bound are refused by name
    (:mod:`arena_studio.core.safe_open`) before anything is read.
    """
    try:
        return load_scene(Path(path))
    except ArenaError as exc:
        raise CommandError(str(exc)) from None
