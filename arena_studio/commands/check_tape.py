"""``arena-studio check RUN.tape``: the recording checks, in the scene checker's format."""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_PROBLEMS,
    EXIT_UNREADABLE,
    CommandError,
    error_line,
    read_scene,
)
from arena_studio.commands.progress import progress_bar
from arena_studio.core.errors import ArenaError

TAPE_MAGIC = b"\x89ASTAPE\n"


def is_tape(path: str) -> bool:
    """A tape by name (``.tape``, ``.tape.partial``) or by its first bytes."""
    if path.endswith((".tape", ".tape.partial")):
        return True
    try:
        with open(path, "rb") as f:
            return f.read(len(TAPE_MAGIC)) == TAPE_MAGIC
    except OSError:
        return False


def run_tape(args: argparse.Namespace, report: Callable[[str, list[Any]], str]) -> int:
    from arena_studio.core.tape import open_tape
    from arena_studio.core.tape_checks import check_tape

    if not Path(args.scene).exists():
        raise CommandError(f"{args.scene}: no such file")
    try:
        tape = open_tape(args.scene)
    except (ArenaError, OSError) as exc:
        raise CommandError(str(exc)) from None
    scene = read_scene(args.against) if args.against else None
    try:
        with progress_bar(len(tape), "check", args.quiet) as bar:
            findings = check_tape(tape, scene, advance=bar.advance)
    except KeyboardInterrupt:
        error_line("interrupted")
        return 130
    except Exception as exc:  # a checker bug must still end in one line, not a traceback
        error_line(f"{args.scene}: the checker failed ({type(exc).__name__}: {exc}); please report")
        return EXIT_UNREADABLE
    if args.json:
        doc = {"findings": [f.to_dict() for f in findings], "truncated": tape.truncated}
        json.dump(doc, sys.stdout, indent=2)
        sys.stdout.write("\n")
    else:
        if tape.truncated and tape.recovery_message:
            sys.stdout.write(f"note: {tape.recovery_message}\n")
        sys.stdout.write(report(args.scene, findings))
    return EXIT_PROBLEMS if any(f.severity == "error" for f in findings) else EXIT_OK
