"""Timing of the scene checker on the demo scenes, cold (caches cleared) and warm.

Run with `.venv/bin/pytest tests/bench -s`. Prints timings and the cold/warm ratio measured in
this one run; asserts nothing about speed (the machine is shared and noisy).
"""

from __future__ import annotations

import statistics
import time
from pathlib import Path

from arena_studio.core.checks import reach as checks_reach
from arena_studio.core.checks.checker import check_scene
from arena_studio.core.geometry import regions as geometry
from arena_studio.core.scene.model import load_scene

SCENES = sorted((Path(__file__).resolve().parents[2] / "scenes").glob("*.scene.json"))
BROKEN = Path(__file__).resolve().parents[1] / "data" / "broken.scene.json"


def _clear() -> None:
    for fn in (
        geometry.walkable_area,
        geometry.obstacle_area,
        geometry.open_area,
        geometry.free_space,
        geometry.wall_lines,
        checks_reach.reach_table,
    ):
        fn.cache_clear()


def _time(fn, repeat: int) -> float:
    samples = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        samples.append(time.perf_counter() - t0)
    return statistics.median(samples)


def test_bench_check_scene() -> None:
    print()
    for path in [*SCENES, BROKEN]:
        scene = load_scene(path)

        def cold(scene=scene) -> None:
            _clear()
            check_scene(scene)

        t_cold = _time(cold, 20)
        check_scene(scene)
        t_warm = _time(lambda scene=scene: check_scene(scene), 20)
        print(
            f"{path.name:28s} cold {t_cold * 1e3:7.2f} ms   warm {t_warm * 1e3:7.2f} ms   "
            f"cold/warm {t_cold / t_warm:5.1f}x"
        )
