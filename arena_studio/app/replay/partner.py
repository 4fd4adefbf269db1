"""Which episode to compare a shown one with: the best success of the same goal.

The headline comparison is an aligned success beside a failure of the same team goal. Of the
episodes of that goal that succeeded, the best is the one nearest par (highest par time /
time taken), then the fastest, then the earliest; the shown episode itself never qualifies.
"""

from __future__ import annotations

from collections.abc import Sequence

from arena_studio.app.replay.summary import EpisodeSummary


def best_success(rows: Sequence[EpisodeSummary], shown: int) -> int | None:
    """Index of the best success sharing the goal of episode ``shown``, or None."""
    goal = next((r.goal for r in rows if r.index == shown), None)
    if goal is None:
        return None
    wins = [r for r in rows if r.goal == goal and r.success and r.index != shown]
    if not wins:
        return None

    def rank(r: EpisodeSummary) -> tuple[float, float, int]:
        ratio = r.par_ratio if r.par_ratio is not None else float("-inf")
        took = r.time_to_success if r.time_to_success is not None else float("inf")
        return (-ratio, took, r.index)

    return min(wins, key=rank).index
