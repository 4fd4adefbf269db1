"""``arena-studio import csv|npz|bag IN --scene SCENE -o OUT.tape``: tapes from other files.

``import map MAP.yaml -o OUT.scene.json`` traces a building map into a scene
(:mod:`.import_robot`).
"""

from __future__ import annotations

import argparse
import os
from pathlib import Path

from arena_studio.commands import import_robot
from arena_studio.commands.arg_types import number
from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_UNREADABLE,
    CommandError,
    error_line,
    read_scene,
    warning_line,
)
from arena_studio.commands.output_plan import add_force_argument, keep_earlier_partial, plan_outputs
from arena_studio.commands.progress import progress_bar
from arena_studio.core import limits as lim
from arena_studio.core.errors import ArenaError
from arena_studio.core.outputs import tape_outputs
from arena_studio.core.safe_open import check_input

HELP = "convert a CSV table, an NPZ array file or ROS 2 bags into a tape, or a map into a scene"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("kind", choices=("csv", "npz", "bag", "map"), help="input kind")
    parser.add_argument("input", metavar="IN", help="the CSV, NPZ, bag or map YAML file")
    parser.add_argument("--scene", help="the scene the episodes were run in (not for map)")
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
    add_force_argument(parser)
    parser.add_argument(
        "--skip-bad",
        action="store_true",
        help="leave out bad rows (CSV) or episodes (NPZ), say which, and import the rest",
    )
    import_robot.add_arguments(parser)


#: skipped rows or episodes named in full in the warning line; the rest are counted
WARN_NAMED = 3


def run(args: argparse.Namespace) -> int:
    if args.kind in ("map", "bag"):
        return import_robot.run(args)
    if args.more or args.scene is None:
        error_line("extra input files" if args.more else "--scene: required for csv and npz")
        return EXIT_UNREADABLE
    from arena_studio.core.tape.importers import import_csv, import_npz, parse_columns

    skipped: list[str] | None = [] if args.skip_bad else None
    try:
        src = Path(args.input)
        check_input(src, args.kind)  # a folder, pipe or device is refused by name
        if not Path(args.output).parent.is_dir():
            raise CommandError(f"{args.output}: folder does not exist")
        scene = read_scene(args.scene)
        plan_outputs(tape_outputs(args.output), [args.input, args.scene], args.force)
        keep_earlier_partial(Path(args.output))
        if args.kind == "csv":
            columns = parse_columns(args.columns)
            total = max(1, os.path.getsize(src))  # bytes; the importer reports bytes read
            with progress_bar(total, "import", args.quiet) as bar:
                count = import_csv(
                    src,
                    scene,
                    args.output,
                    dt=0.1 if args.dt is None else args.dt,
                    columns=columns,
                    advance=bar.advance,
                    skipped=skipped,
                )
        else:
            if args.columns:
                raise CommandError("--columns applies to CSV input only")
            with progress_bar(1, "import", args.quiet) as bar:
                count = import_npz(
                    src, scene, args.output, dt=args.dt, advance=bar.advance, skipped=skipped
                )
    except CommandError as exc:
        error_line(str(exc))
        return exc.code
    except ArenaError as exc:
        hint = "" if args.skip_bad else "; --skip-bad imports the rest"
        row_level = ": line " in str(exc) or ": episode " in str(exc)
        error_line(str(exc) + (hint if row_level else ""))
        return EXIT_UNREADABLE
    except KeyboardInterrupt:
        error_line(f"interrupted; {args.output} was not written")
        return 130
    if skipped:
        named = "; ".join(skipped[:WARN_NAMED])
        more = f"; and {len(skipped) - WARN_NAMED} more" if len(skipped) > WARN_NAMED else ""
        episodes = sum(t.endswith("episode left out") for t in skipped)
        rows = len(skipped) - episodes
        what = " and ".join(
            part
            for part in (
                f"{rows} bad row(s)" if rows else "",
                f"{episodes} episode(s)" if episodes else "",
            )
            if part
        )
        warning_line(f"{args.input}: left out {what}: {named}{more}")
    print(f"{args.output}: {count} episode(s) imported")
    return EXIT_OK
