"""``arena-studio stats TAPE``: success, alignment and diagnosis per episode and in total."""

from __future__ import annotations

import argparse
import csv
import json
import math
import sys
from typing import Any

from arena_studio.commands import stats_messages
from arena_studio.commands.arg_types import number
from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_PROBLEMS,
    EXIT_UNREADABLE,
    CommandError,
    error_line,
    warning_line,
)
from arena_studio.commands.progress import progress_bar
from arena_studio.core import limits as lim
from arena_studio.core.errors import ArenaError
from arena_studio.core.export.text_safety import csv_cell
from arena_studio.core.wording import LandmarkNames

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
    "damage",
)
#: damaged episodes named in full in the warning line; the rest are counted
WARN_NAMED = 3


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("tape", help="a .tape file")
    fmt = parser.add_mutually_exclusive_group()
    fmt.add_argument("--json", action="store_true", help="print JSON {summary, episodes}")
    fmt.add_argument("--csv", action="store_true", help="print one CSV row per episode")
    parser.add_argument(
        "--episode", type=number(lim.EPISODE), default=None, metavar="N", help="only episode N"
    )
    parser.add_argument("--quiet", action="store_true", help="no progress bar")
    parser.add_argument(
        "--follow",
        action="store_true",
        help="keep reading a tape that is being written: a line per finished episode",
    )
    parser.add_argument(
        "--interval", type=float, default=1.0, metavar="S", help="--follow: seconds between reads"
    )
    parser.add_argument(
        "--parquet", metavar="OUT", default=None, help="also write the per-episode rows as Parquet"
    )
    stats_messages.add_arguments(parser)
    parser.add_argument(
        "--strict",
        action="store_true",
        help="exit 1 when some episode is damaged (default: warn, report it, exit 0)",
    )


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

    if args.follow:
        from arena_studio.commands.stats_follow import run_follow

        return run_follow(args)
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
    if tape.scene_hash_warning:
        warning_line(tape.scene_hash_warning)
    if args.episode is not None and not 0 <= args.episode < len(tape):
        error_line(f"--episode {args.episode}: the tape has episodes 0..{len(tape) - 1}")
        return EXIT_UNREADABLE
    indices = range(len(tape)) if args.episode is None else [args.episode]
    damaged: list[Any] = []
    try:
        with progress_bar(len(indices), "stats", args.quiet) as bar:
            # many episodes at once (same results as core.metrics.episode_metrics); a damaged
            # episode is left out and reported, the others are measured
            metrics = tape_metrics(tape, indices, advance=bar.advance, damaged=damaged)
    except ArenaError as exc:
        error_line(str(exc))
        return EXIT_UNREADABLE
    except KeyboardInterrupt:
        error_line("interrupted")
        return 130
    damaged.sort(key=lambda d: d.episode)
    summary = summarize_metrics(tape.scene, metrics)
    summary["truncated"] = tape.truncated
    summary["damaged"] = len(damaged)
    summary["damaged_episodes"] = [d.to_dict() for d in damaged]
    summary["scene_hash_ok"] = tape.scene_hash_ok  # None: the tape stores no scene hash
    try:
        # figures across episodes: one episode (--episode) says nothing about them
        summary["messages"] = None
        if args.episode is None and args.permutations > 0:
            with progress_bar(len(metrics), "messages", args.quiet) as bar:
                summary["messages"] = stats_messages.message_figures(
                    tape, metrics, args.permutations, advance=bar.advance
                )
    except ArenaError as exc:
        error_line(str(exc))
        return EXIT_UNREADABLE
    except KeyboardInterrupt:
        error_line("interrupted")
        return 130
    rows = _rows(metrics, damaged)
    if damaged:
        warning_line(_damage_warning(args.tape, damaged))
    if args.episode is not None and not damaged:
        from arena_studio.core.analysis.events import episode_events

        ids = [a.id for a in tape.scene.agents]
        lms = [lm.id for lm in tape.scene.landmarks]
        # JSON keeps the texts by landmark id (as the columns); the text output names them
        said = None if args.json or args.csv else LandmarkNames.of(tape.scene)
        events = episode_events(tape.scene, tape.episode(args.episode), metrics[0], said)
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
    if args.parquet:
        _write_parquet(args.parquet, rows)
    _emit(args, tape, summary, rows)  # a closed pipe is handled in cli (stdout_safety)
    return EXIT_PROBLEMS if damaged and args.strict else EXIT_OK


def _rows(metrics: list[Any], damaged: list[Any]) -> list[dict[str, Any]]:
    """Per-episode rows in episode order: measured ones, and one for each damaged episode
    (its ``damage`` column says what and where; every metric is empty)."""
    rows = [{**m.to_dict(), "damage": None} for m in metrics]
    for d in damaged:
        row: dict[str, Any] = dict.fromkeys(ROW_FIELDS)
        row.update(index=d.episode, damage=d.text(), success=None, complete=False)
        rows.append(row)
    rows.sort(key=lambda r: r["index"])
    return rows


def _damage_warning(source: str, damaged: list[Any]) -> str:
    """One line: how many episodes are damaged, the first few in full."""
    named = "; ".join(d.text() for d in damaged[:WARN_NAMED])
    more = len(damaged) - WARN_NAMED
    tail = f"; and {more} more" if more > 0 else ""
    return (
        f"{source}: {len(damaged)} damaged episode(s) left out of the totals "
        f"(the others read normally): {named}{tail}"
    )


def _write_parquet(out: str, rows: list[dict[str, Any]]) -> None:
    """Per-episode rows (the CSV columns) as a Parquet file, written atomically."""
    from arena_studio.core.tape.table_files import write_rows_parquet

    try:
        write_rows_parquet(rows, ROW_FIELDS, out)
    except (ArenaError, OSError) as exc:
        raise CommandError(f"{out}: cannot write ({exc})") from None


def _emit(args: argparse.Namespace, tape: Any, summary: dict[str, Any], rows: list[Any]) -> None:
    if args.json:
        doc = {"tape": str(tape.path), "summary": summary, "episodes": rows}
        json.dump(_clean(doc), sys.stdout, indent=2)
        sys.stdout.write("\n")
    elif args.csv:
        writer = csv.writer(sys.stdout, lineterminator="\n")
        writer.writerow(ROW_FIELDS)
        for row in rows:
            # text cells a spreadsheet would run as formulas are neutralised (OWASP)
            writer.writerow(["" if row[k] is None else csv_cell(row[k]) for k in ROW_FIELDS])
    else:
        _print_text(tape, summary, rows)


def _pct(value: float | None) -> str:
    return "-" if value is None else f"{100 * value:.0f}%"


def _num(value: float | None, unit: str = "") -> str:
    return "-" if value is None else f"{value:.2f}{unit}"


def _print_text(tape: Any, summary: dict[str, Any], rows: list[dict[str, Any]]) -> None:
    """The lines a person reads: goals and diagnoses name landmarks by label (JSON, CSV and
    Parquet keep the ids)."""
    from arena_studio.core.analysis.diagnosis_words import diagnosis_words

    out = sys.stdout
    names = LandmarkNames.of(tape.scene)
    hurt = f" and {summary['damaged']} damaged" if summary["damaged"] else ""
    out.write(f"{tape.path}: {summary['episodes']} episode(s){hurt} of '{tape.scene.name}'\n")
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
            f"    {names.goal(key)}: {group['successes']}/{group['episodes']}, mean time "
            f"{_num(group['mean_time_to_success'], ' s')}{extra}\n"
        )
    if summary["diagnoses"]:
        words = ", ".join(f"{k} {v}" for k, v in summary["diagnoses"].items())
        out.write(f"  failures: {words}\n")
    if summary["damaged"]:
        out.write(f"  damaged: {summary['damaged']} episode(s), not counted above\n")
    if summary.get("messages"):
        stats_messages.print_messages(summary["messages"], out)
    out.write("\n  #  goal                           ok   time    par  aligned  diagnosis\n")
    for r in rows:
        if r["damage"]:
            out.write(f"{r['index']:>3}  DAMAGED: {r['damage']}\n")
            continue
        ok = "yes" if r["success"] else "no"
        aligned = "-" if r["aligned"] is None else ("yes" if r["aligned"] else "no")
        diag = diagnosis_words(r["diagnosis"], names, r.get("diagnosis_code"))
        if r["diagnosis_step"] is not None:
            diag = f"{diag} (step {r['diagnosis_step']})"
        out.write(
            f"{r['index']:>3}  {names.goal(r['goal_key'])[:30]:<30} {ok:<4} "
            f"{_num(r['time_to_success']):>6} {_num(r['par_ratio']):>6}  {aligned:<7}  {diag}\n"
        )
        for e in r.get("events", ()):
            out.write(f"       {e['time']:7.1f} s  {e['kind']:<15} {e['text']}\n")
