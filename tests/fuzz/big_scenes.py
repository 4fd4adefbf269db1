"""Scene documents at the documented maxima: a many-vertex room, many obstacles, landmarks,
agents and goals. Used by the fuzz suite (within limits: must work; above: must be refused)
and by ``tests/bench/bench_scale.py`` (how long and how much memory)."""

from __future__ import annotations

import math
from typing import Any


def base(name: str = "scale") -> dict[str, Any]:
    return {
        "format": "arena-studio.scene",
        "version": 1,
        "name": name,
        "units": "m",
        "rooms": [{"id": "hall", "outline": [[0, 0], [40, 0], [40, 40], [0, 40]]}],
        "obstacles": [],
        "landmarks": [
            {"id": "m0", "label": "m0", "position": [35, 35], "reach_radius": 0.6, "mount": "free"},
        ],
        "agents": [
            {
                "id": "a0",
                "radius": 0.25,
                "max_speed": 1.0,
                "max_turn_rate": 2.0,
                "start": {"pose": [2, 2, 0]},
            },
        ],
        "goals": {"rule": "all_at_once", "hold_time": 0.5, "families": [1]},
    }


def zigzag_room(vertices: int) -> dict[str, Any]:
    """One room whose outline has ``vertices`` vertices: a hall with a comb of 1 m slots along
    its top (2 m pitch, wide enough for the agents), so about half the vertices are reflex
    and most pairs of them see each other across the hall (the worst case for a visibility
    graph)."""
    doc = base(f"room of {vertices} vertices")
    slots = max(1, (vertices - 4) // 4)
    width = 2.0 * slots + 1.0
    top: list[list[float]] = []
    for t in range(slots):
        x = 1.0 + 2.0 * t
        top += [[x, 20.0], [x, 23.0], [x + 1.0, 23.0], [x + 1.0, 20.0]]
    outline = [[0.0, 0.0], [width, 0.0], [width, 20.0], *reversed(top), [0.0, 20.0]]
    doc["rooms"][0]["outline"] = outline
    doc["landmarks"][0]["position"] = [width - 1.5, 22.0]
    return doc


def many_obstacles(count: int) -> dict[str, Any]:
    """``count`` small square obstacles on a grid in a 40 m hall."""
    doc = base(f"{count} obstacles")
    side = math.ceil(math.sqrt(count))
    pitch = 36.0 / side
    s = pitch * 0.3
    obstacles = []
    for i in range(count):
        x = 3.0 + (i % side) * pitch
        y = 3.0 + (i // side) * pitch
        obstacles.append(
            {"id": f"o{i}", "outline": [[x, y], [x + s, y], [x + s, y + s], [x, y + s]]}
        )
    doc["obstacles"] = obstacles
    doc["agents"][0]["start"] = {"pose": [1.0, 1.0, 0.0]}
    doc["landmarks"][0]["position"] = [39.0, 39.0]
    return doc


def many_landmarks(count: int) -> dict[str, Any]:
    doc = base(f"{count} landmarks")
    side = math.ceil(math.sqrt(count))
    pitch = 36.0 / side
    doc["landmarks"] = [
        {
            "id": f"m{i}",
            "label": f"m{i}",
            "reach_radius": 0.6 * pitch / 2 + 0.01,
            "position": [2.0 + (i % side) * pitch, 2.0 + (i // side) * pitch],
            "mount": "free",
        }
        for i in range(count)
    ]
    return doc


def many_agents(count: int) -> dict[str, Any]:
    doc = base(f"{count} agents")
    side = math.ceil(math.sqrt(count))
    pitch = 36.0 / side
    r = min(0.25, pitch * 0.3)
    doc["agents"] = [
        {
            "id": f"a{i}",
            "radius": r,
            "max_speed": 1.0,
            "max_turn_rate": 2.0,
            "start": {"pose": [2.0 + (i % side) * pitch, 2.0 + (i // side) * pitch, 0.0]},
        }
        for i in range(count)
    ]
    return doc


def many_goals(landmarks: int, families: list[int]) -> dict[str, Any]:
    doc = many_landmarks(landmarks)
    doc["agents"] = many_agents(max(families))["agents"]
    doc["goals"]["families"] = families
    return doc
