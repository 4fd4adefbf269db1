"""``arena-studio export SCENE --format FMT -o OUT [--resolution R] [--clearance C]``: files
for simulators.

Formats: json / msgpack (the scene file itself, canonical form), npz (numpy arrays), wkt
(labelled OGC WKT lines), svg (vector drawing in millimetres), grid (occupancy .npy + PNG
preview + JSON sidecar). Exit 0 when written, 2 when the scene cannot be read, the
arguments are wrong or the output cannot be written.
"""

from __future__ import annotations

import argparse

from arena_studio.commands.arg_types import number
from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_UNREADABLE,
    error_line,
    read_scene,
    warning_line,
)
from arena_studio.commands.output_plan import add_force_argument, plan_outputs
from arena_studio.commands.progress import graph_bar, progress_bar
from arena_studio.core import limits as lim
from arena_studio.core.errors import ArenaError
from arena_studio.core.export import CAUTION, DEFAULT_RESOLUTION, FORMATS, export_scene
from arena_studio.core.outputs import export_outputs

HELP = "export a scene for a simulator or a document (json, msgpack, npz, wkt, svg, grid)"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("scene", metavar="SCENE", help="a .scene.json or .scene.msgpack file")
    parser.add_argument(
        "--format",
        "-f",
        required=True,
        choices=FORMATS,
        metavar="FMT",
        help=f"one of: {', '.join(FORMATS)}",
    )
    parser.add_argument(
        "-o",
        "--output",
        required=True,
        metavar="OUT",
        help="output file (grid: OUT.npy, OUT.png and OUT.json are written)",
    )
    parser.add_argument(
        "--resolution",
        type=number(lim.RESOLUTION),
        default=DEFAULT_RESOLUTION,
        metavar="R",
        help=f"grid cell size in metres (default {DEFAULT_RESOLUTION})",
    )
    parser.add_argument(
        "--clearance",
        type=number(lim.CLEARANCE),
        default=0.0,
        metavar="C",
        help="grid: a free cell's centre stays C metres from walls and obstacles, e.g. the "
        "robot radius (default 0)",
    )
    add_force_argument(parser)
    parser.add_argument("--quiet", action="store_true", help="no progress bar")


def run(args: argparse.Namespace) -> int:
    from arena_studio.core.geometry.visibility import PlanTooLarge  # lazy: shapely and scipy

    scene = read_scene(args.scene)  # a CommandError becomes one line in cli.main
    # every file (sidecars too) is checked before any is written
    plan_outputs(export_outputs(args.format, args.output), [args.scene], args.force)
    failures: list[str] = []
    try:
        total = 0
        if args.format == "npz":  # par times of every goal: the long part on big scenes
            from arena_studio.core.planning.goal_set import enumerate_goals

            total = len(enumerate_goals(scene))
        elif args.format == "grid":  # percent of the cells tested
            total = 100
        quiet = getattr(args, "quiet", False)
        with progress_bar(total, "export", quiet or not total) as bar, graph_bar(quiet):
            written = export_scene(
                scene,
                args.format,
                args.output,
                resolution=args.resolution,
                clearance=args.clearance,
                failures=failures,
                advance=bar.advance,
            )
    except KeyboardInterrupt:
        error_line(f"interrupted; {args.output} was not written")
        return 130
    except PlanTooLarge as exc:
        error_line(f"{args.scene}: {exc}")
        return EXIT_UNREADABLE
    except ArenaError as exc:
        error_line(str(exc))
        return EXIT_UNREADABLE
    except Exception as exc:  # an exporter bug must still end in one line, not a traceback
        error_line(f"{args.scene}: export failed ({type(exc).__name__}: {exc}); please report")
        return EXIT_UNREADABLE
    for message in failures:
        warning_line(f"{args.output}: {message}")
    for path in written:
        print(f"wrote {path}")
    print(f"scene content hash {scene.content_hash()}")
    print(f"note: {CAUTION}")
    return EXIT_OK
