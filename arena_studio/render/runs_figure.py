"""A figure of a sweep for papers: curves over steps with interval bands, and final intervals.

Drawn with matplotlib (imported here only; the ``test`` and ``plots`` extras bring it) on its
non-interactive Agg canvas, as SVG (text kept as text), PDF or PNG. Groups differ by line
style and marker as well as colour, and the colours by lightness, so a greyscale print keeps
them apart.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any, cast

#: colours of our own, dark to light (distinct in greyscale), with line styles and markers
COLOURS = ("#1d2b4a", "#b4521f", "#6fa99a", "#7a4f8f", "#c9a227", "#4a4a4a")
DASHES = ("-", "--", ":", "-.", (0, (5, 1, 1, 1)), (0, (1, 2)))
MARKERS = ("o", "s", "^", "D", "v", "P")


def style(i: int) -> dict[str, Any]:
    """Line style of the i-th group (cycles after six)."""
    n = len(COLOURS)
    return {"color": COLOURS[i % n], "linestyle": DASHES[i % n], "marker": MARKERS[i % n]}


def _rc() -> dict[str, Any]:
    return {
        "font.family": "DejaVu Sans",
        "font.size": 8.5,
        "axes.spines.top": False,
        "axes.spines.right": False,
        "axes.linewidth": 0.7,
        "axes.edgecolor": "#333333",
        "axes.grid": True,
        "grid.color": "#dddddd",
        "grid.linewidth": 0.5,
        "xtick.major.width": 0.6,
        "ytick.major.width": 0.6,
        "legend.frameon": False,
        "svg.fonttype": "none",
        "svg.hashsalt": "arena-studio",
    }


def save_runs_figure(path: str | Path, rows: list[Any], final: Any, settings: Any) -> None:
    """Write curves of ``rows`` (analysis.Row) and the intervals of ``final`` to ``path``."""
    import matplotlib

    matplotlib.use("Agg", force=False)
    import matplotlib.pyplot as plt

    stat = settings.statistic
    groups = list(dict.fromkeys(r.group for r in rows))
    level = f"{100 * settings.confidence:g}%"
    with plt.rc_context(cast(Any, _rc())):
        fig, (left, right) = plt.subplots(
            1,
            2,
            figsize=(7.2, 2.9),
            gridspec_kw={"width_ratios": [2.2, 1]},
            layout="constrained",
        )
        try:
            for i, g in enumerate(groups):
                mine = [r for r in rows if r.group == g]
                _curve(left, mine, stat, style(i), g)
            left.set_xlabel("step")
            left.set_ylabel(f"{rows[0].metric if rows else ''} ({stat})")
            left.set_title(f"{stat} over runs, {level} interval band", loc="left")
            fig.legend(loc="outside lower center", ncols=min(len(groups), 4), handlelength=3.2)
            _final(right, final, groups, stat, level)
            path = Path(path)
            fig.savefig(path, dpi=200, metadata=_metadata(path))
        finally:
            plt.close(fig)


def _metadata(path: Path) -> dict[str, Any]:
    suffix = path.suffix.lower()
    if suffix == ".svg":
        return {"Date": None, "Creator": "arena-studio"}
    if suffix == ".pdf":
        return {"CreationDate": None, "Creator": "arena-studio"}
    return {"Software": "arena-studio"}


def _curve(ax: Any, rows: list[Any], stat: str, st: dict[str, Any], label: str) -> None:
    xs = [r.step for r in rows]
    ys = [getattr(r, stat) for r in rows]
    ax.fill_between(
        xs,
        [r.ci_low for r in rows],
        [r.ci_high for r in rows],
        color=st["color"],
        alpha=0.16,
        linewidth=0,
    )
    ax.plot(
        xs,
        [r.ci_low for r in rows],
        color=st["color"],
        linestyle=st["linestyle"],
        linewidth=0.5,
        alpha=0.6,
    )
    ax.plot(
        xs,
        [r.ci_high for r in rows],
        color=st["color"],
        linestyle=st["linestyle"],
        linewidth=0.5,
        alpha=0.6,
    )
    ax.plot(xs, ys, label=label, linewidth=1.6, markersize=4, **st)


def _final(ax: Any, final: Any, groups: list[str], stat: str, level: str) -> None:
    order = [g for g in groups if any(r.group == g for r in final.rows)]
    for i, g in enumerate(order):
        r = next(r for r in final.rows if r.group == g)
        st = style(groups.index(g))
        y = len(order) - 1 - i
        ax.errorbar(
            [getattr(r, stat)],
            [y],
            xerr=[[getattr(r, stat) - r.ci_low], [r.ci_high - getattr(r, stat)]],
            color=st["color"],
            linewidth=1.8,
            capsize=4,
            capthick=1.4,
            linestyle="none",
        )
        ax.plot(
            [getattr(r, stat)],
            [y],
            color=st["color"],
            marker=st["marker"],
            markersize=6,
            markeredgecolor="white",
            markeredgewidth=0.8,
            linestyle="none",
        )
    steps = {_step(final, g) for g in order}
    names = [g if len(steps) == 1 else f"{g}\n(step {_step(final, g)})" for g in reversed(order)]
    ax.set_yticks(range(len(order)), names)
    ax.set_ylim(-0.6, len(order) - 0.4)
    ax.grid(axis="y", visible=False)
    ax.set_xlabel(f"{final.metric} ({stat})")
    where = f"step {steps.pop()}" if len(steps) == 1 else "final steps"
    ax.set_title(f"{where}, {level} interval", loc="left")
    if len(order) == 2:
        a, b = order
        p = final.improvement.get((a, b))
        if p is not None:
            ax.text(0.0, -0.32, f"P({a} > {b}) = {p:.2f}", transform=ax.transAxes, fontsize=8)


def _step(final: Any, group: str) -> int:
    return next(r.step for r in final.rows if r.group == group)


__all__ = ["COLOURS", "DASHES", "MARKERS", "save_runs_figure", "style"]
