"""Bags of known trajectories, written with rosbags' own writer (MCAP or SQLite3)."""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable
from pathlib import Path

import numpy as np
from scipy.spatial.transform import Rotation

from arena_studio.core.scene import Agent, GoalSpec, Landmark, Room, Scene, Start

T0 = 1_700_000_000  # seconds: header stamps are wall-clock-like, as on a robot
RATE = 20.0  # Hz of the recorded pose messages


def circle(t: np.ndarray) -> np.ndarray:
    """rover-1: a circle of radius 1 about (2, 3), heading along it."""
    return np.stack([2 + np.cos(0.5 * t), 3 + np.sin(0.5 * t), 0.5 * t + math.pi / 2], -1)


def line(t: np.ndarray) -> np.ndarray:
    """rover-2: straight along +x while turning slowly through +-pi."""
    return np.stack([1 + 0.3 * t, 1 + 0 * t, math.pi - 0.2 + 0.1 * t], -1)


def wrapped(p: np.ndarray) -> np.ndarray:
    out = p.copy()
    out[..., 2] = (out[..., 2] + math.pi) % (2 * math.pi) - math.pi
    return out


def scene() -> Scene:
    agents = tuple(
        Agent(
            id=f"rover-{i}",
            radius=0.2,
            max_speed=1.0,
            max_turn_rate=2.0,
            start=Start(pose=(1.0, float(i), 0.0)),
        )
        for i in (1, 2)
    )
    return Scene(
        name="yard",
        rooms=(
            Room(id="yard", outline=((-10.0, -10.0), (20.0, -10.0), (20.0, 20.0), (-10.0, 20.0))),
        ),
        landmarks=(
            Landmark("valve", "Valve", (0.0, 0.0), 0.5),
            Landmark("pump", "Pump", (5.0, 5.0), 0.5),
        ),
        agents=agents,
        goals=GoalSpec(),
    )


def _quat(yaw: float, roll: float = 0.0, pitch: float = 0.0) -> tuple[float, ...]:
    # scipy: intrinsic "ZYX" = yaw, then pitch, then roll; as_quat is (x, y, z, w)
    return tuple(Rotation.from_euler("ZYX", [yaw, pitch, roll]).as_quat())


class BagBuilder:
    """Collects messages, then writes them in time order with rosbags' Writer."""

    def __init__(self) -> None:
        from rosbags.typesys import Stores, get_types_from_msg, get_typestore

        self.ts = get_typestore(Stores.ROS2_HUMBLE)
        self.ts.register(get_types_from_msg("uint8[] data\nstring label", "acme_msgs/msg/Blob"))
        self.items: list[tuple[int, str, str, Callable[[], bytes]]] = []
        self.header_offset = 0.0  # seconds added to header stamps (another clock)

    def _header(self, t: float, frame: str = "map"):
        T = self.ts.types
        t = t + self.header_offset
        sec = math.floor(t)
        stamp = T["builtin_interfaces/msg/Time"](sec=T0 + sec, nanosec=round((t - sec) * 1e9))
        return T["std_msgs/msg/Header"](stamp=stamp, frame_id=frame)

    def _pose(self, p: np.ndarray, tilt: float = 0.0):
        T = self.ts.types
        q = _quat(float(p[2]), roll=tilt, pitch=-tilt)
        return T["geometry_msgs/msg/Pose"](
            position=T["geometry_msgs/msg/Point"](x=float(p[0]), y=float(p[1]), z=0.0),
            orientation=T["geometry_msgs/msg/Quaternion"](x=q[0], y=q[1], z=q[2], w=q[3]),
        )

    def add(self, topic: str, msgtype: str, t: float, make: Callable[[], object]) -> None:
        ns = (T0 + 0) * 1_000_000_000 + round(t * 1e9) + 3_000_000  # received 3 ms later
        data = bytes(self.ts.serialize_cdr(make(), msgtype))  # now: header_offset as set now
        self.items.append((ns, topic, msgtype, lambda: data))

    def odometry(
        self, topic: str, times: Iterable[float], poses: np.ndarray, tilt: float = 0.0
    ) -> None:
        T = self.ts.types
        for t, p in zip(times, poses, strict=True):

            def make(t=t, p=p):
                cov = T["geometry_msgs/msg/PoseWithCovariance"](
                    pose=self._pose(p, tilt), covariance=np.zeros(36)
                )
                tw = T["geometry_msgs/msg/TwistWithCovariance"](
                    twist=T["geometry_msgs/msg/Twist"](
                        linear=T["geometry_msgs/msg/Vector3"](x=0.0, y=0.0, z=0.0),
                        angular=T["geometry_msgs/msg/Vector3"](x=0.0, y=0.0, z=0.0),
                    ),
                    covariance=np.zeros(36),
                )
                return T["nav_msgs/msg/Odometry"](
                    header=self._header(t), child_frame_id="base", pose=cov, twist=tw
                )

            self.add(topic, "nav_msgs/msg/Odometry", t, make)

    def pose_cov(self, topic: str, times: Iterable[float], poses: np.ndarray) -> None:
        T = self.ts.types
        for t, p in zip(times, poses, strict=True):
            self.add(
                topic,
                "geometry_msgs/msg/PoseWithCovarianceStamped",
                t,
                lambda t=t, p=p: T["geometry_msgs/msg/PoseWithCovarianceStamped"](
                    header=self._header(t),
                    pose=T["geometry_msgs/msg/PoseWithCovariance"](
                        pose=self._pose(p), covariance=np.zeros(36)
                    ),
                ),
            )

    def pose_stamped(self, topic: str, times: Iterable[float], poses: np.ndarray) -> None:
        T = self.ts.types
        for t, p in zip(times, poses, strict=True):
            self.add(
                topic,
                "geometry_msgs/msg/PoseStamped",
                t,
                lambda t=t, p=p: T["geometry_msgs/msg/PoseStamped"](
                    header=self._header(t), pose=self._pose(p)
                ),
            )

    def tf(self, topic: str, t: float, edges: list[tuple[str, str, tuple[float, float, float]]]):
        T = self.ts.types

        def make():
            items = []
            for parent, child, (x, y, yaw) in edges:
                q = _quat(yaw)
                tr = T["geometry_msgs/msg/Transform"](
                    translation=T["geometry_msgs/msg/Vector3"](x=x, y=y, z=0.0),
                    rotation=T["geometry_msgs/msg/Quaternion"](x=q[0], y=q[1], z=q[2], w=q[3]),
                )
                items.append(
                    T["geometry_msgs/msg/TransformStamped"](
                        header=self._header(t, parent), child_frame_id=child, transform=tr
                    )
                )
            return T["tf2_msgs/msg/TFMessage"](transforms=items)

        self.add(topic, "tf2_msgs/msg/TFMessage", t, make)

    def string(self, topic: str, t: float, text: str) -> None:
        T = self.ts.types
        self.add(topic, "std_msgs/msg/String", t, lambda: T["std_msgs/msg/String"](data=text))

    def blob(self, topic: str, t: float) -> None:
        T = self.ts.types
        self.add(
            topic,
            "acme_msgs/msg/Blob",
            t,
            lambda: T["acme_msgs/msg/Blob"](data=np.arange(4, dtype=np.uint8), label="x"),
        )

    def garbage(self, topic: str, msgtype: str, t: float) -> None:
        self.items.append(
            (
                (T0) * 1_000_000_000 + round(t * 1e9),
                topic,
                msgtype,
                lambda: b"\x00\x01\x00\x00broken",
            )
        )

    def write(self, path: Path, storage: str) -> Path:
        from rosbags.rosbag2 import StoragePlugin, Writer

        plugin = StoragePlugin.MCAP if storage == "mcap" else StoragePlugin.SQLITE3
        with Writer(path, version=9, storage_plugin=plugin) as writer:
            conns = {}
            for ns, topic, msgtype, make in sorted(self.items, key=lambda i: i[0]):
                if topic not in conns:
                    conns[topic] = writer.add_connection(topic, msgtype, typestore=self.ts)
                writer.write(conns[topic], ns, make())
        return path


def sample_times(start: float, end: float, seed: int) -> np.ndarray:
    """About RATE Hz with jitter, as real topics arrive."""
    rng = np.random.default_rng(seed)
    t = np.arange(start, end, 1 / RATE)
    t = np.clip(t + rng.uniform(-0.01, 0.01, len(t)), start, end)
    t[0] = start  # the run starts at a known time, so episode times are true times
    return t
