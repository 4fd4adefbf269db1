"""Tape speed: write, lazy open, one middle episode, stats, and a 1,000,000-step episode.

Each timing is printed with its ratio against the memory-speed floor measured in the same run:
reading the same bytes from the file and ``np.frombuffer`` over them. Run with
``.venv/bin/pytest tests/bench/bench_tape.py -s``. Nothing is asserted about time.
"""

from __future__ import annotations

import time
from pathlib import Path

import numpy as np

from arena_studio.core.analysis.metrics import episode_metrics, summarize_metrics
from arena_studio.core.analysis.metrics_batch import tape_metrics
from arena_studio.core.scene.model import Scene
from arena_studio.core.tape import TapeWriter, open_tape

EPISODES, STEPS, AGENTS = 2000, 500, 4


def _scene() -> Scene:
    return Scene.from_dict(
        {
            "format": "arena-studio.scene",
            "version": 1,
            "name": "bench",
            "units": "m",
            "rooms": [{"id": "room", "outline": [[0, 0], [20, 0], [20, 20], [0, 20]]}],
            "obstacles": [],
            "landmarks": [
                {
                    "id": f"l{i}",
                    "label": f"l{i}",
                    "position": [2 + 4 * i, 10],
                    "reach_radius": 0.5,
                    "mount": "free",
                }
                for i in range(4)
            ],
            "agents": [
                {
                    "id": f"a{i}",
                    "radius": 0.25,
                    "max_speed": 1.0,
                    "max_turn_rate": 2.0,
                    "start": {"pose": [1 + i, 1, 0]},
                }
                for i in range(AGENTS)
            ],
            "goals": {"rule": "all_at_once", "hold_time": 0.0, "families": [2], "vectors": []},
        }
    )


def _floor(path: Path, repeat: int = 3) -> float:
    best = np.inf
    for _ in range(repeat):
        t = time.perf_counter()
        data = path.read_bytes()
        np.frombuffer(data, dtype=np.uint8)
        best = min(best, time.perf_counter() - t)
    return best


def _best(fn, repeat: int = 5) -> float:
    best = np.inf
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def test_bench_tape(tmp_path: Path) -> None:
    scene = _scene()
    rng = np.random.default_rng(0)
    block = rng.uniform(0, 20, size=(STEPS, AGENTS, 3))
    goal = np.array([1, 1, 0, 0], dtype=np.uint8)
    path = tmp_path / "bench.tape"
    t = time.perf_counter()
    with TapeWriter(path, scene, dt=0.1) as w:
        for _ in range(EPISODES):
            w.begin_episode(team_goal=goal, pursued_goals=[goal] * AGENTS)
            w.steps(block)
            w.end_episode()
    write = time.perf_counter() - t
    size = path.stat().st_size
    floor = _floor(path)
    agent_steps = EPISODES * STEPS * AGENTS
    print(f"\n[tape] {EPISODES} x {STEPS} x {AGENTS}: {size / 1e6:.1f} MB")
    print(f"[tape] floor (read + np.frombuffer): {floor * 1e3:.1f} ms")
    print(
        f"[tape] write {write:.2f} s = {size / write / 1e6:.0f} MB/s, "
        f"{agent_steps / write / 1e6:.1f} M agent-steps/s ({write / floor:.1f}x floor)"
    )
    opened = _best(lambda: open_tape(path))
    print(f"[tape] lazy open {opened * 1e3:.2f} ms ({opened / floor:.3f}x floor; target < 50 ms)")
    tape = open_tape(path)
    middle = _best(lambda: tape.episode(EPISODES // 2))
    ep_floor = (
        floor * (tape._entries[EPISODES // 2].end - tape._entries[EPISODES // 2].begin) / size
    )
    print(
        f"[tape] middle episode {middle * 1e3:.3f} ms ({middle / floor:.4f}x whole-file floor, "
        f"{middle / ep_floor:.1f}x its own bytes' floor; target < 5 ms)"
    )
    t = time.perf_counter()
    metrics = [episode_metrics(scene, ep) for ep in tape]
    summarize_metrics(scene, metrics)
    one_by_one = time.perf_counter() - t
    print(f"[tape] stats episode by episode {one_by_one:.2f} s ({one_by_one / floor:.1f}x floor)")
    stats = _best(lambda: summarize_metrics(scene, tape_metrics(tape)), repeat=3)
    print(
        f"[tape] full stats (batched, as `arena-studio stats`) {stats:.3f} s "
        f"({stats / floor:.1f}x floor; target within 5x; {one_by_one / stats:.0f}x faster)"
    )
    t = time.perf_counter()
    for ep in tape:
        ep.poses.sum()
    decode_all = time.perf_counter() - t
    print(f"[tape] decode every episode {decode_all:.2f} s ({decode_all / floor:.1f}x floor)")

    long_path = tmp_path / "long.tape"
    long_steps = 1_000_000
    poses = rng.uniform(0, 20, size=(long_steps, AGENTS, 3))
    t = time.perf_counter()
    with TapeWriter(long_path, scene, dt=0.1) as w:
        w.begin_episode()
        w.steps(poses)
        w.end_episode()
    long_write = time.perf_counter() - t
    long_floor = _floor(long_path)
    long_tape = open_tape(long_path)
    long_read = _best(lambda: long_tape.episode(0), repeat=3)
    unchecked = _best(lambda: long_tape.episode(0, verify=False), repeat=3)
    assert np.array_equal(long_tape.episode(0).poses, poses)
    print(
        f"[tape] 1,000,000 x {AGENTS}: write {long_write:.2f} s "
        f"({long_steps * AGENTS / long_write / 1e6:.1f} M agent-steps/s); floor "
        f"{long_floor * 1e3:.0f} ms; all poses {long_read * 1e3:.0f} ms with CRC "
        f"({long_read / long_floor:.1f}x), {unchecked * 1e3:.0f} ms without "
        f"({unchecked / long_floor:.1f}x); target < 100 ms"
    )
