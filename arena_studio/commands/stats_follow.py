"""``arena-studio stats --follow TAPE``: a line per episode as the writer finishes it.

The tape (or its ``.partial`` while a trainer records) is polled every ``--interval``
seconds; each finished episode prints one line and the running success and alignment rates.
When the writer closes the tape the command prints the totals and exits 0; Ctrl+C stops it
cleanly (also exit 0, after the totals). Damage met on the way is a warning: the episodes
before it are kept.
"""

from __future__ import annotations

import argparse
import csv
import json
import sys
import time
from collections.abc import Callable
from typing import Any

from arena_studio.commands.common import EXIT_OK, CommandError, warning_line
from arena_studio.core.errors import ArenaError
from arena_studio.core.export.text_safety import csv_cell
from arena_studio.core.wording import LandmarkNames

Sleep = Callable[[float], None]


def wait(seconds: float) -> None:
    """Between two polls (tests replace this function, never the clock)."""
    time.sleep(seconds)


def run_follow(args: argparse.Namespace, sleep: Sleep | None = None) -> int:
    from arena_studio.commands.stats import ROW_FIELDS, _clean
    from arena_studio.core.analysis.metrics import episode_metrics, summarize_metrics
    from arena_studio.core.tape.follow import follow_tape

    if not args.interval > 0:
        raise CommandError("--interval: expected seconds > 0")
    if args.parquet or args.episode is not None:
        option = "--parquet" if args.parquet else "--episode"
        raise CommandError(f"{option} cannot be used with --follow")
    try:
        tape = follow_tape(args.tape)
    except (ArenaError, OSError) as exc:
        raise CommandError(str(exc)) from None
    out = sys.stdout
    table = csv.writer(out, lineterminator="\n") if args.csv else None
    if table is not None:
        table.writerow(ROW_FIELDS)
    else:
        state = "being written" if tape.path != tape.final else "finished"
        print(f"{tape.path}: following ({state}); Ctrl+C stops", file=sys.stderr)
    metrics: list[Any] = []
    names = LandmarkNames.of(tape.scene)  # the lines a person reads name landmarks by label
    try:
        while True:
            for i in tape.poll():
                m = episode_metrics(tape.scene, tape.episode(i))
                metrics.append(m)
                _emit(args, table, m.to_dict(), metrics, ROW_FIELDS, _clean, names)
            out.flush()
            if not tape.recording:
                break
            (sleep or wait)(args.interval)
    except KeyboardInterrupt:
        print("stopped following", file=sys.stderr)
    if tape.problem is not None:
        warning_line(tape.recovery_message or tape.problem)
    if table is None and not args.json:
        summary = summarize_metrics(tape.scene, metrics)
        print(
            f"{tape.path}: {len(metrics)} episode(s), success {_pct(summary['success_rate'])}, "
            f"alignment {_pct(summary['alignment_rate'])}"
            + ("" if tape.finished else " (the writer had not finished)")
        )
    return EXIT_OK


def _emit(
    args: argparse.Namespace,
    table: Any,
    row: dict[str, Any],
    metrics: list[Any],
    fields: tuple[str, ...],
    clean: Callable[[Any], Any],
    names: LandmarkNames,
) -> None:
    if table is not None:
        table.writerow(["" if row.get(k) is None else csv_cell(row[k]) for k in fields])
    elif args.json:
        print(json.dumps(clean({k: row.get(k) for k in fields})))
    else:
        ok = sum(1 for m in metrics if m.success)
        aligned = [m.aligned for m in metrics if m.aligned is not None]
        from arena_studio.core.analysis.diagnosis_words import diagnosis_words

        said = diagnosis_words(row["diagnosis"], names, row.get("diagnosis_code"))
        diag = f", {said}" if said else ""
        rate = f"{100 * sum(aligned) / len(aligned):.0f}%" if aligned else "-"
        print(
            f"episode {row['index']:>4}: {'success' if row['success'] else 'failed '} "
            f"{row['steps']:>5} steps{diag}  | {len(metrics)} so far: success "
            f"{100 * ok / len(metrics):.0f}%, aligned {rate}"
        )


def _pct(value: float | None) -> str:
    return "-" if value is None else f"{100 * value:.0f}%"
