"""``arena-studio check SCENE [--json]``: the scene checker's findings, for people and scripts.

Exit 0 when there are no errors (warnings and info allowed), 1 when errors were found, 2 when
the file cannot be read or is not a valid scene.
"""

from __future__ import annotations

import argparse
import json
import sys
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # the checker pulls in shapely and scipy; load it only when it runs
    from arena_studio.core.checks.checker import Finding
from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_PROBLEMS,
    EXIT_UNREADABLE,
    error_line,
    read_scene,
)

HELP = "check a scene for problems (exit 0 ok, 1 errors found, 2 unreadable)"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("scene", metavar="SCENE", help="a .scene.json or .scene.msgpack file")
    parser.add_argument(
        "--json", action="store_true", help='print {"findings": [...]} as JSON instead of text'
    )


def run(args: argparse.Namespace) -> int:
    scene = read_scene(args.scene)  # a CommandError becomes one line in cli.main
    try:
        from arena_studio.core.checks.checker import check_scene

        findings = check_scene(scene)
    except Exception as exc:  # a checker bug must still end in one line, not a traceback
        error_line(f"{args.scene}: the checker failed ({type(exc).__name__}: {exc}); please report")
        return EXIT_UNREADABLE
    if args.json:
        json.dump({"findings": [f.to_dict() for f in findings]}, sys.stdout, indent=2)
        sys.stdout.write("\n")
    else:
        sys.stdout.write(format_report(args.scene, findings))
    has_errors = any(f.severity == "error" for f in findings)
    return EXIT_PROBLEMS if has_errors else EXIT_OK


def format_report(source: str, findings: list[Finding]) -> str:
    """One line per finding, errors first, then a summary line."""
    from arena_studio.core.checks.checker import SEVERITIES, count_by_severity, fmt_point

    lines = []
    width = max((len(f.code) for f in findings), default=0)
    for f in findings:  # check_scene already sorts by severity
        where = ""
        if f.point is not None and fmt_point(f.point) not in f.message:
            where = f"  at {fmt_point(f.point)}"
        goal = f"  [goal {f.goal_index}]" if f.goal_index is not None else ""
        lines.append(f"{f.severity:<7} {f.code:<{width}}  {f.message}{where}{goal}")
    counts = count_by_severity(findings)
    summary = ", ".join(_plural(counts[s], s) for s in SEVERITIES)
    verdict = "errors found" if counts["error"] else "no errors"
    lines.append(f"{source}: {summary} ({verdict})")
    return "\n".join(lines) + "\n"


def _plural(n: int, severity: str) -> str:
    if severity == "info":
        return f"{n} info"
    return f"{n} {severity}{'' if n == 1 else 's'}"
