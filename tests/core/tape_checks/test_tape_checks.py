"""Recording-vs-scene checks (core/tape_checks) on hand-built tapes and a clean rollout."""

from __future__ import annotations

import numpy as np
import pytest
from shapely.geometry import LineString, Point, box

from arena_studio.core.scene import Scene
from arena_studio.core.sim.rollout import run_rollout
from arena_studio.core.tape import TapeWriter, open_tape
from arena_studio.core.tape_checks import check_tape
from arena_studio.core.tape_checks.walls import crossings

DIVIDER = (4.9, 0.0, 5.1, 2.4)  # a thin wall standing in the long room, open above y = 2.4


def l_scene() -> Scene:
    """An L: a long room (10 x 3) and an arm (3 x 5) on its left; a thin divider."""
    x0, y0, x1, y1 = DIVIDER
    return Scene.from_dict(
        {
            "format": "arena-studio.scene",
            "version": 1,
            "name": "ell",
            "units": "m",
            "rooms": [
                {"id": "long", "outline": [[0, 0], [10, 0], [10, 3], [0, 3]]},
                {"id": "arm", "outline": [[0, 3], [3, 3], [3, 8], [0, 8]]},
            ],
            "obstacles": [{"id": "divider", "outline": [[x0, y0], [x1, y0], [x1, y1], [x0, y1]]}],
            "landmarks": [
                {
                    "id": "A",
                    "label": "A",
                    "position": [8, 1.5],
                    "reach_radius": 0.5,
                    "mount": "free",
                },
                {
                    "id": "B",
                    "label": "B",
                    "position": [1.5, 7],
                    "reach_radius": 0.5,
                    "mount": "free",
                },
            ],
            "agents": [
                {
                    "id": "r0",
                    "radius": 0.2,
                    "max_speed": 1.0,
                    "max_turn_rate": 2.0,
                    "start": {"pose": [1.0, 1.5, 0.0]},
                },
                {
                    "id": "r1",
                    "radius": 0.2,
                    "max_speed": 1.0,
                    "max_turn_rate": 2.0,
                    "start": {"pose": [1.0, 0.6, 0.0]},
                },
            ],
            "goals": {"rule": "all_at_end", "hold_time": 0.0, "families": [1], "vectors": []},
        }
    )


def write(path, scene, poses_list, dt):
    with TapeWriter(path, scene, dt=dt) as w:
        for poses in poses_list:
            w.begin_episode()
            w.steps(np.asarray(poses, dtype=float))
            w.end_episode()
    return open_tape(path)


def walk(xs, y, other=(1.0, 0.6)):
    """r0 along y at the given x values, heading 0; r1 standing at its start."""
    n = len(xs)
    poses = np.zeros((n, 2, 3))
    poses[:, 0, 0], poses[:, 0, 1] = xs, y
    poses[:, 1, :2] = other
    return poses


def codes(findings):
    return [(f.code, f.episode, f.step, f.agent) for f in findings]


def test_clean_rollout_has_no_finding(tmp_path):
    scene = l_scene()
    run_rollout(scene, tmp_path / "r.tape", episodes=4, seed=2, mode="shared")
    assert check_tape(open_tape(tmp_path / "r.tape")) == []


def test_wall_crossing(tmp_path):
    scene = l_scene()
    # r0 starts at its pose and walks +x at 0.9 m/s (dt 0.5 s: 0.45 m a step, within its
    # 1 m/s); the step from x = 4.7 to 5.15 jumps over the 0.2 m divider
    xs = np.concatenate([[1.0], np.linspace(1.45, 3.8, 6), 3.8 + 0.45 * np.arange(1, 5)])
    tape = write(tmp_path / "c.tape", scene, [walk(xs, 1.5)], dt=0.5)
    step = int(np.flatnonzero((xs[:-1] < DIVIDER[0]) & (xs[1:] > DIVIDER[2]))[0]) + 1
    # reference: shapely (GEOS) says that move's segment meets the divider while both ends
    # lie outside it, i.e. it passes through
    seg = LineString([(xs[step - 1], 1.5), (xs[step], 1.5)])
    divider = box(*DIVIDER)
    assert seg.intersects(divider)
    assert not divider.contains(Point(xs[step - 1], 1.5))
    assert not divider.contains(Point(xs[step], 1.5))
    found = check_tape(tape)
    assert codes(found) == [("wall-crossing", 0, step, "r0")]
    assert "obstacle divider" in found[0].message


def test_crossing_test_agrees_with_shapely_on_random_segments():
    # reference: shapely's segment-segment intersection (GEOS), away from touching cases
    rng = np.random.default_rng(5)
    walls = rng.uniform(0, 10, (30, 2, 2))
    p, q = rng.uniform(0, 10, (400, 2)), rng.uniform(0, 10, (400, 2))
    hits = crossings(p, q, walls)
    for i in range(len(p)):
        seg = LineString([p[i], q[i]])
        want = [k for k in range(len(walls)) if seg.crosses(LineString(walls[k]))]
        assert (hits[i] >= 0) == bool(want)
        if want:
            assert hits[i] in want


def test_inside_an_obstacle_and_outside_rooms(tmp_path):
    scene = l_scene()
    xs = np.concatenate([[1.0], 1.0 + 0.08 * np.arange(1, 60)])  # 0.8 m/s through the divider
    found = check_tape(write(tmp_path / "o.tape", scene, [walk(xs, 1.5)], dt=0.1))
    inside = [f for f in found if f.code == "pose-in-obstacle"]
    first = int(np.flatnonzero((xs > DIVIDER[0]) & (xs < DIVIDER[2]))[0])
    assert [(f.step, f.agent) for f in inside] == [(first, "r0")]
    assert "divider" in inside[0].message
    ys = np.full(20, 1.5)
    ys[10:] = [3.2 + 0.05 * k for k in range(10)]  # into the wall above the long room at x=6
    poses = walk(np.full(20, 6.0), 1.5)
    poses[:, 0, 1] = ys
    poses[0, 0, :2] = (1.0, 1.5)
    found = check_tape(write(tmp_path / "w.tape", scene, [poses], dt=1.0))
    assert ("pose-outside-rooms", 0, 10, "r0") in codes(found)


def test_over_speed_step(tmp_path):
    scene = l_scene()
    dx = np.full(30, 0.04)  # 0.8 m/s at dt 0.05
    dx[12] = 0.06  # 1.2 m/s: over the 1 m/s top speed, one step
    xs = 1.0 + np.concatenate([[0.0], np.cumsum(dx)])
    found = check_tape(write(tmp_path / "s.tape", scene, [walk(xs, 1.5)], dt=0.05))
    assert codes(found) == [("over-speed", 0, 13, "r0")]
    assert "1.20 m/s" in found[0].message


def test_jump_and_start_mismatch(tmp_path):
    scene = l_scene()
    xs = np.concatenate([[1.0, 1.05, 1.1], [7.0, 7.05]])  # 5.9 m in one 0.1 s step
    poses = walk(xs, 1.5)
    poses[0, 1, :2] = (2.0, 0.6)  # r1 starts 1 m from its start pose
    found = check_tape(write(tmp_path / "j.tape", scene, [poses], dt=0.1))
    assert ("jump", 0, 3, "r0") in codes(found)
    assert ("start-mismatch", 0, 0, "r1") in codes(found)
    assert not any(f.code == "over-speed" for f in found)


def _valid_poses():
    """Two episodes that keep to the scene: r0 along the long room (left of the divider),
    r1 up the arm."""
    out = []
    for e in range(2):
        t = np.arange(80)
        poses = np.zeros((80, 2, 3))
        poses[:, 0, 0] = 1.0 + (0.04 + 0.005 * e) * t
        poses[:, 0, 1] = 1.5
        poses[:, 1, 0] = 1.0
        poses[:, 1, 1] = np.minimum(0.6 + 0.09 * t, 7.5)
        out.append(poses)
    return out


def test_y_flipped_recording(tmp_path):
    scene = l_scene()
    flipped = []
    for poses in _valid_poses():
        p = poses.copy()
        p[:, :, 1] = 8.0 - p[:, :, 1]  # the simulator's y pointed down from the top (y = 8)
        flipped.append(p)
    found = check_tape(write(tmp_path / "y.tape", scene, flipped, dt=0.1))
    assert [f.code for f in found] == ["axes-mismatch"]
    assert "y flipped within the scene" in found[0].message
    assert check_tape(write(tmp_path / "ok.tape", scene, _valid_poses(), dt=0.1)) == []


@pytest.mark.parametrize(("factor", "word"), [(100.0, "centimetres"), (1000.0, "millimetres")])
def test_centimetre_and_millimetre_recordings(tmp_path, factor, word):
    scene = l_scene()
    scaled = [p * [factor, factor, 1.0] for p in _valid_poses()]
    found = check_tape(write(tmp_path / "u.tape", scene, scaled, dt=0.1))
    assert [f.code for f in found] == ["units-mismatch"]
    assert word in found[0].message


def test_scene_file_hash_differs(tmp_path):
    scene = l_scene()
    tape = write(tmp_path / "h.tape", scene, _valid_poses(), dt=0.1)
    assert check_tape(tape, scene) == []
    moved = scene.with_changes(name="ell (edited)")
    found = check_tape(tape, moved)
    assert [f.code for f in found] == ["scene-differs"]


def test_json_form_names_episode_step_agent(tmp_path):
    scene = l_scene()
    dx = np.full(10, 0.04)
    dx[3] = 0.09
    xs = 1.0 + np.concatenate([[0.0], np.cumsum(dx)])
    found = check_tape(write(tmp_path / "s.tape", scene, [walk(xs, 1.5)], dt=0.05))
    where = found[0].to_dict()["where"]
    assert (where["episode"], where["step"], where["agent"]) == (0, 4, "r0")


def test_goal_of_the_wrong_length_is_its_own_finding(tmp_path):
    # records written by hand after the documented layout (DEVELOPERS.md "Tape format"):
    # episode 0 is sound, episode 1's team goal has 2 entries for the box scene's 3 landmarks
    from arena_studio.core.tape.format import (
        KIND_BEGIN,
        KIND_CHUNK,
        KIND_END,
        KIND_HEADER,
        MAGIC,
        encode_array,
        frame,
        pack,
    )
    from tests.core.tape_helpers import box_scene, header_record

    scene = box_scene()
    data = bytearray(MAGIC + frame(KIND_HEADER, pack(header_record(scene))))
    poses = np.zeros((3, 2, 3))
    poses[:, 0, :2], poses[:, 1, :2] = (1.0, 1.0), (2.0, 1.0)
    for e, goal in enumerate(([1, 0, 0], [1, 0])):
        begin = {
            "type": "begin",
            "episode": e,
            "pursued_goals": None,
            "roles": None,
            "messages": [],
            "team_goal": encode_array(np.array(goal, np.uint8), "|u1"),
        }
        chunk = {
            "type": "chunk",
            "episode": e,
            "start": 0,
            "steps": 3,
            "poses": encode_array(poses, "<f8"),
        }
        data += frame(KIND_BEGIN, pack(begin)) + frame(KIND_CHUNK, pack(chunk))
        data += frame(KIND_END, pack({"type": "end", "episode": e, "steps": 3, "outcome": None}))
    path = tmp_path / "g.tape"
    path.write_bytes(bytes(data))
    found = check_tape(open_tape(path))
    assert codes(found) == [("goal-vector-length", 1, None, None)]
    assert "team_goal" in found[0].message
