"""``arena-studio stats TAPE``: success, alignment and diagnosis per episode and in total."""

from __future__ import annotations

import argparse
import csv
import json
import math
import sys
from typing import Any

from arena_studio.commands.arg_types import number
from arena_studio.commands.common import EXIT_OK, EXIT_UNREADABLE, error_line, warning_line
from arena_studio.commands.progress import progress_bar
from arena_studio.core import limits as lim
from arena_studio.core.errors import ArenaError

HELP = "summarise a tape: success by goal and kind, alignment, diagnoses, per-episode rows"

ROW_FIELDS = (
    "index",
    "goal_key",
    "kind",
    "success",
    "time_to_success",
    "par_time",
    "par_ratio",
    "aligned",
    "collisions",
    "free_space_exits",
    "diagnosis_code",
    "diagnosis_step",
    "diagnosis",
    "steps",
    "complete",
)


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("tape", help="a .tape file")
    fmt = parser.add_mutually_exclusive_group()
    fmt.add_argument("--json", action="store_true", help="print JSON {summary, episodes}")
    fmt.add_argument("--csv", action="store_true", help="print one CSV row per episode")
    parser.add_argument(
        "--episode", type=number(lim.EPISODE), default=None, metavar="N", help="only episode N"
    )
    parser.add_argument("--quiet", action="store_true", help="no progress bar")


def _clean(value: Any) -> Any:
    """JSON-safe: no NaN/inf, tuples as lists, numpy scalars as Python numbers."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_clean(v) for v in value]
    if hasattr(value, "item"):
        return _clean(value.item())
    return value


def run(args: argparse.Namespace) -> int:
    from arena_studio.core.analysis.metrics import summarize_metrics
    from arena_studio.core.analysis.metrics_batch import tape_metrics
    from arena_studio.core.tape import open_tape

    try:
        tape = open_tape(args.tape)
    except FileNotFoundError:
        error_line(f"{args.tape}: no such file")
        return EXIT_UNREADABLE
    except (ArenaError, OSError) as exc:
        error_line(str(exc))
        return EXIT_UNREADABLE
    if tape.truncated:
        warning_line(tape.recovery_message or f"{args.tape}: tape is incomplete")
    if args.episode is not None and not 0 <= args.episode < len(tape):
        error_line(f"--episode {args.episode}: the tape has episodes 0..{len(tape) - 1}")
        return EXIT_UNREADABLE
    indices = range(len(tape)) if args.episode is None else [args.episode]
    try:
        with progress_bar(len(indices), "stats", args.quiet) as bar:
            # many episodes at once (same results as core.metrics.episode_metrics)
            metrics = tape_metrics(tape, indices, advance=bar.advance)
    except ArenaError as exc:
        error_line(str(exc))
        return EXIT_UNREADABLE
    except KeyboardInterrupt:
        error_line("interrupted")
        return 130
    summary = summarize_metrics(tape.scene, metrics)
    summary["truncated"] = tape.truncated
    rows = [m.to_dict() for m in metrics]
    if args.episode is not None:
        from arena_studio.core.analysis.events import episode_events

        ids = [a.id for a in tape.scene.agents]
        lms = [lm.id for lm in tape.scene.landmarks]
        events = episode_events(tape.scene, tape.episode(args.episode), metrics[0])
        rows[0]["events"] = [
            {
                "step": e.step,
                "time": round(e.step * tape.dt, 6),
                "kind": e.kind,
                "agent": None if e.agent is None else ids[e.agent],
                "landmark": None if e.landmark is None else lms[e.landmark],
                "text": e.text,
            }
            for e in events
        ]
    try:
        _emit(args, tape, summary, rows)
    except BrokenPipeError:  # output piped into head and closed early: not an error
        sys.stderr.close()
    return EXIT_OK


def _emit(args: argparse.Namespace, tape: Any, summary: dict[str, Any], rows: list[Any]) -> None:
    if args.json:
        doc = {"tape": str(tape.path), "summary": summary, "episodes": rows}
        json.dump(_clean(doc), sys.stdout, indent=2)
        sys.stdout.write("\n")
    elif args.csv:
        writer = csv.writer(sys.stdout, lineterminator="\n")
        writer.writerow(ROW_FIELDS)
        for row in rows:
            writer.writerow(["" if row[k] is None else row[k] for k in ROW_FIELDS])
    else:
        _print_text(tape, summary, rows)


def _pct(value: float | None) -> str:
    return "-" if value is None else f"{100 * value:.0f}%"


def _num(value: float | None, unit: str = "") -> str:
    return "-" if value is None else f"{value:.2f}{unit}"


def _print_text(tape: Any, summary: dict[str, Any], rows: list[dict[str, Any]]) -> None:
    out = sys.stdout
    out.write(f"{tape.path}: {summary['episodes']} episode(s) of '{tape.scene.name}'\n")
    out.write(
        f"  success {_pct(summary['success_rate'])}, alignment {_pct(summary['alignment_rate'])}"
        f", aligned success {_pct(summary['aligned']['success_rate'])}"
        f", misaligned success {_pct(summary['misaligned']['success_rate'])}\n"
    )
    for kind, group in summary["by_kind"].items():
        out.write(f"  {kind}: {group['successes']}/{group['episodes']} succeeded\n")
    for key, group in sorted(summary["by_goal"].items()):
        spec = summary["specialisation"].get(key)
        extra = f", specialisation {spec:.2f}" if spec is not None else ""
        out.write(
            f"    {key}: {group['successes']}/{group['episodes']}, mean time "
            f"{_num(group['mean_time_to_success'], ' s')}{extra}\n"
        )
    if summary["diagnoses"]:
        words = ", ".join(f"{k} {v}" for k, v in summary["diagnoses"].items())
        out.write(f"  failures: {words}\n")
    out.write("\n  #  goal                           ok   time    par  aligned  diagnosis\n")
    for r in rows:
        ok = "yes" if r["success"] else "no"
        aligned = "-" if r["aligned"] is None else ("yes" if r["aligned"] else "no")
        diag = r["diagnosis"] or ""
        if r["diagnosis_step"] is not None:
            diag = f"{diag} (step {r['diagnosis_step']})"
        out.write(
            f"{r['index']:>3}  {(r['goal_key'] or '-')[:30]:<30} {ok:<4} "
            f"{_num(r['time_to_success']):>6} {_num(r['par_ratio']):>6}  {aligned:<7}  {diag}\n"
        )
        for e in r.get("events", ()):
            out.write(f"       {e['time']:7.1f} s  {e['kind']:<15} {e['text']}\n")
