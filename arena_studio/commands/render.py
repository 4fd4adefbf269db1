"""``arena-studio render TAPE -o OUT``: clips (.mp4, .gif, PNG folder) and stills (.png, .svg)."""

from __future__ import annotations

import argparse
from pathlib import Path

from arena_studio.commands.arg_types import number
from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_UNREADABLE,
    CommandError,
    error_line,
    warning_line,
)
from arena_studio.commands.output_plan import add_force_argument, plan_outputs
from arena_studio.core import limits as lim
from arena_studio.core.errors import ArenaError

HELP = "render episodes of a tape to a clip (.mp4, .gif, PNG folder) or a still (.png, .svg)"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("tape", help="tape file (.tape)")
    parser.add_argument(
        "-o",
        "--output",
        required=True,
        metavar="OUT",
        help="OUT.mp4, OUT.gif, a new folder for numbered PNGs, or OUT.png / OUT.svg for a still",
    )
    what = parser.add_argument_group("what to show")
    what.add_argument(
        "--episode",
        type=number(lim.EPISODE),
        nargs="+",
        default=[0],
        metavar="N",
        help="episode index (several: one after another; default 0)",
    )
    what.add_argument(
        "--compare",
        type=number(lim.EPISODE),
        nargs=2,
        metavar=("A", "B"),
        help="two episodes side by side on one timeline",
    )
    what.add_argument("--start", type=number(lim.TIME), default=0.0, help="start time in seconds")
    what.add_argument("--end", type=number(lim.TIME), default=None, help="end time in seconds")
    what.add_argument(
        "--time",
        type=number(lim.TIME),
        default=None,
        help="time of a still (seconds; default: the diagnosis of a failed episode, else 0)",
    )
    look = parser.add_argument_group("look")
    look.add_argument(
        "--size",
        default="720p",
        help="720p (1280x720), 1080p (1920x1080), square (1080x1080) or WxH",
    )
    look.add_argument("--theme", choices=("light", "dark"), default="light")
    look.add_argument(
        "--trail",
        type=number(lim.TRAIL),
        default=4.0,
        metavar="SECONDS",
        help="trail length in seconds (0: no trails; default 4)",
    )
    look.add_argument(
        "--roles",
        choices=("auto", "derived", "tape", "none"),
        default="auto",
        help="role marks: tape labels when present (auto), derived, or none",
    )
    look.add_argument("--no-targets", action="store_true", help="hide team-goal targets")
    look.add_argument("--no-pursued", action="store_true", help="hide pursued-goal lines")
    look.add_argument("--no-collisions", action="store_true", help="hide contact marks")
    look.add_argument("--par-paths", action="store_true", help="show par-time paths")
    look.add_argument("--no-legend", action="store_true", help="hide the legend")
    look.add_argument("--no-clock", action="store_true", help="hide the clock")
    look.add_argument("--grid", action="store_true", help="draw the metric grid")
    look.add_argument("--title", default=None, help="title line (and title card in clips)")
    look.add_argument(
        "--title-seconds",
        type=number(lim.TITLE_SECONDS),
        default=2.0,
        help="title card length before each episode (default 2; 0: none)",
    )
    look.add_argument("--caption", default=None, help="caption line at the bottom")
    look.add_argument(
        "--no-statement",
        action="store_true",
        help="leave out how the episode went and who went where, under the scene",
    )
    clip = parser.add_argument_group("clip timing and stills")
    clip.add_argument(
        "--fps", type=number(lim.FPS), default=30.0, help="frames per second (default 30)"
    )
    clip.add_argument(
        "--speed", type=number(lim.SPEED), default=1.0, help="playback speed (default 1)"
    )
    clip.add_argument("--scale", type=number(lim.SCALE), default=1.0, help="PNG still: pixel scale")
    clip.add_argument(
        "--dpi", type=number(lim.DPI), default=None, help="PNG still: DPI stored in file"
    )
    parser.add_argument("--quiet", action="store_true", help="no progress bar")
    add_force_argument(parser)


def run(args: argparse.Namespace) -> int:
    try:
        return _run(args)
    except CommandError as exc:
        error_line(str(exc))
        return exc.code
    except KeyboardInterrupt:
        error_line(f"interrupted; {args.output} was not written")
        return 130


def _run(args: argparse.Namespace) -> int:
    from arena_studio.core.tape.damage import EpisodeDamaged
    from arena_studio.render.clip import ClipError, ClipSpec, export_clip, parse_size
    from arena_studio.render.episode_painter import FrameOptions

    out = Path(args.output)
    suffix = out.suffix.lower()
    try:
        size = parse_size(args.size)
    except ClipError as exc:
        raise CommandError(f"--size: {exc}") from None
    if suffix == ".png":
        scaled = (round(size[0] * args.scale), round(size[1] * args.scale))
        if not all(lim.FRAME_SIDE.low <= side <= lim.FRAME_SIDE.high for side in scaled):
            raise CommandError(
                f"--scale {args.scale:g}: a {size[0]}x{size[1]} frame becomes "
                f"{scaled[0]}x{scaled[1]} pixels; expected {lim.FRAME_SIDE.describe()}"
            )
    if args.end is not None and not args.end > args.start:
        raise CommandError(f"--end {args.end:g}: expected a time after --start {args.start:g}")
    if not out.parent.is_dir():
        raise CommandError(f"{out.parent}: folder does not exist")
    if args.compare and args.episode != [0]:
        raise CommandError("use --episode (one or several in sequence) or --compare A B, not both")
    from arena_studio.core.outputs import render_outputs

    plan_outputs(render_outputs(out), [args.tape], args.force)
    tape = _open(args.tape)
    indices = list(args.compare) if args.compare else list(args.episode)
    episodes = []
    for i in indices:
        if not 0 <= i < len(tape):
            cut = "; it was cut short" if tape.truncated else ""
            raise CommandError(f"{args.tape}: no episode {i} (the tape has {len(tape)}{cut})")
        try:
            episodes.append(tape.episode(i))
        except EpisodeDamaged as exc:
            d = exc.damage
            raise CommandError(
                f"{args.tape}: episode {i} is damaged and cannot be drawn "
                f"({d.place + ': ' if d.place else ''}{d.reason}); the other episodes read "
                "normally"
            ) from None
        except ArenaError as exc:
            raise CommandError(str(exc)) from None
    if tape.truncated and tape.recovery_message:  # said once the episodes are known good
        warning_line(tape.recovery_message)
    options = FrameOptions(
        theme=args.theme,
        trails=args.trail > 0,
        trail_seconds=args.trail or 4.0,
        roles=args.roles,
        team_goal=not args.no_targets,
        pursued=not args.no_pursued,
        par_paths=args.par_paths,
        collisions=not args.no_collisions,
        legend=not args.no_legend,
        clock=not args.no_clock,
        grid=args.grid,
        title=args.title,
        caption=args.caption,
        statement=not args.no_statement,
    )
    from arena_studio.render.offscreen import ensure_gui_app

    ensure_gui_app()
    if suffix in (".png", ".svg"):
        return _still(args, out, tape.scene, episodes, options, size)
    spec = ClipSpec(
        start=args.start,
        end=args.end,
        speed=args.speed,
        fps=args.fps,
        size=size,
        compare=bool(args.compare),
        frame=options,
        title_seconds=args.title_seconds if args.title else 0.0,
    )
    from arena_studio.commands.progress import progress_bar

    try:
        from arena_studio.render.clip import schedule

        total = len(schedule(episodes, spec))
        with progress_bar(total, "render", args.quiet) as bar:
            result = export_clip(
                tape.scene, episodes, out, spec, progress=lambda done, _total: bar.advance(1)
            )
    except ClipError as exc:
        raise CommandError(str(exc)) from None
    for note in result.notes:
        warning_line(note)
    return EXIT_OK


def _open(path: str):
    from arena_studio.commands.common import input_problem
    from arena_studio.core.tape import open_tape

    p = Path(path)
    problem = input_problem(p, "a tape file")
    if problem:
        raise CommandError(problem)
    try:
        tape = open_tape(Path(path))  # refuses folders, pipes and devices by name
    except ArenaError as exc:
        raise CommandError(str(exc)) from None
    return tape


def still_step(scene, episode) -> int:
    """A still's default step: where a failed episode's diagnosis says it went wrong (the
    moment to show), else the first step."""
    from arena_studio.core.analysis.metrics import episode_metrics

    try:
        step = episode_metrics(scene, episode).diagnosis_step
    except (ValueError, IndexError):  # a damaged episode still gets its first frame
        return 0
    return 0 if step is None else int(min(max(step, 0), episode.steps - 1))


def _still(args, out, scene, episodes, options, size) -> int:
    """One episode, or with ``--compare`` two side by side at the same time (the partner at
    its end when it is shorter)."""
    from arena_studio.render.compare_still import save_compare_png, save_compare_svg
    from arena_studio.render.frame import save_png_still, save_svg_still

    episode = episodes[0]
    step = episode.step_at(args.time) if args.time is not None else still_step(scene, episode)
    png = out.suffix.lower() == ".png"
    try:
        if args.compare:
            steps = [step, episodes[1].step_at(step * episode.dt)]
            if png:
                save_compare_png(out, scene, episodes, steps, options, size, args.scale, args.dpi)
            else:
                save_compare_svg(out, scene, episodes, steps, options, size)
        elif png:
            save_png_still(out, scene, episode, step, options, size, args.scale, args.dpi)
        else:
            save_svg_still(out, scene, episode, step, options, size)
    except OSError as exc:
        raise CommandError(
            f"{out}: cannot write ({exc.strerror or exc})", EXIT_UNREADABLE
        ) from None
    return EXIT_OK
