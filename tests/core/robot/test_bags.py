"""ROS 2 bags written with rosbags' own writer, in both storage formats, read back as tapes."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from arena_studio.core.robot.bags import BagImportOptions, import_bags, read_runs
from arena_studio.core.robot.errors import RobotImportError
from arena_studio.core.tape import open_tape

from .bag_helpers import BagBuilder, circle, line, sample_times, scene, wrapped

STORAGES = ("mcap", "sqlite3")
TOL = 5e-4  # linear resampling of ~20 Hz samples of these curves errs < 1e-4 m / rad


def _close(got: np.ndarray, want: np.ndarray) -> None:
    assert np.allclose(got[..., :2], want[..., :2], atol=TOL)
    assert np.allclose(np.cos(got[..., 2] - want[..., 2]), 1.0, atol=TOL)


def _two_robot_bag(folder: Path, storage: str, *, t_end: float = 6.0) -> Path:
    b = BagBuilder()
    t1, t2 = sample_times(0, t_end, 1), sample_times(0, t_end, 2)
    b.odometry("/robot1/odom", t1, circle(t1), tilt=0.1)  # tilted: heading must still come out
    b.pose_stamped("/robot2/pose", t2, line(t2))
    for k in range(5):
        b.blob("/acme/blob", 0.5 + k)  # a type the reader has no definition for
    return b.write(folder / f"run-{storage}", storage)


@pytest.mark.parametrize("storage", STORAGES)
def test_odometry_and_pose_stamped_resampled_to_known_poses(tmp_path: Path, storage: str) -> None:
    bag = _two_robot_bag(tmp_path, storage)
    opts = BagImportOptions(agents={"rover-1": "/robot1/odom", "rover-2": "/robot2/pose"}, dt=0.1)
    report = read_runs([bag], scene(), opts)
    assert len(report.episodes) == 1
    ep = report.episodes[0]
    grid = ep.start + 0.1 * np.arange(len(ep.poses))
    _close(ep.poses[:, 0], wrapped(circle(grid)))
    _close(ep.poses[:, 1], wrapped(line(grid)))
    # the unknown type is skipped and counted, the known topics were all used
    assert report.topics["/acme/blob"].skipped == 5
    assert "unknown type" in report.topics["/acme/blob"].note
    assert report.topics["/robot1/odom"].used == report.topics["/robot1/odom"].messages > 100


@pytest.mark.parametrize("storage", STORAGES)
def test_tf_chain_from_the_fixed_frame(tmp_path: Path, storage: str) -> None:
    b = BagBuilder()
    t = sample_times(0, 5, 3)
    odom_in_map = np.array([1.5, -0.5, 0.4])
    b.tf("/tf_static", 0.0, [("map", "odom", tuple(odom_in_map))])
    path = circle(t)
    for ti, p in zip(t, path, strict=True):
        b.tf("/tf", float(ti), [("odom", "robot1/base_link", tuple(p))])
    t2 = sample_times(0, 5, 4)
    b.odometry("/robot2/odom", t2, line(t2))
    bag = b.write(tmp_path / "tf", storage)
    opts = BagImportOptions(agents={"rover-1": "tf:robot1/base_link", "rover-2": "/robot2/odom"})
    ep = read_runs([bag], scene(), opts).episodes[0]
    grid = ep.start + 0.1 * np.arange(len(ep.poses))
    # map <- odom <- base: rotate by the static yaw, then shift (2-D rigid composition)
    c, s = math.cos(odom_in_map[2]), math.sin(odom_in_map[2])
    p = circle(grid)
    want = np.column_stack(
        [
            odom_in_map[0] + c * p[:, 0] - s * p[:, 1],
            odom_in_map[1] + s * p[:, 0] + c * p[:, 1],
            p[:, 2] + odom_in_map[2],
        ]
    )
    _close(ep.poses[:, 0], wrapped(want))


def test_transform_moves_poses_into_the_scene(tmp_path: Path) -> None:
    bag = _two_robot_bag(tmp_path, "mcap")
    agents = {"rover-1": "/robot1/odom", "rover-2": "/robot2/pose"}
    plain = read_runs([bag], scene(), BagImportOptions(agents=agents)).episodes[0].poses
    moved = (
        read_runs(
            [bag], scene(), BagImportOptions(agents=agents, transform=(10.0, -2.0, math.pi / 2))
        )
        .episodes[0]
        .poses
    )
    # a quarter turn maps (x, y) to (-y, x), then the shift
    assert np.allclose(moved[..., 0], 10.0 - plain[..., 1])
    assert np.allclose(moved[..., 1], -2.0 + plain[..., 0])
    scaled = read_runs([bag], scene(), BagImportOptions(agents=agents, scale=2.0))
    assert np.allclose(scaled.episodes[0].poses[..., :2], 2.0 * plain[..., :2])
    assert np.allclose(scaled.episodes[0].poses[..., 2], plain[..., 2])


def test_episodes_split_by_gap_marker_and_bag(tmp_path: Path) -> None:
    b = BagBuilder()
    ta = np.concatenate([sample_times(0, 3, 5), sample_times(8, 11, 6)])  # 5 s pause
    b.odometry("/robot1/odom", ta, circle(ta))
    b.pose_stamped("/robot2/pose", ta, line(ta))
    b.string("/episode", 0.0, "start")
    b.string("/episode", 1.5, "start")
    b.string("/episode", 8.0, "start")
    b.string("/goal", 0.1, "valve")
    b.string("/goal", 8.1, "valve+pump")
    bag = b.write(tmp_path / "split", "sqlite3")
    agents = {"rover-1": "/robot1/odom", "rover-2": "/robot2/pose"}
    by_gap = read_runs([bag], scene(), BagImportOptions(agents=agents, goal_topic="/goal"))
    assert len(by_gap.episodes) == 2
    assert [e.team_goal.tolist() for e in by_gap.episodes] == [[1, 0], [1, 1]]
    by_marker = read_runs(
        [bag], scene(), BagImportOptions(agents=agents, split="marker", marker="/episode")
    )
    assert [round(e.start, 2) for e in by_marker.episodes] == [0.0, 1.5, 8.0]
    second = _two_robot_bag(tmp_path, "mcap")
    per_bag = read_runs([bag, second], scene(), BagImportOptions(agents=agents, split="bag"))
    assert len(per_bag.episodes) == 2 and per_bag.bags == 2


def test_damaged_messages_are_skipped_and_counted(tmp_path: Path) -> None:
    b = BagBuilder()
    t = sample_times(0, 3, 7)
    b.odometry("/robot1/odom", t, circle(t))
    b.pose_stamped("/robot2/pose", t, line(t))
    for k in range(3):
        b.garbage("/robot1/odom", "nav_msgs/msg/Odometry", 0.52 + k)
    bag = b.write(tmp_path / "bad", "mcap")
    opts = BagImportOptions(agents={"rover-1": "/robot1/odom", "rover-2": "/robot2/pose"})
    report = read_runs([bag], scene(), opts)
    assert report.topics["/robot1/odom"].skipped == 3
    assert "undecodable" in report.topics["/robot1/odom"].note
    assert len(report.episodes) == 1


def test_tape_written_with_goal_and_errors_name_the_place(tmp_path: Path) -> None:
    bag = _two_robot_bag(tmp_path, "mcap")
    agents = {"rover-1": "/robot1/odom", "rover-2": "/robot2/pose"}
    out = tmp_path / "run.tape"
    import_bags([bag], scene(), out, BagImportOptions(agents=agents, goal="valve+pump"))
    tape = open_tape(out)
    ep = tape.episode(0)
    assert ep.poses.shape[1:] == (2, 3) and ep.team_goal.tolist() == [1, 1]
    with pytest.raises(RobotImportError, match="rover-2"):
        read_runs([bag], scene(), BagImportOptions(agents={"rover-1": "/robot1/odom"}))
    with pytest.raises(RobotImportError, match="unknown landmark 'tap'"):
        read_runs([bag], scene(), BagImportOptions(agents=agents, goal="tap"))
    with pytest.raises(RobotImportError, match="no TF chain"):
        import_bags(
            [bag],
            scene(),
            tmp_path / "x.tape",
            BagImportOptions(agents={**agents, "rover-1": "tf:base"}),
        )
    assert not (tmp_path / "x.tape").exists()
    (tmp_path / "junk.mcap").write_bytes(b"not a bag")
    with pytest.raises(RobotImportError, match=r"junk\.mcap"):
        read_runs([tmp_path / "junk.mcap"], scene(), BagImportOptions(agents=agents))


def test_command_reports_topics_and_writes_the_tape(tmp_path: Path, capsys) -> None:
    from arena_studio.cli import main
    from arena_studio.core.scene import save_scene

    bag = _two_robot_bag(tmp_path, "sqlite3")
    scene_path = tmp_path / "yard.scene.json"
    save_scene(scene(), scene_path)
    out = tmp_path / "run.tape"
    base = ["import", "bag", str(bag), "--scene", str(scene_path), "-o", str(out), "--quiet"]
    args = [*base, "--agent", "rover-1=/robot1/odom", "--agent", "rover-2=/robot2/pose"]
    assert main([*args, "--dt", "0.2", "--goal", "pump"]) == 0
    text = capsys.readouterr().out
    assert "/acme/blob" in text and "unknown type" in text and "1 episode(s)" in text
    assert "assessed on site" in text
    tape = open_tape(out)
    assert tape.dt == pytest.approx(0.2) and tape.episode(0).team_goal.tolist() == [0, 1]
    assert main([*base, "--agent", "rover-1=/robot1/odom"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "rover-2" in err[0]
    assert main([*args, "--transform", "1,2"]) == 2
    assert "--transform" in capsys.readouterr().err
    # the map frame from a map YAML: this scene has no underlay, so its (0, 0) is the
    # image's lower-left corner, which the YAML puts at (1, 2) in the map frame
    (tmp_path / "m.yaml").write_text("image: m.pgm\nresolution: 0.05\norigin: [1, 2, 0]\n")
    moved = tmp_path / "moved.tape"
    assert (
        main([*args[:6], str(moved), *args[7:], "--transform-from", str(tmp_path / "m.yaml")]) == 0
    )
    first = open_tape(moved).episode(0).poses[0]
    assert np.allclose(first[:, :2], open_tape(out).episode(0).poses[0][:, :2] - [1.0, 2.0])
    both = [*args, "--transform", "0,0,0", "--transform-from", str(tmp_path / "m.yaml")]
    assert main(both) == 2 and "not both" in capsys.readouterr().err
    assert main(["import", "bag", str(tmp_path / "none"), *base[3:], *args[len(base) :]]) == 2
    assert "no such bag" in capsys.readouterr().err


def test_sources_list_pose_topics_and_tf_frames(tmp_path: Path) -> None:
    from arena_studio.core.robot.bag_read import list_sources

    b = BagBuilder()
    t = sample_times(0, 1, 8)
    b.odometry("/robot1/odom", t, circle(t))
    b.tf("/tf", 0.5, [("map", "odom", (0.0, 0.0, 0.0)), ("odom", "robot2/base", (1.0, 0.0, 0.0))])
    b.blob("/acme/blob", 0.2)
    bag = b.write(tmp_path / "src", "mcap")
    names = [s.name for s in list_sources([bag])]
    assert names == ["/robot1/odom", "tf:odom", "tf:robot2/base"]


def test_sources_of_a_bag_without_tf(tmp_path: Path) -> None:
    from arena_studio.core.robot.bag_read import list_sources

    bag = _two_robot_bag(tmp_path, "mcap")
    assert [s.name for s in list_sources([bag])] == ["/robot1/odom", "/robot2/pose"]


@pytest.mark.parametrize("storage", STORAGES)
def test_pose_with_covariance_and_the_choice_of_clock(tmp_path: Path, storage: str) -> None:
    b = BagBuilder()
    t = sample_times(0, 4, 9)
    b.pose_cov("/robot1/amcl_pose", t, circle(t))
    b.header_offset = 50.0  # robot2's clock runs 50 s ahead of the recorder's
    b.pose_stamped("/robot2/pose", t, line(t))
    bag = b.write(tmp_path / "clock", storage)
    agents = {"rover-1": "/robot1/amcl_pose", "rover-2": "/robot2/pose"}
    by_header = read_runs([bag], scene(), BagImportOptions(agents=agents))
    # by header stamps the two robots are 50 s apart: two pauses-split episodes, each
    # missing one robot, so both are skipped
    assert by_header.episodes == [] and by_header.skipped_episodes == 2
    by_bag = read_runs([bag], scene(), BagImportOptions(agents=agents, use_header=False))
    ep = by_bag.episodes[0]
    grid = ep.start + 0.1 * np.arange(len(ep.poses))
    _close(ep.poses[:, 0], wrapped(circle(grid)))  # every record time is 3 ms late alike
