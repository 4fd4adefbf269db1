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


#: a pose value no test writes otherwise: its bytes mark the place a helper damages
SENTINEL = 4321.125


def write_tape_with_marked_episode(
    path: Path, scene: Scene, episodes: int = 5, marked: int = 2, steps: int = 6
) -> None:
    """Sound episodes of ``steps`` steps (chunks of 2) where episode ``marked`` holds
    ``SENTINEL`` as agent 1's x at step 3, for :func:`replace_marked_value` to damage."""
    with TapeWriter(path, scene, dt=0.5, chunk_steps=2) as w:
        for e in range(episodes):
            w.begin_episode(team_goal=[1, 0, 0], pursued_goals=[[1, 0, 0]] * len(scene.agents))
            poses = np.full((steps, len(scene.agents), 3), 1.0 + 0.1 * e)
            poses[:, :, 0] += 0.5 * np.arange(steps)[:, None]
            if e == marked:
                poses[3, 1, 0] = SENTINEL
            w.steps(poses)
            w.end_episode({"e": e})


def replace_marked_value(path: Path, value: float, fix_crc: bool = True) -> int:
    """Put ``value`` where ``SENTINEL`` is and return that file offset. With ``fix_crc`` the
    record's CRC-32 (zlib, over kind byte and payload: the documented frame) is recomputed,
    so only the value is wrong; without it the record fails its checksum."""
    import struct
    import zlib

    data = bytearray(path.read_bytes())
    at = data.find(struct.pack("<d", SENTINEL))
    assert at > 0 and data.find(struct.pack("<d", SENTINEL), at + 1) < 0
    struct.pack_into("<d", data, at, value)
    if fix_crc:
        pos = 8  # after the magic bytes: walk the frames to the one holding ``at``
        while True:
            length = struct.unpack_from("<I", data, pos)[0]
            end = pos + 5 + length + 4
            if pos < at < end:
                crc = zlib.crc32(bytes(data[pos + 4 : pos + 5 + length]))
                struct.pack_into("<I", data, pos + 5 + length, crc)
                break
            pos = end
    path.write_bytes(bytes(data))
    return at


def write_long_csv(path: Path, target_bytes: int, agents: int = 3, steps: int = 400) -> int:
    """A long-format file of about ``target_bytes`` (episodes of ``steps`` x ``agents``)."""
    rng = np.random.default_rng(1)
    body = [
        f",{s},r{a},{x:.4f},{y:.4f},{h:.5f},{r:g}\n"
        for s in range(steps)
        for a, x, y, h, r in zip(
            range(agents), *rng.uniform(0, 10, (2, agents)), rng.uniform(-3, 3, agents),
            rng.choice([0.0, 1.0], agents), strict=True,
        )
    ]  # fmt: skip
    written = episodes = 0
    with open(path, "w") as f:
        f.write("episode,step,agent,x,y,heading,reward\n")
        while written < target_bytes:
            label = f"episode-{episodes:07d}"
            text = "".join(label + line for line in body)
            f.write(text)
            written += len(text)
            episodes += 1
    return episodes
