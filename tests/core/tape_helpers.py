"""Small hand-built scenes and tapes shared by the tape, metrics and importer tests."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape import TapeWriter


def box_scene(rule: str = "all_at_once", hold_time: float = 0.0, agents: int = 2) -> Scene:
    """A 10 m x 10 m room, landmarks A (2, 8), B (8, 8), C (5, 2), reach 0.5 m, agents r=0.25."""
    return Scene.from_dict(
        {
            "format": "arena-studio.scene",
            "version": 1,
            "name": "box",
            "units": "m",
            "rooms": [{"id": "room", "outline": [[0, 0], [10, 0], [10, 10], [0, 10]]}],
            "obstacles": [],
            "landmarks": [
                {"id": "A", "label": "A", "position": [2, 8], "reach_radius": 0.5, "mount": "free"},
                {"id": "B", "label": "B", "position": [8, 8], "reach_radius": 0.5, "mount": "free"},
                {"id": "C", "label": "C", "position": [5, 2], "reach_radius": 0.5, "mount": "free"},
            ][:3],
            "agents": [
                {
                    "id": f"r{i}",
                    "radius": 0.25,
                    "max_speed": 1.0,
                    "max_turn_rate": 2.0,
                    "start": {"pose": [1.0 + i, 1.0, 0.0]},
                }
                for i in range(agents)
            ],
            "goals": {"rule": rule, "hold_time": hold_time, "families": [1, 2], "vectors": []},
        }
    )


def write_small_tape(path: Path, scene: Scene, episodes: int = 3, steps: int = 5) -> None:
    """Episodes of ``steps`` steps, chunks of 2 steps, so a tape has several chunks."""
    with TapeWriter(path, scene, dt=0.5, chunk_steps=2, metadata={"k": "v"}) as w:
        for e in range(episodes):
            w.begin_episode(team_goal=[1, 0, 0], pursued_goals=[[1, 0, 0], None])
            poses = np.full((steps, len(scene.agents), 3), float(e))
            poses[:, :, 0] += np.arange(steps)[:, None]
            w.steps(poses, rewards=np.ones((steps, len(scene.agents))))
            w.end_episode({"e": e})


def header_record(scene: Scene) -> dict:
    """A valid tape header record for ``scene`` with two agents (r0, r1), for tests that
    write tape records by hand."""
    return {
        "type": "header",
        "format": "arena-studio.tape",
        "version": 1,
        "dt": 0.1,
        "agent_ids": ["r0", "r1"],
        "scene": scene.to_dict(),
        "scene_hash": scene.content_hash(),
        "metadata": {},
    }
