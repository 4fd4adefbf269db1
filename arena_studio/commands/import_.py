"""``arena-studio import csv|npz IN --scene SCENE -o OUT.tape``: tapes from other files."""

from __future__ import annotations

import argparse
import os
from pathlib import Path

from arena_studio.commands.arg_types import number
from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_UNREADABLE,
    CommandError,
    error_line,
    read_scene,
)
from arena_studio.commands.progress import progress_bar
from arena_studio.core import limits as lim
from arena_studio.core.errors import ArenaError
from arena_studio.core.safe_open import check_input

HELP = "convert a long-format CSV table or an NPZ array file into a tape"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("kind", choices=("csv", "npz"), help="input kind")
    parser.add_argument("input", metavar="IN", help="the CSV or NPZ file")
    parser.add_argument("--scene", required=True, help="the scene the episodes were run in")
    parser.add_argument("-o", "--output", required=True, metavar="OUT.tape", help="tape to write")
    parser.add_argument(
        "--dt", type=number(lim.DT), default=None, help="time step in seconds (0.1)"
    )
    parser.add_argument(
        "--columns",
        default=None,
        metavar="MAP",
        help="CSV column names, e.g. 'x=pos_x,y=pos_y' (ours=theirs)",
    )
    parser.add_argument("--quiet", action="store_true", help="no progress bar")


def run(args: argparse.Namespace) -> int:
    from arena_studio.core.tape.importers import import_csv, import_npz, parse_columns

    try:
        src = Path(args.input)
        check_input(src, args.kind)  # a folder, pipe or device is refused by name
        if not Path(args.output).parent.is_dir():
            raise CommandError(f"{args.output}: folder does not exist")
        scene = read_scene(args.scene)
        if args.kind == "csv":
            columns = parse_columns(args.columns)
            total = max(1, os.path.getsize(src) // 40)  # rough rows, for the bar only
            with progress_bar(total, "import", args.quiet) as bar:
                count = import_csv(
                    src,
                    scene,
                    args.output,
                    dt=0.1 if args.dt is None else args.dt,
                    columns=columns,
                    advance=bar.advance,
                )
        else:
            if args.columns:
                raise CommandError("--columns applies to CSV input only")
            with progress_bar(1, "import", args.quiet) as bar:
                count = import_npz(src, scene, args.output, dt=args.dt, advance=bar.advance)
    except CommandError as exc:
        error_line(str(exc))
        return exc.code
    except ArenaError as exc:
        error_line(str(exc))
        return EXIT_UNREADABLE
    except KeyboardInterrupt:
        error_line(f"interrupted; {args.output} was not written")
        return 130
    print(f"{args.output}: {count} episode(s) imported")
    return EXIT_OK
