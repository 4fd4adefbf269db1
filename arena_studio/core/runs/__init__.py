"""Sweeps of tapes (conditions x seeds x steps): finding them, per-tape figures (cached,
computed serially, in a process pool or on Dask) and statistics across runs.

::

    from arena_studio.core.runs import scan_sweep, load_runs, curve_rows, final_comparison
"""

from __future__ import annotations

from arena_studio.core.runs.analysis import (
    Final,
    Row,
    Run,
    Settings,
    curve_rows,
    final_comparison,
    load_runs,
    metric_names,
)
from arena_studio.core.runs.cache import FigureCache
from arena_studio.core.runs.execute import Execution, compute_figures
from arena_studio.core.runs.sweep import Sweep, SweepError, SweepTape, scan_sweep

__all__ = [
    "Execution",
    "FigureCache",
    "Final",
    "Row",
    "Run",
    "Settings",
    "Sweep",
    "SweepError",
    "SweepTape",
    "compute_figures",
    "curve_rows",
    "final_comparison",
    "load_runs",
    "metric_names",
    "scan_sweep",
]
