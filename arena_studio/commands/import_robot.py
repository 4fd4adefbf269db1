"""``arena-studio import map|bag``: building maps to scenes, recorded ROS 2 runs to tapes.

The options live here so :mod:`.import_` only dispatches; see README "Real robots".
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import TYPE_CHECKING

from arena_studio.commands.arg_types import number
from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_PROBLEMS,
    EXIT_UNREADABLE,
    CommandError,
    error_line,
    warning_line,
)
from arena_studio.core import limits as lim
from arena_studio.core.errors import ArenaError

if TYPE_CHECKING:
    from arena_studio.core.robot.bags import BagImportReport

CAUTION = (
    "A replay of real runs is an analysis aid; safety of robots near people is assessed on "
    "site under the applicable standards."
)


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of the map and bag kinds (the input and -o are shared with csv/npz)."""
    parser.add_argument(
        "more",
        nargs="*",
        metavar="BAG",
        help="bag: further bags (one episode each with --split bag)",
    )
    group = parser.add_argument_group("map (a map-server YAML and its image)")
    group.add_argument(
        "--tolerance",
        type=number(lim.TOLERANCE),
        default=None,
        help="outline simplification in metres (1 cell)",
    )
    group.add_argument(
        "--min-area",
        type=number(lim.MIN_AREA),
        default=None,
        help="drop specks below this many m² (9 cells)",
    )
    group = parser.add_argument_group("bag (ROS 2 bags, MCAP or SQLite3)")
    group.add_argument(
        "--agent",
        action="append",
        default=[],
        metavar="ID=TOPIC",
        help="scene agent and its pose topic (Odometry, PoseStamped, PoseWithCovarianceStamped)"
        " or TF child frame as ID=tf:FRAME; repeat per agent",
    )
    group.add_argument("--fixed-frame", default="map", help="TF frame poses are taken in (map)")
    group.add_argument(
        "--transform",
        default=None,
        metavar="X,Y,YAW",
        help="map frame to scene: pose of the map frame in the scene (metres, radians)",
    )
    group.add_argument(
        "--transform-from",
        default=None,
        metavar="MAP.yaml",
        help="map frame to scene from the map's YAML and the scene's underlay",
    )
    group.add_argument(
        "--stamps",
        choices=("header", "bag"),
        default="header",
        help="pose times from message headers (default) or from the bag's record times",
    )
    group.add_argument(
        "--split",
        choices=("gap", "marker", "bag"),
        default="gap",
        help="episodes: at time gaps (default), at marker messages, or one per bag",
    )
    group.add_argument(
        "--gap", type=number(lim.GAP), default=2.0, help="pause in seconds that splits (2)"
    )
    group.add_argument("--marker", default=None, metavar="TOPIC", help="topic that starts episodes")
    group.add_argument(
        "--goal", default=None, metavar="IDS", help="team goal: landmark ids joined by '+'"
    )
    group.add_argument(
        "--goal-topic", default=None, metavar="TOPIC", help="std_msgs/String landmark ids"
    )


def run(args: argparse.Namespace) -> int:
    try:
        if args.kind == "map":
            return _run_map(args)
        return _run_bag(args)
    except CommandError as exc:
        error_line(str(exc))
        return exc.code
    except ArenaError as exc:
        error_line(str(exc))
        return EXIT_UNREADABLE
    except KeyboardInterrupt:
        error_line(f"interrupted; {args.output} was not written")
        return 130


def _run_map(args: argparse.Namespace) -> int:
    from arena_studio.core.robot.map_trace import map_scene, trace_map
    from arena_studio.core.robot.map_yaml import read_map
    from arena_studio.core.robot.underlay import map_underlay
    from arena_studio.core.scene import save_scene

    if args.more:
        raise CommandError("import map takes one map YAML")
    out = Path(args.output)
    if not out.name.endswith((".json", ".msgpack", ".mpk")):
        raise CommandError(f"{args.output}: expected a .scene.json or .scene.msgpack name")
    if not out.parent.is_dir():
        raise CommandError(f"{args.output}: folder does not exist")
    omap = read_map(args.input)
    traced = trace_map(omap, tolerance=args.tolerance, min_area=args.min_area)
    if not traced.rooms:
        raise CommandError(f"{args.input}: no free space larger than the speck size", 1)
    name = Path(args.input).stem
    scene = map_scene(traced, name, f"Traced from the map {Path(args.input).name}.")
    scene = scene.with_changes(underlay=map_underlay(omap.info, out))
    save_scene(scene, out)
    print(
        f"{args.output}: {len(traced.rooms)} room(s), {len(traced.obstacles)} obstacle(s), "
        f"{traced.vertex_count} vertices; {traced.dropped} speck(s) dropped "
        f"(tolerance {traced.tolerance:g} m, min area {traced.min_area:g} m²)"
    )
    return EXIT_OK


def _run_bag(args: argparse.Namespace) -> int:
    from arena_studio.commands.common import read_scene
    from arena_studio.commands.progress import progress_bar
    from arena_studio.core.robot.bag_read import count_messages, find_bags
    from arena_studio.core.robot.bags import BagImportOptions, import_bags, parse_agent_args
    from arena_studio.core.robot.pose_math import parse_transform

    if args.scene is None:
        raise CommandError("--scene: required for bag")
    if not args.agent:
        raise CommandError("--agent: give ID=TOPIC (or ID=tf:FRAME) for each scene agent")
    if not Path(args.output).parent.is_dir():
        raise CommandError(f"{args.output}: folder does not exist")
    scene = read_scene(args.scene)
    transform, scale = parse_transform(args.transform), 1.0
    if args.transform_from is not None:
        from arena_studio.core.robot.map_yaml import read_map_yaml
        from arena_studio.core.robot.underlay import map_frame_in_scene

        if args.transform is not None:
            raise CommandError("give --transform or --transform-from, not both")
        transform, scale = map_frame_in_scene(read_map_yaml(args.transform_from), scene.underlay)
    opts = BagImportOptions(
        agents=parse_agent_args(args.agent),
        dt=0.1 if args.dt is None else args.dt,
        transform=transform,
        scale=scale,
        fixed_frame=args.fixed_frame,
        split=args.split,
        gap=args.gap,
        marker=args.marker,
        goal=args.goal,
        goal_topic=args.goal_topic,
        use_header=args.stamps == "header",
    )
    paths = [args.input, *args.more]
    bags = [b for p in paths for b in find_bags(p)]  # bad paths fail before any reading
    with progress_bar(count_messages(bags), "import", args.quiet) as bar:
        report = import_bags(paths, scene, args.output, opts, advance=bar.advance)
    _print_usage(report)
    for line in dict.fromkeys(report.warnings):
        warning_line(line)
    print(
        f"{args.output}: {len(report.episodes)} episode(s) imported from {report.bags} bag(s)"
        + (f", {report.skipped_episodes} skipped" if report.skipped_episodes else "")
    )
    print(f"note: {CAUTION}")
    return EXIT_PROBLEMS if report.skipped_episodes else EXIT_OK


def _print_usage(report: BagImportReport) -> None:
    """One row per topic: type, messages, used, skipped and why."""
    topics = sorted(report.topics.values(), key=lambda u: u.topic)
    if not topics:
        return
    width = max(len("topic"), *(len(u.topic) for u in topics))
    twidth = max(len("type"), *(len(u.msgtype) for u in topics))
    print(f"{'topic':<{width}}  {'type':<{twidth}}  messages      used   skipped")
    for u in topics:
        note = f"  {u.note}" if u.skipped and u.note else ""
        print(
            f"{u.topic:<{width}}  {u.msgtype:<{twidth}}  {u.messages:>8}  {u.used:>8}  "
            f"{u.skipped:>8}{note}"
        )


__all__ = ["CAUTION", "add_arguments", "run"]
