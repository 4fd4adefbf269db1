"""A synthetic episode on the bundled greenhouse demo scene (our own scenario, demo data).

Team goal: Seed tray + Water tank (cooperative). rover-1 drives to the water tank and holds
it; rover-2 pursues North sensor + Water tank (misaligned), brushes the west wall, ends at
the north sensor; rover-3 waits, then heads for the seed tray too slowly: the goal fails.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from arena_studio.core.resources import demo_path
from arena_studio.core.scene.model import Scene, load_scene
from arena_studio.core.tape import TapeWriter
from arena_studio.core.tape.episode import Episode


def greenhouse() -> Scene:
    return load_scene(demo_path("greenhouse.scene.json"))


def _route(
    points: list[tuple[float, float]], speed: float, steps: int, dt: float, wait: float = 0.0
) -> np.ndarray:
    pts = np.asarray(points, dtype=np.float64)
    seg = np.linalg.norm(np.diff(pts, axis=0), axis=1)
    cum = np.concatenate([[0.0], np.cumsum(seg)])
    t = np.arange(steps) * dt
    s = np.clip((t - wait) * speed, 0.0, cum[-1])
    x = np.interp(s, cum, pts[:, 0])
    y = np.interp(s, cum, pts[:, 1])
    return np.stack([x, y], axis=1)


def demo_episode(
    scene: Scene | None = None, seconds: float = 16.0, dt: float = 0.05, index: int = 0
) -> Episode:
    scene = scene or greenhouse()
    steps = round(seconds / dt) + 1
    xy = np.stack(
        [
            _route([(1, 1), (4, 1.4), (8, 1.2)], 0.8, steps, dt),
            _route([(1, 4), (0.2, 5.4), (1.4, 6.4), (1.5, 8.6), (7.9, 9.5)], 0.8, steps, dt),
            _route([(1.2, 9.0), (6, 8.5), (14.3, 8.6)], 0.6, steps, dt, wait=2.0),
        ],
        axis=1,
    )
    d = np.diff(xy, axis=0, prepend=xy[:1])
    heading = np.arctan2(d[..., 1], d[..., 0])
    # hold the last heading while still (no jump to 0 when stopped)
    moving = np.linalg.norm(d, axis=-1) > 1e-9
    for a in range(xy.shape[1]):
        last = 0.0
        for t in range(steps):
            if moving[t, a]:
                last = heading[t, a]
            heading[t, a] = last
    poses = np.concatenate([xy, heading[..., None]], axis=-1)
    goal = np.zeros(len(scene.landmarks), dtype=np.uint8)
    goal[[scene.landmark_index("seed-tray"), scene.landmark_index("water-tank")]] = 1
    rover2 = np.zeros_like(goal)
    rover2[[scene.landmark_index("sensor-north"), scene.landmark_index("water-tank")]] = 1
    rewards = np.cumsum(np.full((steps, 3), -0.01), axis=0)
    return Episode(
        index=index,
        dt=dt,
        poses=poses,
        team_goal=goal,
        pursued_goals=(goal.copy(), rover2, goal.copy()),
        rewards=rewards,
    )


def write_demo_tape(path: Path, episodes: int = 2, seconds: float = 2.0) -> Path:
    """A small tape of demo episodes in the greenhouse, written step by step."""
    scene = greenhouse()
    with TapeWriter(path, scene, dt=0.05) as writer:
        for i in range(episodes):
            ep = demo_episode(scene, seconds=seconds, index=i)
            writer.begin_episode(team_goal=ep.team_goal, pursued_goals=list(ep.pursued_goals))
            for t in range(ep.steps):
                writer.step(ep.poses[t])
            writer.end_episode()
    return path
