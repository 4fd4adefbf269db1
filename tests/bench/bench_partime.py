"""Benchmark: goals + par time for 12 landmarks, 4 agents, 3 obstacles, 1/2/3-hot goals.

Run with ``.venv/bin/pytest tests/bench -s``. Prints seconds for the whole goal table with the
shared path cache (one PathPlanner: visibility graph per agent radius, distance field per
radius and landmark) and for naive recomputation (a fresh planner for every goal), and their
ratio, both measured in this run. Target: the cached run under 1 s on this machine.
"""

from __future__ import annotations

import dataclasses
import math
import time

from arena_studio.core.geometry.paths import PathPlanner
from arena_studio.core.planning.goal_set import enumerate_goals
from arena_studio.core.planning.partime import plan_all, plan_goal
from arena_studio.core.scene.model import (
    Agent,
    Circle,
    GoalSpec,
    Landmark,
    Obstacle,
    Room,
    Scene,
    Start,
)


def bench_scene() -> Scene:
    """A 30 x 20 m hall with a side room, two shelf rows and a column (demo data)."""
    landmarks = []
    for i in range(12):
        angle = 2 * math.pi * i / 12
        x = 15 + 11 * math.cos(angle)
        y = 10 + 7.5 * math.sin(angle)
        landmarks.append(Landmark(f"m{i:02d}", f"Marker {i}", (x, y), 0.5))
    agents = tuple(
        Agent(f"bot-{k}", r, v, 1.5, Start(pose=(x, y, 0.0)))
        for k, (r, v, x, y) in enumerate(
            [(0.25, 1.0, 2, 2), (0.25, 0.8, 28, 2), (0.35, 0.6, 2, 18), (0.3, 1.2, 28, 18)]
        )
    )
    return Scene(
        name="bench hall",
        rooms=(
            Room("hall", ((0, 0), (30, 0), (30, 20), (0, 20))),
            Room("side", ((30, 6), (36, 6), (36, 14), (30, 14))),
        ),
        obstacles=(
            Obstacle("shelf-a", outline=((6, 6), (24, 6), (24, 7), (6, 7))),
            Obstacle("shelf-b", outline=((6, 13), (24, 13), (24, 14), (6, 14))),
            Obstacle("column", circle=Circle((15, 10), 1.0)),
        ),
        landmarks=tuple(landmarks),
        agents=agents,
        goals=GoalSpec(rule="all_at_once", families=(1, 2, 3)),
    )


def _cached(scene: Scene) -> tuple[float, int]:
    t0 = time.perf_counter()
    plans = plan_all(scene, planner=PathPlanner(scene))  # a fresh cache: paths computed here
    return time.perf_counter() - t0, sum(p.feasible for p in plans)


def _naive(scene: Scene) -> tuple[float, int]:
    t0 = time.perf_counter()
    table = enumerate_goals(scene)
    feasible = 0
    for i in range(len(table)):
        feasible += plan_goal(scene, table.vectors[i], planner=PathPlanner(scene)).feasible
    return time.perf_counter() - t0, feasible


def test_bench_partime() -> None:
    scene = bench_scene()
    table = enumerate_goals(scene)
    assert len(table) == 12 + 66 + 220 == 298
    _cached(scene)  # warm imports and the geometry cache shared by both runs
    cached, ok_cached = min(_cached(scene) for _ in range(3))
    naive, ok_naive = _naive(scene)
    assert ok_cached == ok_naive
    print(
        f"\npar time, {len(table)} goals, 4 agents, all_at_once: cached {cached:.3f} s, "
        f"naive {naive:.3f} s, naive/cached {naive / cached:.1f}x (target: cached < 1 s)"
    )
    visited = dataclasses.replace(scene, goals=dataclasses.replace(scene.goals, rule="all_visited"))
    seconds, ok = _cached(visited)
    print(
        f"par time, {len(table)} goals, all_visited (exact orders): {seconds:.3f} s, {ok} feasible"
    )
