"""``arena-studio runs SWEEP``: figures of many tapes across conditions, seeds and steps."""

from __future__ import annotations

import argparse
import csv
import json
import math
import os
import sys
from typing import Any

from arena_studio.commands.common import (
    EXIT_OK,
    EXIT_PROBLEMS,
    EXIT_UNREADABLE,
    CommandError,
    error_line,
    warning_line,
)
from arena_studio.commands.progress import progress_bar
from arena_studio.core.errors import ArenaError

HELP = "analyse a sweep of tapes: curves over steps with bootstrap intervals, final comparison"

CSV_FIELDS = (
    "metric",
    "group",
    "step",
    "runs",
    "tasks",
    "mean",
    "median",
    "iqm",
    "optimality_gap",
    "ci_low",
    "ci_high",
)


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("sweep", help="a folder of tapes, a glob pattern, or a file listing tapes")
    parser.add_argument(
        "--layout",
        metavar="PATTERN",
        help="place tapes without header keys by their path, e.g. "
        "'{condition}/seed{seed}/step{step}.tape'",
    )
    parser.add_argument(
        "--metric",
        action="append",
        metavar="NAME",
        help="per-tape figure (repeatable; default success). --metric list shows the names",
    )
    parser.add_argument(
        "--by",
        choices=("condition", "task", "seed"),
        default="condition",
        help="group runs by this key (default condition)",
    )
    parser.add_argument(
        "--at-step",
        default="last",
        metavar="N|last",
        help="step of the final comparison (default: each group's last)",
    )
    parser.add_argument(
        "--statistic",
        choices=("iqm", "mean", "median", "optimality_gap"),
        default="iqm",
        help="statistic the interval is for (default iqm)",
    )
    parser.add_argument("--reps", type=int, default=10_000, help="bootstrap replicates")
    parser.add_argument("--confidence", type=float, default=0.95, help="interval level")
    parser.add_argument("--seed", type=int, default=0, help="bootstrap random seed")
    fmt = parser.add_mutually_exclusive_group()
    fmt.add_argument("--json", action="store_true", help="print JSON")
    fmt.add_argument("--csv", action="store_true", help="print one CSV row per group and step")
    parser.add_argument(
        "--figure",
        metavar="OUT.svg|OUT.png",
        help="draw the curves and final intervals (needs matplotlib)",
    )
    where = parser.add_mutually_exclusive_group()
    where.add_argument(
        "--processes",
        type=int,
        default=None,
        metavar="N",
        help="local process pool size (default: CPU count; 1 = in this process)",
    )
    where.add_argument(
        "--workers",
        type=int,
        default=None,
        metavar="N",
        help="start a local Dask cluster of N workers (needs the cluster extra)",
    )
    where.add_argument(
        "--scheduler", metavar="ADDRESS", help="use a running Dask scheduler, e.g. tcp://host:8786"
    )
    parser.add_argument("--no-cache", action="store_true", help="ignore and keep no cache")
    parser.add_argument("--quiet", action="store_true", help="no progress bar")


def run(args: argparse.Namespace) -> int:
    from arena_studio.core.runs import FigureCache, load_runs, scan_sweep
    from arena_studio.core.runs.sweep import SweepError

    try:
        settings, at_step, how = _options(args)
        sweep = scan_sweep(args.sweep, args.layout)
    except CommandError as exc:
        error_line(str(exc))
        return exc.code
    except SweepError as exc:
        error_line(str(exc))
        return EXIT_UNREADABLE
    for tape in sweep.recording:
        warning_line(f"{tape.path}: still recording, not analysed")
    if not sweep.ready:
        for tape in sweep.problems:
            error_line(str(tape.problem))
        error_line(f"{args.sweep}: no finished, placed tapes to analyse")
        return EXIT_UNREADABLE
    cache = None if args.no_cache else FigureCache(sweep.root)
    try:
        with progress_bar(len(sweep.ready), "runs", args.quiet) as bar:
            runs, problems = load_runs(sweep, how, cache, bar.advance)
    except KeyboardInterrupt:
        error_line("interrupted" + ("" if cache is None else " (finished tapes are cached)"))
        return 130
    except ArenaError as exc:
        error_line(str(exc))
        return EXIT_UNREADABLE
    for text in problems:
        warning_line(text)
    if not runs:
        error_line(f"{args.sweep}: no tape could be analysed")
        return EXIT_UNREADABLE
    try:
        return _report(args, runs, problems, settings, at_step)
    except CommandError as exc:
        error_line(str(exc))
        return exc.code
    except KeyboardInterrupt:
        error_line("interrupted")
        return 130


def _options(args: argparse.Namespace) -> tuple[Any, int | None, Any]:
    """(bootstrap settings, final step or None for the last, how to compute)."""
    from arena_studio.core.runs import Execution, Settings

    if args.reps < 1:
        raise CommandError("--reps: expected a whole number >= 1")
    if not 0 < args.confidence < 1:
        raise CommandError("--confidence: expected a number between 0 and 1, e.g. 0.95")
    at_step: int | None = None
    if args.at_step != "last":
        try:
            at_step = int(args.at_step)
        except ValueError:
            raise CommandError(
                f"--at-step {args.at_step!r}: expected a step number or 'last'"
            ) from None
    if args.figure and not args.figure.lower().endswith((".svg", ".png", ".pdf")):
        raise CommandError(f"--figure {args.figure}: expected a .svg, .png or .pdf file name")
    if args.workers is not None and args.workers < 1:
        raise CommandError("--workers: expected a whole number >= 1")
    processes = args.processes if args.processes is not None else (os.cpu_count() or 1)
    if processes < 1:
        raise CommandError("--processes: expected a whole number >= 1")
    how = Execution(processes=processes, scheduler=args.scheduler, dask_workers=args.workers or 0)
    settings = Settings(
        statistic=args.statistic, reps=args.reps, confidence=args.confidence, seed=args.seed
    )
    return settings, at_step, how


def _report(
    args: argparse.Namespace,
    runs: list[Any],
    problems: list[str],
    settings: Any,
    at_step: int | None,
) -> int:
    from arena_studio.core.runs import curve_rows, final_comparison, metric_names

    names = metric_names(runs)
    metrics = args.metric or ["success"]
    if "list" in metrics:
        sys.stdout.write("\n".join(names) + "\n")
        return EXIT_OK
    for m in metrics:
        if m not in names:
            raise CommandError(f"--metric {m}: not a figure of these tapes (see --metric list)")
    curves = {m: curve_rows(runs, m, args.by, settings) for m in metrics}
    finals = {m: final_comparison(runs, m, args.by, at_step, settings) for m in metrics}
    if at_step is not None and not any(f.rows for f in finals.values()):
        raise CommandError(f"--at-step {at_step}: no tape has that step")
    if args.figure:
        _figure(args.figure, curves[metrics[0]], finals[metrics[0]], settings)
    try:
        if args.json:
            _print_json(args, curves, finals, problems, settings)
        elif args.csv:
            _print_csv(curves)
        else:
            _print_text(curves, finals, settings, args.by)
    except BrokenPipeError:
        sys.stderr.close()
    return EXIT_PROBLEMS if problems else EXIT_OK


def _figure(path: str, rows: list[Any], final: Any, settings: Any) -> None:
    try:
        from arena_studio.render.runs_figure import save_runs_figure
    except ImportError as exc:
        raise CommandError(f"--figure: matplotlib is needed ({exc})") from None
    try:
        save_runs_figure(path, rows, final, settings)
    except OSError as exc:
        raise CommandError(f"--figure {path}: cannot write ({exc.strerror or exc})") from None


def _clean(value: Any) -> Any:
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_clean(v) for v in value]
    return value


def _print_json(
    args: argparse.Namespace,
    curves: dict[str, list[Any]],
    finals: dict[str, Any],
    problems: list[str],
    settings: Any,
) -> None:
    doc = {
        "sweep": args.sweep,
        "by": args.by,
        "statistic": settings.statistic,
        "reps": settings.reps,
        "confidence": settings.confidence,
        "seed": settings.seed,
        "metrics": {
            m: {"curve": [r.to_dict() for r in rows], "final": finals[m].to_dict()}
            for m, rows in curves.items()
        },
        "problems": problems,
    }
    json.dump(_clean(doc), sys.stdout, indent=2)
    sys.stdout.write("\n")


def _print_csv(curves: dict[str, list[Any]]) -> None:
    writer = csv.writer(sys.stdout, lineterminator="\n")
    writer.writerow(CSV_FIELDS)
    for rows in curves.values():
        for r in rows:
            d = r.to_dict()
            writer.writerow(["" if _clean(d[k]) is None else d[k] for k in CSV_FIELDS])


def _f(v: float) -> str:
    return "-" if not math.isfinite(v) else f"{v:.3f}"


def _print_text(
    curves: dict[str, list[Any]], finals: dict[str, Any], settings: Any, by: str
) -> None:
    out = sys.stdout
    level = f"{100 * settings.confidence:g}%"
    for metric, rows in curves.items():
        out.write(
            f"{metric}: {settings.statistic} over runs, {level} stratified bootstrap "
            f"interval ({settings.reps} replicates, seed {settings.seed})\n"
        )
        width = max([len(by), *(len(r.group) for r in rows)])
        out.write(
            f"  {by:<{width}} {'step':>9} {'runs':>5} {'mean':>7} {'median':>7} "
            f"{'iqm':>7} {'low':>7} {'high':>7}\n"
        )
        for r in rows:
            out.write(
                f"  {r.group:<{width}} {r.step:>9} {r.runs:>5} {_f(r.mean):>7} "
                f"{_f(r.median):>7} {_f(r.iqm):>7} {_f(r.ci_low):>7} {_f(r.ci_high):>7}\n"
            )
        final = finals[metric]
        if final.rows:
            out.write("  final:\n")
            for r in final.rows:
                out.write(
                    f"    {r.group:<{width}} step {r.step}: {settings.statistic} "
                    f"{_f(getattr(r, settings.statistic))} [{_f(r.ci_low)}, "
                    f"{_f(r.ci_high)}] over {r.runs} run(s)\n"
                )
            for (a, b), p in final.improvement.items():
                if a < b:
                    out.write(f"    P({a} > {b}) = {_f(p)}\n")
        out.write("\n")
