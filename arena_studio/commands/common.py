"""Helpers shared by the batch commands: one-line errors and scene loading."""

from __future__ import annotations

import sys
from pathlib import Path

from arena_studio.core.errors import ArenaError
from arena_studio.core.scene.model import Scene, load_scene

EXIT_OK = 0
EXIT_PROBLEMS = 1
EXIT_UNREADABLE = 2


class CommandError(Exception):
    """A failure to report as one line on stderr with an exit code."""

    def __init__(self, message: str, code: int = EXIT_UNREADABLE) -> None:
        super().__init__(message)
        self.code = code


def error_line(message: str) -> None:
    print(f"arena-studio: error: {message}", file=sys.stderr)


def warning_line(message: str) -> None:
    print(f"arena-studio: warning: {message}", file=sys.stderr)


def read_scene(path: str) -> Scene:
    """Load a scene or raise CommandError with the file and field named.

    Folders, pipes, devices and files over the size bound are refused by name
    (:mod:`arena_studio.core.safe_open`) before anything is read.
    """
    try:
        return load_scene(Path(path))
    except ArenaError as exc:
        raise CommandError(str(exc)) from None
