"""``arena-studio rollout SCENE -o OUT.tape``: scripted preview episodes of a scene."""

from __future__ import annotations

import argparse
from pathlib import Path

from ..core.errors import ArenaError
from .common import EXIT_OK, EXIT_UNREADABLE, CommandError, error_line, read_scene
from .progress import progress_bar

HELP = "record scripted preview episodes of a scene into a tape"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("scene", help="scene file (.scene.json or .scene.msgpack)")
    parser.add_argument("-o", "--output", required=True, metavar="OUT.tape", help="tape to write")
    parser.add_argument("--episodes", type=int, default=20, help="episodes to run (default 20)")
    parser.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    parser.add_argument(
        "--goals",
        choices=("shared", "independent"),
        default="shared",
        help="shared: every agent gets the team goal; independent: each draws its own",
    )
    parser.add_argument("--max-time", type=float, default=60.0, help="seconds per episode")
    parser.add_argument("--dt", type=float, default=0.1, help="time step in seconds")
    parser.add_argument("--quiet", action="store_true", help="no progress bar")


def run(args: argparse.Namespace) -> int:
    try:
        if args.episodes < 1:
            raise CommandError("--episodes: expected a whole number >= 1")
        if not args.max_time > 0 or not args.dt > 0 or args.dt > args.max_time:
            raise CommandError("--max-time and --dt must be > 0, with --dt <= --max-time")
        out = Path(args.output)
        if not out.parent.is_dir():
            raise CommandError(f"{args.output}: folder does not exist")
        scene = read_scene(args.scene)
        from ..core.rollout import run_rollout

        with progress_bar(args.episodes, "rollout", args.quiet) as bar:
            run_rollout(
                scene,
                out,
                episodes=args.episodes,
                seed=args.seed,
                mode=args.goals,
                max_time=args.max_time,
                dt=args.dt,
                advance=bar.advance,
            )
    except CommandError as exc:
        error_line(str(exc))
        return exc.code
    except (ArenaError, ValueError) as exc:
        error_line(f"{args.scene}: {exc}")
        return EXIT_UNREADABLE
    except KeyboardInterrupt:
        error_line(f"interrupted; {args.output} was not written")
        return 130
    return EXIT_OK
