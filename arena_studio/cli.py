"""The ``arena-studio`` command: a thin dispatcher over :mod:`arena_studio.commands`.

``arena-studio [PATH] [--screenshot OUT.png]`` opens the app; ``arena-studio COMMAND ...``
runs a batch command. Every command returns an exit code: 0 fine, 1 problems found in the
input, 2 the input could not be read or the arguments are wrong.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from typing import NoReturn

from arena_studio import __version__
from arena_studio.commands import COMMANDS, load_command
from arena_studio.commands.arg_types import number
from arena_studio.commands.common import CommandError, error_line
from arena_studio.commands.output_plan import add_force_argument
from arena_studio.core import limits


class _OneLineParser(argparse.ArgumentParser):
    """Usage errors as one line (the option and the problem) plus exit 2, no usage block."""

    def error(self, message: str) -> NoReturn:
        self.exit(2, f"{self.prog}: error: {message} (see '{self.prog} --help')\n")


def _command_parser(app_only: bool = False) -> argparse.ArgumentParser:
    """The whole command line; ``app_only``: just the ``app`` command (the window opens
    sooner without loading every other command's module)."""
    parser = _OneLineParser(
        prog="arena-studio",
        description=(
            "Workbench for cooperative multi-robot landmark tasks. Run with no command (or a "
            "scene/tape path) to open the app, or use one of the commands below."
        ),
        epilog="Run 'arena-studio COMMAND --help' for a command's options. Scenes and par "
        "times are simulation aids, not safety assessments.",
    )
    parser.add_argument("--version", action="version", version=f"arena-studio {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", title="commands")
    app = sub.add_parser("app", help="open the desktop app (the default with no command)")
    add_app_arguments(app)
    for name in () if app_only else COMMANDS:
        module = load_command(name)
        cmd = sub.add_parser(name, help=module.HELP, description=module.HELP)
        module.add_arguments(cmd)
    return parser


def add_app_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("path", nargs="?", help="a scene (.scene.json/.scene.msgpack) or tape")
    parser.add_argument("--screenshot", metavar="OUT.png", help="render the window and exit")
    parser.add_argument(
        "--episode", type=number(limits.EPISODE), default=None, help="tape episode to show"
    )
    parser.add_argument(
        "--time", type=number(limits.TIME), default=None, help="replay time in seconds"
    )
    parser.add_argument("--theme", choices=("light", "dark"), default=None)
    add_force_argument(parser)  # --screenshot onto a file that is not an earlier one


def main(argv: Sequence[str] | None = None) -> int:
    args_list = list(sys.argv[1:] if argv is None else argv)
    if not args_list or (
        args_list[0] not in COMMANDS and args_list[0] not in ("-h", "--help", "--version", "app")
    ):
        args_list = ["app", *args_list]
    parser = _command_parser(app_only=args_list[0] == "app")
    try:
        args = parser.parse_args(args_list)
    except SystemExit as exc:  # argparse already printed one line of usage error
        return int(exc.code or 0)
    if args.command == "app":
        from arena_studio.app.launch import launch_app

        return launch_app(args)
    from arena_studio.commands.stdout_safety import run_with_safe_stdout

    def run() -> int:
        try:
            return int(load_command(args.command).run(args))
        except CommandError as exc:  # any command may raise it: one line, its exit code
            error_line(str(exc))
            return exc.code

    # a closed pipe (| head) ends quietly; a full device is one line and exit 2
    return run_with_safe_stdout(run, error_line)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
