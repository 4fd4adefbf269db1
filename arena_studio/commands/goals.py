"""``arena-studio goals SCENE [--json]``: every goal with its kind, targets and par time.

Exit 0 when every goal is feasible and the goal set has no errors; 1 when some goal is
infeasible (an unreachable target, more targets than agents under a simultaneous rule, no
agents) or the goal set has errors (a vector of the wrong length or with no ones, k larger
than the landmark count, no goals); 2 when the file cannot be read or the arguments are
wrong.
"""

from __future__ import annotations

import argparse
import json
import sys
from typing import TYPE_CHECKING, Any

from arena_studio.core.errors import ArenaError
from arena_studio.core.export import CAUTION
from arena_studio.core.scene.model import Scene

if TYPE_CHECKING:  # the planner pulls in scipy; load it only when the command runs
    from arena_studio.core.planning.goal_set import GoalTable
    from arena_studio.core.planning.partime import GoalPlan
from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_PROBLEMS,
    EXIT_UNREADABLE,
    error_line,
    read_scene,
)
from arena_studio.commands.progress import graph_bar, progress_bar

HELP = "list a scene's goals with par times and assignments (exit 0 ok, 1 problems, 2 unreadable)"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("scene", metavar="SCENE", help="a .scene.json or .scene.msgpack file")
    parser.add_argument(
        "--json", action="store_true", help='print {"goals": [...]} as JSON instead of a table'
    )
    parser.add_argument("--quiet", action="store_true", help="no progress bar")


def run(args: argparse.Namespace) -> int:
    scene = read_scene(args.scene)  # a CommandError becomes one line in cli.main
    try:
        table, plans = _plan(scene, args.quiet)
    except KeyboardInterrupt:
        error_line("interrupted")
        return 130
    except ArenaError as exc:  # e.g. a graph over the memory limit, refused with its estimate
        error_line(f"{args.scene}: {exc}")
        return EXIT_UNREADABLE
    except Exception as exc:  # a planner bug must still end in one line, not a traceback
        error_line(f"{args.scene}: planning failed ({type(exc).__name__}: {exc}); please report")
        return EXIT_UNREADABLE
    if args.json:
        json.dump(goals_document(scene, table, plans), sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        sys.stdout.write(format_table(args.scene, scene, table, plans))
    bad = table.has_errors or len(table) == 0 or not all(p.feasible for p in plans)
    return EXIT_PROBLEMS if bad else EXIT_OK


def _plan(scene: Scene, quiet: bool) -> tuple[GoalTable, list[GoalPlan]]:
    """Every goal planned in order, with a bar per goal and per visibility graph."""
    from arena_studio.core.planning.goal_set import enumerate_goals
    from arena_studio.core.planning.partime import plan_all

    table = enumerate_goals(scene)
    with progress_bar(len(table), "goals", quiet) as bar, graph_bar(quiet):
        plans = plan_all(scene, table, advance=bar.advance)
    return table, plans


def _targets(table: GoalTable, i: int) -> list[str]:
    return list(table.target_ids(i))


def goals_document(scene: Scene, table: GoalTable, plans: list[GoalPlan]) -> dict[str, Any]:
    goals = []
    for i, plan in enumerate(plans):
        goals.append(
            {
                "index": i,
                "vector": [int(x) for x in table.vectors[i]],
                "targets": _targets(table, i),
                "kind": table.kinds[i],
                "weight": float(table.weights[i]),
                "feasible": plan.feasible,
                "par_time": plan.par_time,
                "par_time_worst": plan.par_time_worst,
                "exact": plan.exact,
                "assignment": plan.assignment,
                "reason": plan.reason,
                "note": plan.note,
            }
        )
    return {
        "scene": scene.name,
        "rule": scene.goals.rule,
        "hold_time": scene.goals.hold_time,
        "content_hash": scene.content_hash(),
        "problems": [
            {"severity": p.severity, "where": p.where, "message": p.message} for p in table.problems
        ],
        "goals": goals,
        "caution": CAUTION,
    }


def _fmt_time(plan: GoalPlan) -> str:
    if plan.par_time is None:
        return "-"
    text = f"{plan.par_time:.2f}"
    if plan.par_time_worst is not None and abs(plan.par_time_worst - plan.par_time) > 5e-3:
        text += f"..{plan.par_time_worst:.2f}"
    return text + ("" if plan.exact else " (bound)")


def _fmt_assignment(plan: GoalPlan) -> str:
    if not plan.feasible:
        return plan.reason or "infeasible"
    return "; ".join(f"{agent}: {', '.join(lms)}" for agent, lms in plan.assignment.items())


def format_table(source: str, scene: Scene, table: GoalTable, plans: list[GoalPlan]) -> str:
    """A fixed-width table, one goal per line, problems first, then a summary line."""
    lines = [f"problem {p.severity:<7} {p}" for p in table.problems if p.severity != "info"]
    rows = [
        (
            str(i),
            table.kinds[i],
            "+".join(_targets(table, i)),
            "yes" if plan.feasible else "no",
            _fmt_time(plan),
            _fmt_assignment(plan),
        )
        for i, plan in enumerate(plans)
    ]
    head = ("#", "kind", "targets", "reachable", "par time (s)", "assignment")
    widths = [max(len(r[c]) for r in [head, *rows]) for c in range(5)]
    for row in [head, *rows]:
        cells = [row[c].ljust(widths[c]) for c in range(5)]
        lines.append("  ".join(cells) + "  " + row[5])
    feasible = sum(p.feasible for p in plans)
    regions = any(a.start.region is not None for a in scene.agents)
    lines.append(
        f"{source}: {len(plans)} goals, {feasible} feasible, {len(plans) - feasible} "
        f"infeasible (rule {scene.goals.rule}"
        + ("; a time range is best..worst start-region point)" if regions else ")")
    )
    lines.append(f"note: {CAUTION}")
    return "\n".join(lines) + "\n"
