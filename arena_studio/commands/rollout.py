"""``arena-studio rollout SCENE -o OUT.tape``: scripted preview episodes of a scene."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import TYPE_CHECKING

from arena_studio.commands.arg_types import number
from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_UNREADABLE,
    CommandError,
    error_line,
    read_scene,
)
from arena_studio.commands.output_plan import add_force_argument, keep_earlier_partial, plan_outputs
from arena_studio.commands.progress import graph_bar, progress_bar
from arena_studio.core import limits as lim
from arena_studio.core.errors import ArenaError
from arena_studio.core.outputs import tape_outputs

if TYPE_CHECKING:
    from arena_studio.core.scene.model import Scene
    from arena_studio.core.sim.rollout import MessageOptions

HELP = "record scripted preview episodes of a scene into a tape"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("scene", help="scene file (.scene.json or .scene.msgpack)")
    parser.add_argument("-o", "--output", required=True, metavar="OUT.tape", help="tape to write")
    parser.add_argument(
        "--episodes", type=number(lim.EPISODES), default=20, help="episodes to run (default 20)"
    )
    parser.add_argument("--seed", type=number(lim.SEED), default=0, help="random seed (default 0)")
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
        type=number(lim.MAX_TIME),
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
    parser.add_argument(
        "--announce",
        default=None,
        metavar="AGENT",
        help="AGENT pursues the team goal and announces it before each episode as a code "
        "word (goal table index + 10); the others may adopt it (see --word-error, --adopt)",
    )
    parser.add_argument(
        "--word-error",
        type=number(lim.SHARE),
        default=0.0,
        metavar="RATE",
        help="with --announce: share of announcements with a wrong word (default 0)",
    )
    parser.add_argument(
        "--adopt",
        type=number(lim.SHARE),
        default=1.0,
        metavar="P",
        help="with --announce: probability that each other agent takes the announced goal "
        "instead of its own draw (default 1)",
    )
    parser.add_argument(
        "--goal-pool",
        type=int,
        default=None,
        metavar="N",
        help="team goals cycle through N cooperative goals drawn once (with --par-limit: "
        "successes and failures of the same goal)",
    )
    parser.add_argument(
        "--every-other",
        choices=("shared", "independent", "greedy"),
        default=None,
        help="odd-numbered episodes use this goal mode instead (with --goal-pool of an odd "
        "size every pooled goal is seen in both modes)",
    )
    parser.add_argument("--dt", type=number(lim.DT), default=0.1, help="time step in seconds")
    parser.add_argument("--quiet", action="store_true", help="no progress bar")
    add_force_argument(parser)


def run(args: argparse.Namespace) -> int:
    try:
        _check_steps(args.max_time, args.dt)
        par_limit = _par_limit(args.par_limit)
        if args.goal_pool is not None and not 1 <= args.goal_pool <= 1000:
            raise CommandError(f"--goal-pool {args.goal_pool}: expected 1 to 1000 goals")
        out = Path(args.output)
        if not out.parent.is_dir():
            raise CommandError(f"{args.output}: folder does not exist")
        scene = read_scene(args.scene)
        talk = _talk(args, scene)
        plan_outputs(tape_outputs(out), [args.scene], args.force)
        keep_earlier_partial(out)
        from arena_studio.core.sim.rollout import run_rollout

        with graph_bar(args.quiet), progress_bar(args.episodes, "rollout", args.quiet) as bar:
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
                talk=talk,
                goal_pool=args.goal_pool,
                every_other=args.every_other,
            )
    except CommandError as exc:
        error_line(str(exc))
        return exc.code
    except ArenaError as exc:  # these name their own place (the scene, the tape written)
        error_line(str(exc))
        return EXIT_UNREADABLE
    except ValueError as exc:  # what is left is about the scene (no agents, no goals)
        error_line(f"{args.scene}: {exc}")
        return EXIT_UNREADABLE
    except KeyboardInterrupt:
        error_line(f"interrupted; {args.output} was not written")
        return 130
    return EXIT_OK


def _check_steps(max_time: float | None, dt: float) -> None:
    """Refuse an episode longer than the step limit before any work (with the estimate)."""
    if max_time is None:
        return
    if dt > max_time:
        raise CommandError(f"--dt {dt:g}: expected a time step <= --max-time {max_time:g}")
    steps = max_time / dt
    if steps > lim.MAX_ROLLOUT_STEPS:
        raise CommandError(
            f"--max-time {max_time:g} at --dt {dt:g} means up to {steps:,.0f} steps an episode, "
            f"more than {lim.MAX_ROLLOUT_STEPS:,}; raise --dt or lower --max-time"
        )


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


def _talk(args: argparse.Namespace, scene: Scene) -> MessageOptions | None:
    """The announcement options, or None without ``--announce``."""
    from arena_studio.core.sim.rollout import MessageOptions

    if args.announce is None:
        return None
    ids = [a.id for a in scene.agents]
    if args.announce not in ids:
        raise CommandError(f"--announce {args.announce!r}: not an agent of {args.scene}")
    if args.goals == "greedy":
        raise CommandError("--announce needs --goals shared or independent")
    return MessageOptions(ids.index(args.announce), args.word_error, args.adopt)
