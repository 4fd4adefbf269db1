"""``arena-studio rollout SCENE -o OUT.tape``: scripted preview episodes of a scene."""

from __future__ import annotations

import argparse
from pathlib import Path

from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_UNREADABLE,
    CommandError,
    error_line,
    read_scene,
)
from arena_studio.commands.progress import progress_bar
from arena_studio.core.errors import ArenaError

HELP = "record scripted preview episodes of a scene into a tape"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("scene", help="scene file (.scene.json or .scene.msgpack)")
    parser.add_argument("-o", "--output", required=True, metavar="OUT.tape", help="tape to write")
    parser.add_argument("--episodes", type=int, default=20, help="episodes to run (default 20)")
    parser.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    parser.add_argument(
        "--goals",
        choices=("shared", "independent", "greedy"),
        default="shared",
        help="shared: every agent gets the team goal and its share of the targets; "
        "independent: each draws its own goal; greedy: the team goal, but each agent heads "
        "for the target nearest to it without coordinating",
    )
    parser.add_argument(
        "--max-time",
        type=float,
        default=None,
        help="seconds per episode (default: twice the scene's longest par time + 10 s, >= 20 s)",
    )
    parser.add_argument(
        "--par-limit",
        default=None,
        metavar="LO,HI",
        help="draw each episode's time limit between LO and HI times its goal's par time "
        "(e.g. 0.6,1.5: some episodes run out of time)",
    )
    parser.add_argument("--dt", type=float, default=0.1, help="time step in seconds")
    parser.add_argument("--quiet", action="store_true", help="no progress bar")


def run(args: argparse.Namespace) -> int:
    try:
        if args.episodes < 1:
            raise CommandError("--episodes: expected a whole number >= 1")
        if not args.dt > 0 or (
            args.max_time is not None and (not args.max_time > 0 or args.dt > args.max_time)
        ):
            raise CommandError("--max-time and --dt must be > 0, with --dt <= --max-time")
        par_limit = _par_limit(args.par_limit)
        out = Path(args.output)
        if not out.parent.is_dir():
            raise CommandError(f"{args.output}: folder does not exist")
        scene = read_scene(args.scene)
        from arena_studio.core.sim.rollout import run_rollout

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
                par_limit=par_limit,
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


def _par_limit(text: str | None) -> tuple[float, float] | None:
    if text is None:
        return None
    parts = text.split(",")
    try:
        lo, hi = (float(v) for v in parts)
    except ValueError:
        raise CommandError(f"--par-limit {text!r}: expected two numbers LO,HI") from None
    if not (0 < lo <= hi and hi < 1e6):
        raise CommandError(f"--par-limit {text!r}: expected 0 < LO <= HI")
    return lo, hi
