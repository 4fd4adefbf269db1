"""Hand-built scenes and episodes for the replay tests (their answers are derived here).

The helpers are imported by the other test_replay_* modules; the one test below checks the
hand-built episode against the straight-line motion it claims to have.
"""

from __future__ import annotations

import numpy as np

from arena_studio.core.scene.model import Agent, GoalSpec, Landmark, Room, Scene, Start
from arena_studio.core.tape.episode import Episode

DT = 0.1


def small_scene(agents: int = 2) -> Scene:
    """A 10 m x 6 m hall, three landmarks, ``agents`` rovers in a row."""
    return Scene(
        name="replay test hall",
        rooms=(Room("hall", ((0.0, 0.0), (10.0, 0.0), (10.0, 6.0), (0.0, 6.0))),),
        landmarks=(
            Landmark("west", "West valve", (1.0, 5.0), 0.5, "free"),
            Landmark("east", "East valve", (9.0, 5.0), 0.5, "free"),
            Landmark("pump", "Pump", (5.0, 1.0), 0.5, "free"),
        ),
        agents=tuple(
            Agent(f"rover-{i + 1}", 0.25, 1.0, 2.0, Start(pose=(1.0 + i, 1.0, 0.0)))
            for i in range(agents)
        ),
        goals=GoalSpec(rule="all_at_once", families=(1, 2)),
    )


def straight_episode(
    index: int = 0,
    steps: int = 51,
    agents: int = 2,
    team_goal=(1, 1, 0),
    pursued=((1, 0, 0), (1, 0, 0)),
    rewards: bool = True,
) -> Episode:
    """Agent a moves from (1 + a, 1) straight up at 0.5 m/s (both headed +y)."""
    t = np.arange(steps) * DT
    poses = np.zeros((steps, agents, 3))
    for a in range(agents):
        poses[:, a, 0] = 1.0 + a
        poses[:, a, 1] = 1.0 + 0.5 * t
        poses[:, a, 2] = np.pi / 2
    return Episode(
        index=index,
        dt=DT,
        poses=poses,
        team_goal=None if team_goal is None else np.array(team_goal, dtype=np.uint8),
        pursued_goals=tuple(np.array(p, dtype=np.uint8) for p in pursued[:agents]),
        rewards=np.full((steps, agents), 0.5) if rewards else None,
        channels={"battery": np.linspace(1.0, 0.8, steps)},
    )


def test_straight_episode_speed_is_half_a_metre_per_second():
    # distance / time along a straight line (common practice, no source)
    ep = straight_episode()
    travelled = np.hypot(*(ep.poses[-1, 0, :2] - ep.poses[0, 0, :2]))
    assert np.isclose(travelled / ep.duration, 0.5)


def go_to(start, goal, steps: int, speed: float = 0.8) -> np.ndarray:
    """(steps, 3) poses moving straight from ``start`` to ``goal`` at ``speed``, then still."""
    start, goal = np.asarray(start, float), np.asarray(goal, float)
    delta = goal - start
    dist = float(np.hypot(*delta))
    travelled = np.minimum(np.arange(steps) * DT * speed, dist)
    frac = travelled / dist if dist > 0 else np.zeros(steps)
    out = np.zeros((steps, 3))
    out[:, :2] = start + frac[:, None] * delta
    out[:, 2] = np.arctan2(delta[1], delta[0])
    return out


def write_test_tape(path, scene: Scene | None = None, episodes: int = 6, steps: int = 120):
    """A tape of the small hall: even episodes an aligned success of West+East, odd ones a
    failure where both rovers went to the West valve (the East valve stayed empty)."""
    from arena_studio.core.tape import TapeWriter

    scene = scene or small_scene()
    west, east = scene.landmarks[0].position, scene.landmarks[1].position
    starts = [a.start.pose[:2] for a in scene.agents]
    with TapeWriter(path, scene, dt=DT) as w:
        for i in range(episodes):
            team = [1, 1, 0]
            if i % 2 == 0:
                targets, pursued = (west, east), ([1, 1, 0], [1, 1, 0])
            else:
                targets, pursued = (west, west), ([1, 0, 0], [1, 0, 0])
            poses = np.stack([go_to(starts[a], targets[a], steps) for a in range(2)], axis=1)
            w.begin_episode(team_goal=team, pursued_goals=list(pursued))
            w.steps(poses, rewards=np.full((steps, 2), 0.1))
            w.end_episode()
    return path
