"""The command side of :mod:`arena_studio.core.outputs`: check every output, or refuse.

Every writing command calls :func:`plan_outputs` with all the files it will write (sidecars
included) and its inputs before it writes anything; a clash becomes one line and exit 2.
The app's dialogs use :mod:`arena_studio.core.outputs` directly and ask instead of
refusing.
"""

from __future__ import annotations

import argparse
from collections.abc import Sequence
from pathlib import Path

from arena_studio.commands.common import EXIT_UNREADABLE, CommandError, warning_line
from arena_studio.core.outputs import Output, OutputClash, prepare_outputs


def add_force_argument(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--force",
        action="store_true",
        help="replace existing files that are not earlier outputs of this command "
        "(never an input of the command)",
    )


def plan_outputs(
    outputs: Sequence[Output], inputs: Sequence[str | Path], force: bool = False
) -> list[Path]:
    """Check all outputs against the inputs and existing files, clean stale temporaries;
    returns the files that will be replaced. Raises :class:`CommandError` on a clash."""
    try:
        return prepare_outputs(outputs, inputs, force)
    except OutputClash as exc:
        raise CommandError(str(exc), EXIT_UNREADABLE) from None


def keep_earlier_partial(out: Path) -> Path | None:
    """Move an earlier run's recoverable ``OUT.partial`` aside (never truncated) and say so."""
    from arena_studio.core.tape.writer import partial_path, set_aside_partial

    try:
        aside = set_aside_partial(out)
    except OSError as exc:
        raise CommandError(
            f"{partial_path(out)}: holds episodes of an earlier run and cannot be moved aside "
            f"({exc.strerror or exc}); move it yourself or choose another output name"
        ) from None
    if aside is not None:
        warning_line(
            f"{partial_path(out)}: an earlier run left recoverable episodes; kept them as {aside}"
        )
    return aside


__all__ = ["add_force_argument", "keep_earlier_partial", "plan_outputs"]
