"""Computing per-tape figures serially, in a local process pool, or on Dask.

Work is split into groups of tapes (one task per group, never per episode); a task returns
only the figures of its tapes (plain dicts of numbers), never poses. Every way runs the same
function (:func:`per_tape.group_figures`) on the same tapes, so the results are identical.

Dask (``pip install 'arena-studio[cluster]'``) is imported only when asked for: ``scheduler``
is the address of a running scheduler (tapes must be on a file system the workers share, and
arena_studio installed on them); ``dask_workers`` starts a local cluster of that many worker
processes for the duration of the call.
"""

from __future__ import annotations

import importlib
import logging
import multiprocessing
import signal
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass
from typing import Any

from arena_studio.core.errors import ArenaError
from arena_studio.core.runs.per_tape import TapeFigures, group_figures

#: tasks per worker: enough to balance uneven tapes, few enough to keep overhead small
TASKS_PER_WORKER = 4
#: at most this many tapes a task (progress stays fine-grained, Ctrl+C quick)
MAX_GROUP = 25
#: how long to wait for a Dask scheduler to answer
CONNECT_TIMEOUT = "5s"


@dataclass(frozen=True)
class Execution:
    """How to compute: ``processes`` 0/1 = serial; or a Dask scheduler / local Dask cluster."""

    processes: int = 0
    scheduler: str | None = None
    dask_workers: int = 0
    mp_context: str | None = None

    @property
    def kind(self) -> str:
        if self.scheduler:
            return "dask"
        if self.dask_workers > 0:
            return "local dask"
        return "pool" if self.processes > 1 else "serial"


def split_groups(paths: Sequence[str], workers: int) -> list[list[str]]:
    """Contiguous groups of about ``len(paths) / (workers * TASKS_PER_WORKER)`` tapes, at
    most MAX_GROUP each."""
    n = len(paths)
    if n == 0:
        return []
    count = min(n, max(max(1, workers) * TASKS_PER_WORKER, -(-n // MAX_GROUP)))
    size, extra = divmod(n, count)
    groups, pos = [], 0
    for i in range(count):
        take = size + (1 if i < extra else 0)
        groups.append(list(paths[pos : pos + take]))
        pos += take
    return groups


def compute_figures(
    paths: Sequence[str],
    how: Execution | None = None,
    advance: Callable[[int], None] | None = None,
    into: dict[str, TapeFigures] | None = None,
) -> dict[str, TapeFigures]:
    """Figures of every tape in ``paths``, keyed by path; ``advance(n)`` after each group.

    Results are added to ``into`` (when given) as each group arrives, so a caller keeps what
    was finished when the computation is interrupted."""
    results: dict[str, TapeFigures] = {} if into is None else into
    for batch in _batches(list(paths), how or Execution()):
        for d in batch:
            fig = TapeFigures.from_dict(d)
            results[fig.path] = fig
        if advance is not None:
            advance(len(batch))
    return results


def _batches(paths: list[str], how: Execution) -> Iterator[list[dict[str, Any]]]:
    if not paths:
        return iter(())
    if how.kind == "serial":
        return (group_figures([p]) for p in paths)
    if how.kind == "pool":
        return _pool(paths, how)
    return _dask(paths, how)


def _ignore_interrupt() -> None:
    """Pool workers leave Ctrl+C to the parent, which cancels the pool."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _pool(paths: list[str], how: Execution) -> Iterator[list[dict[str, Any]]]:
    ctx = multiprocessing.get_context(how.mp_context) if how.mp_context else None
    pool = ProcessPoolExecutor(how.processes, mp_context=ctx, initializer=_ignore_interrupt)
    try:
        futures = [pool.submit(group_figures, g) for g in split_groups(paths, how.processes)]
        for fut in as_completed(futures):
            yield fut.result()
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _dask(paths: list[str], how: Execution) -> Iterator[list[dict[str, Any]]]:
    try:  # typed as Any: distributed has no type hints
        distributed: Any = importlib.import_module("distributed")
    except ImportError:
        raise ArenaError(
            "Dask is not installed; pip install 'arena-studio[cluster]' (or drop --workers/"
            "--scheduler to use a local process pool)"
        ) from None
    cluster = None
    try:
        if how.scheduler:
            client = distributed.Client(how.scheduler, timeout=CONNECT_TIMEOUT)
            workers = max(1, len(client.scheduler_info().get("workers", {})))
        else:
            cluster = distributed.LocalCluster(
                n_workers=how.dask_workers,
                threads_per_worker=1,
                processes=True,
                dashboard_address=None,
                silence_logs=logging.ERROR,
            )
            client = distributed.Client(cluster)
            workers = how.dask_workers
    except (OSError, TimeoutError, RuntimeError) as exc:
        if cluster is not None:
            cluster.close()
        where = how.scheduler or "local cluster"
        first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise ArenaError(f"{where}: cannot start or reach the Dask scheduler ({first})") from None
    try:
        futures = client.map(group_figures, split_groups(paths, workers), pure=False)
        try:
            for fut in distributed.as_completed(futures):
                yield fut.result()
        finally:
            client.cancel(futures)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


__all__ = ["Execution", "compute_figures", "split_groups"]
