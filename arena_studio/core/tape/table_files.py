"""Writing a tape's long-form table to Parquet, CSV or NPZ, atomically.

Same columns in every format (:mod:`arena_studio.core.tape.tables`). Parquet keeps nulls
and the tape's scene hash, scene name and dt in the schema metadata; CSV leaves a missing
value empty; NPZ (``numpy.load`` without pickle) stores one array per column, ``agent`` as
strings, missing floats as NaN and a missing ``done`` as -1 (int8), plus ``agent_ids`` and
the metadata as scalars.
"""

from __future__ import annotations

import csv
import io
import os
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from arena_studio.core.atomic import atomic_writer, make_temp, publish
from arena_studio.core.tape.tables import Columns, columns, rows_table, to_table

FORMATS = ("parquet", "csv", "npz")


def export_table(
    tape: Any,
    fmt: str,
    out: str | Path,
    indices: Sequence[int] | None = None,
    advance: Callable[[int], None] | None = None,
) -> int:
    """Write the table of ``tape`` to ``out`` in ``fmt``; returns the number of rows."""
    target = Path(out)
    if fmt == "parquet":
        return _parquet(to_table(tape, indices, advance), target)
    cols = columns(tape, indices, advance)
    if fmt == "csv":
        _csv(cols, target)
    elif fmt == "npz":
        _npz(cols, target)
    else:
        raise ValueError(f"unknown table format {fmt!r} (one of {', '.join(FORMATS)})")
    return cols.rows


def _parquet(table: Any, target: Path) -> int:
    import pyarrow.parquet as pq

    fd, tmp = make_temp(target)
    os.close(fd)
    try:
        pq.write_table(table, tmp)
        with open(tmp, "rb+") as f:
            os.fsync(f.fileno())
        publish(tmp, target)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return int(table.num_rows)


def write_rows_parquet(
    rows: Sequence[dict[str, Any]], fields: Sequence[str], out: str | Path
) -> int:
    """Per-episode rows (e.g. ``stats`` metrics) as a Parquet file; returns the row count."""
    return _parquet(rows_table(rows, fields), Path(out))


def _csv(cols: Columns, target: Path) -> None:
    text_columns = []
    for name in cols.names:
        values, ok = cols.values[name], cols.valid[name]
        if name == "agent":
            cells = cols.agent_labels().astype(str)
        elif name == "done":
            cells = np.where(values.astype(bool), "true", "false")
        elif values.dtype.kind == "f":
            cells = np.array([repr(float(v)) for v in values], dtype=object)
        else:
            cells = values.astype(str)
        if ok is not None:
            cells = np.where(ok, cells, "")
        text_columns.append(cells)
    with atomic_writer(target) as handle:
        stream = io.TextIOWrapper(handle, encoding="utf-8", newline="")
        writer = csv.writer(stream, lineterminator="\n")
        writer.writerow(cols.names)
        writer.writerows(zip(*text_columns, strict=True))
        stream.flush()
        stream.detach()


def _npz(cols: Columns, target: Path) -> None:
    arrays: dict[str, np.ndarray] = {}
    for name in cols.names:
        values, ok = cols.values[name], cols.valid[name]
        if name == "agent":
            arrays[name] = cols.agent_labels().astype(str)
            continue
        if name == "done":
            done = values.astype(np.int8)
            if ok is not None:
                done[~ok] = -1
            arrays[name] = done
            continue
        if ok is not None:
            values = values.astype(np.float64)
            values[~ok] = np.nan
        arrays[name] = values
    arrays["agent_ids"] = np.asarray(cols.agent_ids, dtype=str)
    for key, value in cols.metadata.items():
        arrays[key.replace("arena_studio.", "meta_")] = np.asarray(value)
    with atomic_writer(target) as handle:
        np.savez(handle, **arrays)  # type: ignore[arg-type]


__all__ = ["FORMATS", "export_table", "write_rows_parquet"]
