"""Sweep speed: 405 tapes (3 conditions x 5 seeds x 27 steps, 50 episodes each).

Printed, each with its ratio against a baseline measured in the same run (nothing is
asserted about time; run with ``.venv/bin/pytest tests/bench/bench_runs.py -s``):

- first analysis in a process pool of W workers vs the summed per-tape stats time / W
  (target <= 1.5)
- cached re-open (scan + cache) vs the summed stats time (target: under 0.5 s absolute)
- a W-worker Dask LocalCluster vs the process pool (target <= 1.3)
- bootstrap of 10,000 replicates for 3 conditions x 30 steps (target: under 2 s)
"""

from __future__ import annotations

import time
from pathlib import Path

import numpy as np
import pytest

from arena_studio.core.runs import Execution, FigureCache, Settings, curve_rows, load_runs
from arena_studio.core.runs.analysis import Run
from arena_studio.core.runs.per_tape import TapeFigures, tape_figures
from arena_studio.core.runs.sweep import Placement, SweepTape, scan_sweep
from arena_studio.core.tape import TapeWriter
from tests.core.tape_helpers import box_scene

CONDITIONS, SEEDS, STEPS, EPISODES, T = 3, 5, 27, 50, 120
WORKERS = 2


def _write(root: Path) -> None:
    scene = box_scene()
    for c in range(CONDITIONS):
        for s in range(SEEDS):
            for k in range(STEPS):
                rng = np.random.default_rng([c, s, k])
                path = root / f"c{c}" / f"seed{s}" / f"step{k}.tape"
                path.parent.mkdir(parents=True, exist_ok=True)
                meta = {"condition": f"c{c}", "seed": s, "step": k * 1000}
                with TapeWriter(path, scene, dt=0.1, metadata=meta) as w:
                    for _ in range(EPISODES):
                        w.begin_episode(team_goal=[1, 1, 0], pursued_goals=[[1, 1, 0]] * 2)
                        walk = np.cumsum(rng.normal(0, 0.05, size=(T, 2, 3)), axis=0)
                        walk[:, :, :2] += rng.uniform(1, 9, size=(1, 2, 2))
                        w.steps(np.clip(walk, 0.5, 9.5))
                        w.end_episode({})


def _warm_cluster(root: Path):
    """Time a sweep on a 2-worker LocalCluster that is already up and warm."""
    import logging

    import distributed

    with (
        distributed.LocalCluster(
            n_workers=WORKERS,
            threads_per_worker=1,
            dashboard_address=None,
            silence_logs=logging.ERROR,
        ) as cluster,
        distributed.Client(cluster) as client,
    ):
        # as warm as the forked pool workers: modules imported, one tape's scene seen
        first = str(next(iter(sorted(root.rglob("*.tape")))))
        client.run(tape_figures, first)
        how = Execution(scheduler=cluster.scheduler_address)
        t, (runs, _) = _timed(lambda: load_runs(scan_sweep(root), how))
    return t, runs


def _timed(fn):
    t = time.perf_counter()
    out = fn()
    return time.perf_counter() - t, out


@pytest.mark.bench
def test_bench_runs(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("ARENA_STUDIO_CACHE_DIR", str(tmp_path / "cache"))
    root = tmp_path / "sweep"
    _write(root)
    sweep = scan_sweep(root)
    n = len(sweep.ready)
    summed, _ = _timed(lambda: [tape_figures(str(t.path)) for t in sweep.ready])
    pool_t, (pool_runs, _) = _timed(
        lambda: load_runs(scan_sweep(root), Execution(processes=WORKERS), FigureCache(root))
    )
    reopen_t, (cached_runs, _) = _timed(
        lambda: load_runs(scan_sweep(root), Execution(processes=WORKERS), FigureCache(root))
    )
    assert len(cached_runs) == len(pool_runs) == n
    dask_t, (dask_runs, _) = _timed(
        lambda: load_runs(scan_sweep(root), Execution(dask_workers=WORKERS))
    )
    warm_t, warm_runs = _warm_cluster(root)
    for other in (dask_runs, warm_runs):
        assert sorted((str(r.tape.path), r.figures.to_dict()) for r in other) == sorted(
            (str(r.tape.path), r.figures.to_dict()) for r in pool_runs
        )
    print(f"\n{n} tapes x {EPISODES} episodes, {WORKERS} workers")
    print(f"  summed stats            {summed:7.2f} s")
    print(
        f"  first analysis (pool)   {pool_t:7.2f} s  ratio to summed/W "
        f"{pool_t / (summed / WORKERS):5.2f}"
        "  (target <= 1.5)"
    )
    print(
        f"  cached re-open          {reopen_t:7.3f} s  ratio to summed {reopen_t / summed:7.4f}"
        "  (target < 0.5 s)"
    )
    print(
        f"  Dask LocalCluster       {dask_t:7.2f} s  ratio to pool {dask_t / pool_t:5.2f}"
        "  (cluster start and stop included)"
    )
    print(
        f"  Dask, cluster running   {warm_t:7.2f} s  ratio to pool {warm_t / pool_t:5.2f}"
        "  (target <= 1.3)"
    )
    # bootstrap: 3 conditions x 30 steps x 5 seeds, 10,000 replicates each cell
    rng = np.random.default_rng(0)
    runs = [
        Run(
            SweepTape(
                Path(f"{c}-{s}-{k}"),
                0,
                0,
                "",
                Placement(condition=f"c{c}", seed=s, step=k, task="box"),
            ),
            TapeFigures(path="", figures={"success": float(rng.random())}),
        )
        for c in range(3)
        for s in range(5)
        for k in range(30)
    ]
    boot_t, rows = _timed(lambda: curve_rows(runs, "success", settings=Settings(reps=10_000)))
    base_t, _ = _timed(lambda: np.sort(rng.random((90, 10_000, 5)), axis=-1))
    assert len(rows) == 90
    print(
        f"  bootstrap 90 cells x 10,000 reps {boot_t:6.2f} s  ratio to one sort of the "
        f"replicates {boot_t / base_t:6.1f}  (target < 2 s)"
    )
