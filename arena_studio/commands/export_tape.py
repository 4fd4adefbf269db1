"""``arena-studio export-tape TAPE --format parquet|csv|npz -o OUT``: a tape as a table.

One row per episode, step and agent (columns in README.md and
:mod:`arena_studio.core.tape.tables`). Written atomically: a cancel or an error leaves
nothing under ``OUT``. Exit 0 written, 2 unreadable tape, bad arguments or unwritable output.
"""

from __future__ import annotations

import argparse
from pathlib import Path

from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_UNREADABLE,
    CommandError,
    error_line,
    warning_line,
)
from arena_studio.commands.progress import progress_bar
from arena_studio.core.errors import ArenaError

HELP = "write a tape as a table (one row per episode, step and agent): parquet, csv or npz"
FORMATS = ("parquet", "csv", "npz")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("tape", metavar="TAPE", help="a .tape file (or a .tape.partial)")
    parser.add_argument(
        "--format",
        "-f",
        choices=FORMATS,
        default=None,
        metavar="FMT",
        help="parquet, csv or npz (default: from the name of OUT)",
    )
    parser.add_argument("-o", "--output", required=True, metavar="OUT", help="file to write")
    parser.add_argument(
        "--episode",
        type=int,
        action="append",
        default=None,
        metavar="N",
        help="only episode N (repeat for several)",
    )
    parser.add_argument("--quiet", action="store_true", help="no progress bar")


def _format(args: argparse.Namespace) -> str:
    if args.format is not None:
        return str(args.format)
    suffix = Path(args.output).suffix.lower().lstrip(".")
    if suffix in FORMATS:
        return suffix
    raise CommandError(f"{args.output}: say --format parquet, csv or npz (unknown file ending)")


def run(args: argparse.Namespace) -> int:
    from arena_studio.core.tape import open_tape
    from arena_studio.core.tape.table_files import export_table

    fmt = _format(args)
    out = Path(args.output)
    if not out.parent.is_dir():
        raise CommandError(f"{args.output}: folder does not exist")
    try:
        tape = open_tape(args.tape)
    except FileNotFoundError:
        raise CommandError(f"{args.tape}: no such file") from None
    except (ArenaError, OSError) as exc:
        raise CommandError(str(exc)) from None
    if tape.truncated:
        warning_line(tape.recovery_message or f"{args.tape}: tape is incomplete")
    indices = args.episode
    if indices is not None:
        bad = [i for i in indices if not 0 <= i < len(tape)]
        if bad:
            raise CommandError(f"--episode {bad[0]}: the tape has episodes 0..{len(tape) - 1}")
    total = len(tape) if indices is None else len(indices)
    try:
        with progress_bar(total, "export-tape", args.quiet) as bar:
            rows = export_table(tape, fmt, out, indices, advance=bar.advance)
    except ArenaError as exc:
        error_line(str(exc))
        return EXIT_UNREADABLE
    except OSError as exc:
        error_line(f"{args.output}: cannot write ({exc.strerror or exc})")
        return EXIT_UNREADABLE
    except KeyboardInterrupt:
        error_line(f"interrupted; {args.output} was not written")
        return 130
    print(f"wrote {out}: {rows} rows ({total} episode(s) x steps x agents)")
    return EXIT_OK
