"""The reference tape, rebuilt byte for byte from DEVELOPERS.md ("Tape format") alone.

``build_from_spec`` uses only msgpack (the msgpack specification's Python implementation),
zlib (CRC-32, ISO 3309 / ITU-T V.42, as ``zlib.crc32``), struct and hashlib: none of
arena_studio. Its output must equal ``tests/data/reference.tape``, and so must what our
``TapeWriter`` writes for the same episodes; so the spec, the file and the code cannot drift
apart. The reader must then give back every value put in.
"""

from __future__ import annotations

import hashlib
import json
import struct
import zlib
from pathlib import Path
from typing import Any

import msgpack
import numpy as np

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape import TapeWriter, open_tape

REFERENCE = Path(__file__).resolve().parents[2] / "data" / "reference.tape"

# the embedded scene, already in its normalised form (every measurement a float, keys in the
# order of a scene file); its canonical JSON (sorted keys) is what scene_hash is taken over
SCENE_DOC: dict[str, Any] = {
    "format": "arena-studio.scene",
    "version": 2,
    "name": "reference",
    "units": "m",
    "rooms": [{"id": "hall", "outline": [[0.0, 0.0], [6.0, 0.0], [6.0, 4.0], [0.0, 4.0]]}],
    "obstacles": [],
    "landmarks": [
        {"id": "A", "label": "A", "position": [1.0, 3.0], "reach_radius": 0.5, "mount": "free"},
        {"id": "B", "label": "B", "position": [5.0, 3.0], "reach_radius": 0.5, "mount": "free"},
    ],
    "agents": [
        {
            "id": "r0",
            "radius": 0.25,
            "max_speed": 1.0,
            "max_turn_rate": 2.0,
            "start": {"pose": [1.0, 1.0, 0.0]},
        },
        {
            "id": "r1",
            "radius": 0.25,
            "max_speed": 1.0,
            "max_turn_rate": 2.0,
            "start": {"pose": [5.0, 1.0, 3.0]},
        },
    ],
    "goals": {"rule": "all_at_once", "hold_time": 0.0, "families": [1, 2], "vectors": []},
}

# episode 0: three steps in chunks of two (2 + 1), every optional per-step field
E0_POSES = [
    [[1.0, 1.0, 0.0], [5.0, 1.0, 3.0]],
    [[1.0, 1.5, 1.5], [5.0, 1.5, 1.5]],
    [[1.0, 2.5, 1.5], [5.0, 2.5, 1.5]],
]
E0_REWARDS = [[0.0, 0.0], [0.25, 0.25], [1.0, 1.0]]
E0_ACTIONS = [[[0], [0]], [[2], [2]], [[2], [2]]]  # one discrete action each, whole numbers
E0_DONE = [[False, False], [False, False], [True, True]]
E0_BATTERY = [[1.0, 1.0], [0.75, 0.5], [0.5, 0.25]]
# episode 1: two steps, a team reward, each agent's share, landmarks moved at reset
E1_POSES = [[[1.0, 1.0, 0.0], [5.0, 1.0, 3.0]], [[1.5, 1.0, 0.0], [4.5, 1.0, 3.0]]]
E1_TEAM_REWARD = [0.0, 0.5]
E1_LANDMARKS = [[2.0, 3.5], [4.0, 3.5]]


# -- the spec, written out with msgpack, zlib and struct only ----------------------------------
def _f8(rows: Any) -> bytes:
    flat = np.ravel(rows).tolist()  # numpy only flattens the nested lists here
    return struct.pack(f"<{len(flat)}d", *flat)


def _array(dtype: str, shape: list[int], data: bytes) -> dict[str, Any]:
    return {"dtype": dtype, "shape": shape, "data": data}


def _record(kind: str, payload: dict[str, Any]) -> bytes:
    body = msgpack.packb(payload, use_bin_type=True)
    head = struct.pack("<IB", len(body), ord(kind))
    return head + body + struct.pack("<I", zlib.crc32(kind.encode("ascii") + body))


def build_from_spec() -> bytes:
    # "Scene hash": the text is taken with version 1 whatever version the file says
    hashed = {**SCENE_DOC, "version": 1}
    canonical = json.dumps(hashed, sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    out = bytearray(b"\x89ASTAPE\n")
    out += _record(
        "H",
        {
            "type": "header",
            "format": "arena-studio.tape",
            "version": 1,
            "dt": 0.5,
            "agent_ids": ["r0", "r1"],
            "scene": SCENE_DOC,
            "scene_hash": hashlib.sha256(canonical.encode("ascii")).hexdigest(),
            "metadata": {"simulator": "reference"},
        },
    )
    index: list[tuple[int, int, int]] = []
    # episode 0
    begin = len(out)
    both = _array("|u1", [2], bytes([1, 1]))
    out += _record(
        "B",
        {
            "type": "begin",
            "episode": 0,
            "team_goal": both,
            "pursued_goals": [both, both],
            "roles": [[[0, "lead"], [2, "hold"]], []],
            "messages": ["go"],
        },
    )
    for start, stop in ((0, 2), (2, 3)):
        n = stop - start
        out += _record(
            "C",
            {
                "type": "chunk",
                "episode": 0,
                "start": start,
                "steps": n,
                "poses": _array("<f8", [n, 2, 3], _f8(E0_POSES[start:stop])),
                "rewards": _array("<f8", [n, 2], _f8(E0_REWARDS[start:stop])),
                "actions": _array(
                    "<i8",
                    [n, 2, 1],
                    struct.pack(f"<{2 * n}q", *np.ravel(E0_ACTIONS[start:stop]).tolist()),
                ),
                "done": _array("|b1", [n, 2], bytes(np.ravel(E0_DONE[start:stop]).tolist())),
                "channels": {"battery": _array("<f8", [n, 2], _f8(E0_BATTERY[start:stop]))},
            },
        )
    out += _record(
        "E", {"type": "end", "episode": 0, "steps": 3, "outcome": {"success": True, "score": 2}}
    )
    index.append((begin, len(out), 3))
    # episode 1
    begin = len(out)
    out += _record(
        "B",
        {
            "type": "begin",
            "episode": 1,
            "team_goal": both,
            "pursued_goals": [both, both],
            "roles": None,
            "messages": [],
            "assigned_targets": [
                _array("|u1", [2], bytes([1, 0])),
                _array("|u1", [2], bytes([0, 1])),
            ],
            "landmark_positions": _array("<f8", [2, 2], _f8(E1_LANDMARKS)),
        },
    )
    out += _record(
        "C",
        {
            "type": "chunk",
            "episode": 1,
            "start": 0,
            "steps": 2,
            "poses": _array("<f8", [2, 2, 3], _f8(E1_POSES)),
            "rewards": _array("<f8", [2], _f8(E1_TEAM_REWARD)),
        },
    )
    out += _record("E", {"type": "end", "episode": 1, "steps": 2, "outcome": None})
    index.append((begin, len(out), 2))
    # index and trailer
    at = len(out)

    def column(k: int) -> dict[str, Any]:
        values = [row[k] for row in index]
        return _array("<i8", [len(values)], struct.pack(f"<{len(values)}q", *values))

    out += _record(
        "I",
        {"type": "index", "episodes": 2, "begin": column(0), "end": column(1), "steps": column(2)},
    )
    out += struct.pack("<Q", at) + b"ASTAPEND"
    return bytes(out)


# -- the same episodes through TapeWriter ---------------------------------------------------------
def write_with_tapewriter(path: Path) -> bytes:
    scene = Scene.from_dict(SCENE_DOC)
    with TapeWriter(path, scene, dt=0.5, chunk_steps=2, metadata={"simulator": "reference"}) as w:
        w.begin_episode(
            team_goal=[1, 1],
            pursued_goals=[[1, 1], [1, 1]],
            roles=[[(0, "lead"), (2, "hold")], None],
            messages=["go"],
        )
        for t in range(3):
            w.step(
                np.array(E0_POSES[t]),
                reward=np.array(E0_REWARDS[t]),
                action=np.array(E0_ACTIONS[t])[:, 0],  # (A,): one discrete action each
                done=np.array(E0_DONE[t]),
                channels={"battery": np.array(E0_BATTERY[t])},
            )
        w.end_episode(outcome={"success": True, "score": 2})
        w.begin_episode(
            team_goal=np.array([True, True]),  # bool goals are the same 0/1 vector
            pursued_goals=[[1, 1], [1, 1]],
            assigned_targets=[[1, 0], [0, 1]],
            landmark_positions=E1_LANDMARKS,
        )
        w.steps(np.array(E1_POSES), rewards=np.array(E1_TEAM_REWARD))
        w.end_episode()
    return path.read_bytes()


def test_spec_rebuilds_the_reference_tape_byte_for_byte() -> None:
    assert build_from_spec() == REFERENCE.read_bytes()


def test_tapewriter_writes_the_reference_tape_byte_for_byte(tmp_path: Path) -> None:
    assert write_with_tapewriter(tmp_path / "ref.tape") == REFERENCE.read_bytes()


def test_reader_gives_back_every_value() -> None:
    tape = open_tape(REFERENCE)
    assert not tape.truncated and tape.scene_hash_ok is True and len(tape) == 2
    assert tape.metadata == {"simulator": "reference"} and tape.dt == 0.5
    e0, e1 = tape.episode(0), tape.episode(1)
    np.testing.assert_array_equal(e0.poses, E0_POSES)
    np.testing.assert_array_equal(e0.rewards, E0_REWARDS)
    assert e0.actions is not None and e0.actions.dtype == np.int64
    np.testing.assert_array_equal(e0.actions, E0_ACTIONS)
    np.testing.assert_array_equal(e0.done, E0_DONE)
    np.testing.assert_array_equal(e0.channels["battery"], E0_BATTERY)
    assert e0.roles == (((0, "lead"), (2, "hold")), ())
    assert e0.messages == ("go",) and e0.outcome == {"success": True, "score": 2}
    assert e0.assigned_targets == () and e0.landmark_positions is None
    np.testing.assert_array_equal(e1.rewards, E1_TEAM_REWARD)
    assert [list(g) for g in e1.assigned_targets if g is not None] == [[1, 0], [0, 1]]
    np.testing.assert_array_equal(e1.landmark_positions, E1_LANDMARKS)
    assert e1.outcome is None and e1.complete
