"""Tapes as tables: one row per episode, step and agent, for dataframe tools.

Columns, in order: ``episode`` (int64), ``step`` (int64), ``time`` (s, float64), ``agent``
(scene agent id), ``x``, ``y`` (m), ``heading`` (rad), ``reward`` (float64), ``done``
(bool), then ``action_0 .. action_{K-1}`` and one column per channel (a per-step channel
repeats on every agent's row; a channel named like a column above gets a ``channel_``
prefix). A value an episode did not record is null (NaN in NPZ float columns, -1 in NPZ
``done``). numpy builds the columns; pyarrow (optional extra ``[record]``) is imported only
by :func:`to_table` and :func:`rows_table`.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from arena_studio.core.tape.episode import Episode

BASE_COLUMNS = ("episode", "step", "time", "agent", "x", "y", "heading", "reward", "done")
#: consecutive episodes decoded per file read
BLOCK = 64


@dataclass
class Columns:
    """Long-form columns as numpy arrays; ``valid[name]`` is None when no value is missing."""

    names: list[str]
    values: dict[str, np.ndarray]
    valid: dict[str, np.ndarray | None]
    agent_ids: tuple[str, ...]
    rows: int
    metadata: dict[str, str] = field(default_factory=dict)

    def agent_labels(self) -> np.ndarray:
        """The ``agent`` column as scene agent id strings."""
        return np.asarray(self.agent_ids, dtype=object)[self.values["agent"]]


def _need_pyarrow() -> Any:
    try:
        import pyarrow as pa
    except ModuleNotFoundError:
        from arena_studio.core.tape.format import TapeError

        raise TapeError(
            "pyarrow", "", "tables need pyarrow: pip install 'arena-studio[record]'"
        ) from None
    return pa


def episode_parts(ep: Episode) -> dict[str, np.ndarray]:
    """One episode's columns (``agent`` as the agent's index)."""
    t, a = ep.poses.shape[:2]
    n = t * a
    steps = np.repeat(np.arange(t, dtype=np.int64), a)
    flat = ep.poses.reshape(n, 3)
    parts: dict[str, np.ndarray] = {
        "episode": np.full(n, ep.index, dtype=np.int64),
        "step": steps,
        "time": steps * ep.dt,
        "agent": np.tile(np.arange(a, dtype=np.int64), t),
        "x": flat[:, 0],
        "y": flat[:, 1],
        "heading": flat[:, 2],
    }
    if ep.rewards is not None:
        parts["reward"] = ep.rewards.reshape(n).astype(np.float64, copy=False)
    if ep.done is not None:
        parts["done"] = ep.done.reshape(n)
    if ep.actions is not None:
        acts = ep.actions.reshape(n, -1)
        for k in range(acts.shape[1]):
            parts[f"action_{k}"] = acts[:, k]
    for name, arr in ep.channels.items():
        column = f"channel_{name}" if name in BASE_COLUMNS else name
        if column in parts:  # e.g. a channel called action_0
            column = f"channel_{name}"
        parts[column] = np.repeat(arr, a) if arr.ndim == 1 else arr.reshape(n)
    return parts


def iter_episodes(
    tape: Any, indices: Sequence[int] | None = None, advance: Callable[[int], None] | None = None
) -> Iterator[Episode]:
    """Episodes in order, decoded a block of consecutive ones at a time."""
    wanted = list(range(len(tape))) if indices is None else [int(i) for i in indices]
    k = 0
    while k < len(wanted):
        run = 1
        while k + run < len(wanted) and run < BLOCK and wanted[k + run] == wanted[k] + run:
            run += 1
        for ep in tape.episodes(wanted[k], wanted[k] + run, copy=False):
            yield ep
            if advance is not None:
                advance(1)
        k += run


def columns(
    tape: Any, indices: Sequence[int] | None = None, advance: Callable[[int], None] | None = None
) -> Columns:
    """The tape's long-form columns (numpy), see the module docstring."""
    gathered: dict[str, list[tuple[int, np.ndarray | None]]] = {}
    order: list[str] = list(BASE_COLUMNS)
    sizes: list[int] = []
    for ep in iter_episodes(tape, indices, advance):
        parts = episode_parts(ep)
        e = len(sizes)
        sizes.append(ep.steps * ep.agent_count)
        for name, arr in parts.items():
            if name not in gathered:
                gathered[name] = []
                if name not in order:
                    order.append(name)
            gathered[name].append((e, arr))
    values: dict[str, np.ndarray] = {}
    valid: dict[str, np.ndarray | None] = {}
    total = sum(sizes)
    starts = np.concatenate([[0], np.cumsum(sizes)]).astype(np.int64)
    for name in order:
        got = gathered.get(name, [])
        values[name], valid[name] = _join(got, starts, total, name == "done")
    meta = {
        "arena_studio.scene_hash": str(getattr(tape, "scene_hash", "") or ""),
        "arena_studio.scene_name": tape.scene.name,
        "arena_studio.dt": repr(float(tape.dt)),
        "arena_studio.source": str(getattr(tape, "path", "")),
    }
    ids = tuple(tape.agent_ids)
    return Columns(order, values, valid, ids, total, meta)


def _join(
    got: list[tuple[int, np.ndarray | None]], starts: np.ndarray, total: int, boolean: bool
) -> tuple[np.ndarray, np.ndarray | None]:
    """One column over all episodes; rows of episodes without it are marked missing."""
    arrays = [arr for _, arr in got if arr is not None]
    if len(got) == len(starts) - 1:
        joined = np.concatenate(arrays) if arrays else np.zeros(0)
        return joined, None
    kind = bool if boolean else np.result_type(*arrays) if arrays else np.float64
    out = np.zeros(total, dtype=kind)
    ok = np.zeros(total, dtype=bool)
    for e, arr in got:
        if arr is not None:
            out[starts[e] : starts[e + 1]] = arr
            ok[starts[e] : starts[e + 1]] = True
    return out, ok


def to_table(
    tape: Any, indices: Sequence[int] | None = None, advance: Callable[[int], None] | None = None
) -> Any:
    """The tape as a ``pyarrow.Table`` in long form (see the module docstring)."""
    pa = _need_pyarrow()
    cols = columns(tape, indices, advance)
    arrays = []
    for name in cols.names:
        values, ok = cols.values[name], cols.valid[name]
        if name == "agent":
            dictionary = pa.array(list(cols.agent_ids), type=pa.string())
            indices = pa.array(values.astype(np.int32))
            arrays.append(pa.DictionaryArray.from_arrays(indices, dictionary))
            continue
        if name in ("episode", "step"):
            values = values.astype(np.int64)
        mask = None if ok is None else ~ok
        if name == "done" and values.dtype != bool:
            values = values.astype(bool)
        arrays.append(pa.array(values, mask=mask))
    schema_meta = {k.encode(): v.encode() for k, v in cols.metadata.items()}
    table = pa.Table.from_arrays(arrays, names=cols.names)
    return table.replace_schema_metadata(schema_meta)


def rows_table(rows: Iterable[dict[str, Any]], fields: Sequence[str]) -> Any:
    """Per-episode rows (e.g. metrics) as a ``pyarrow.Table`` with the given columns."""
    pa = _need_pyarrow()
    data = [{k: _plain(row.get(k)) for k in fields} for row in rows]
    return pa.Table.from_pylist(data, schema=None) if data else pa.table({k: [] for k in fields})


def _plain(value: Any) -> Any:
    if isinstance(value, float) and not np.isfinite(value):
        return None
    if isinstance(value, np.generic):
        return value.item()
    return value


__all__ = [
    "BASE_COLUMNS",
    "Columns",
    "columns",
    "episode_parts",
    "iter_episodes",
    "rows_table",
    "to_table",
]
