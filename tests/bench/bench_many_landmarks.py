"""Benchmark: par times of 3,000 one-hot goals (3,000 landmarks, 3 agents, one of them with a
start region), from one search per agent start versus one distance field per landmark.

Run with ``make bench`` (or ``pytest tests/bench/bench_many_landmarks.py -s``). Prints the
seconds for all 3,000 goals the current way, the seconds the field-per-landmark way needs for
the first ``OLD_LANDMARKS`` of them (the whole table takes minutes that way; set
``BENCH_FULL=1`` to time all of it), the per-goal times and their ratio, all measured in this
run (CPU seconds of this process). Both ways give the same par times
(tests/core/geometry/test_start_search.py).
"""

from __future__ import annotations

import dataclasses
import os
import time

from arena_studio.core.geometry.paths import PathPlanner
from arena_studio.core.planning.goal_set import enumerate_goals
from arena_studio.core.planning.partime import plan_all
from tests.core.geometry.test_start_search import many_landmarks_scene

LANDMARKS = 3000
OLD_LANDMARKS = 300


def _timed(scene, per_landmark_fields: bool) -> tuple[float, int]:
    planner = PathPlanner(scene, per_landmark_fields=per_landmark_fields)
    table = enumerate_goals(scene)
    t0 = time.process_time()  # CPU time of this process: other work on the machine left out
    plans = plan_all(scene, table, planner=planner)
    return time.process_time() - t0, sum(p.feasible for p in plans)


def test_bench_many_landmarks() -> None:
    scene = many_landmarks_scene(LANDMARKS, seed=1)
    _timed(many_landmarks_scene(20, seed=2), False)  # warm imports
    new, ok = _timed(scene, False)
    count = LANDMARKS if os.environ.get("BENCH_FULL") else OLD_LANDMARKS
    part = dataclasses.replace(scene, landmarks=scene.landmarks[:count])
    old, _ = _timed(part, True)
    new_each, old_each = new / LANDMARKS, old / count
    print(
        f"\n{LANDMARKS} landmarks x 3 agents, one-hot goals ({ok} feasible): search per start "
        f"{new:.2f} CPU s ({1e3 * new_each:.2f} ms a goal); field per landmark {old:.2f} s for "
        f"{count} ({1e3 * old_each:.2f} ms a goal, about {old_each * LANDMARKS:.0f} s for all); "
        f"ratio {old_each / new_each:.1f}x"
    )
