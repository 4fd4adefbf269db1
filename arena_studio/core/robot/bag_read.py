"""Read the pose-carrying messages of a ROS 2 bag (MCAP or SQLite3) with ``rosbags``.

No ROS installation is needed: ``rosbags`` parses both storage formats and decodes CDR with
its stock ROS 2 type definitions. Only the topics an import asks for are decoded; every other
topic is counted as unused. A message that cannot be decoded (a type this reader does not
know, a definition that differs, damaged bytes) is skipped and counted, never fatal; a bag
that stops being readable halfway keeps what was read before and says where it stopped.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from arena_studio.core.robot.errors import RobotImportError
from arena_studio.core.robot.pose_math import quat_yaw

ODOMETRY = "nav_msgs/msg/Odometry"
POSE_STAMPED = "geometry_msgs/msg/PoseStamped"
POSE_COV = "geometry_msgs/msg/PoseWithCovarianceStamped"
TF = "tf2_msgs/msg/TFMessage"
STRING = "std_msgs/msg/String"
POSE_TYPES = (ODOMETRY, POSE_STAMPED, POSE_COV)
TF_PREFIX = "tf:"
Sample = tuple[int, float, float, float]  # time (ns), x, y, yaw


@dataclass
class TopicUsage:
    """How many messages of one topic were read, used and skipped, and why."""

    topic: str
    msgtype: str
    messages: int = 0
    used: int = 0
    note: str = ""

    @property
    def skipped(self) -> int:
        return max(self.messages - self.used, 0)


@dataclass
class BagData:
    """What one bag holds for an import: pose samples, TF edges, markers and goal texts."""

    name: str
    poses: dict[str, list[Sample]] = field(default_factory=dict)
    tf: dict[tuple[str, str], list[Sample]] = field(default_factory=dict)  # (parent, child)
    markers: list[int] = field(default_factory=list)
    goals: list[tuple[int, str]] = field(default_factory=list)
    usage: dict[str, TopicUsage] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)


def find_bags(path: str | Path) -> list[Path]:
    """A bag folder, a ``.mcap``/``.db3`` file, or a folder of such bags (sorted by name)."""
    from arena_studio.core.safe_open import check_input

    p = Path(path)
    if not p.exists():
        raise RobotImportError(f"{p}: no such bag")
    if not p.is_dir():
        check_input(p, "bag")  # a pipe or device is refused by name
        return [p]
    if (p / "metadata.yaml").is_file():
        return [p]
    found = [
        c
        for c in sorted(p.iterdir())
        if (c.is_dir() and (c / "metadata.yaml").is_file())
        or (c.is_file() and c.suffix in (".mcap", ".db3"))
    ]
    if not found:
        raise RobotImportError(f"{p}: not a ROS 2 bag (no metadata.yaml, .mcap or .db3 inside)")
    return found


def count_messages(paths: Iterable[Path]) -> int:
    """Messages in the bags (from their summaries), for a progress bar; 0 when unknown."""
    from rosbags.rosbag2 import Reader

    total = 0
    for path in paths:
        try:
            with Reader(path) as reader:
                total += int(reader.message_count)
        except Exception:  # the import itself reports an unreadable bag, with its name
            continue
    return total


@dataclass(frozen=True)
class Source:
    """A pose source an agent can be given: a topic, or ``tf:FRAME``."""

    name: str
    msgtype: str
    messages: int


def list_sources(paths: Iterable[Path], tf_scan: int = 5000) -> list[Source]:
    """Pose topics and TF child frames in the bags (TF from the first ``tf_scan`` messages)."""
    from rosbags.rosbag2 import Reader
    from rosbags.typesys import Stores, get_typestore

    typestore = get_typestore(Stores.ROS2_HUMBLE)
    topics: dict[str, Source] = {}
    frames: dict[str, int] = {}
    for path in paths:
        try:
            with Reader(path) as reader:
                for c in reader.connections:
                    if c.msgtype in POSE_TYPES:
                        have = topics.get(c.topic)
                        count = int(c.msgcount or 0) + (have.messages if have else 0)
                        topics[c.topic] = Source(c.topic, c.msgtype, count)
                tf = [c for c in reader.connections if c.msgtype == TF]
                # an empty connection list means "every message" to rosbags: skip instead
                stream = reader.messages(connections=tf) if tf else iter(())
                for n, (conn, _, raw) in enumerate(stream):
                    if n >= tf_scan:
                        break
                    msg: Any = typestore.deserialize_cdr(raw, conn.msgtype)
                    for tr in msg.transforms:
                        child = frame_name(tr.child_frame_id)
                        frames[child] = frames.get(child, 0) + 1
        except Exception as exc:
            raise RobotImportError(f"{path}: not a readable ROS 2 bag ({exc})") from None
    out = sorted(topics.values(), key=lambda s: s.name)
    out += [Source(TF_PREFIX + f, TF, n) for f, n in sorted(frames.items())]
    return out


def bag_topics(paths: Iterable[Path]) -> list[tuple[str, str]]:
    """Every (topic, type) in the bags, sorted by topic, for marker and goal choices."""
    from rosbags.rosbag2 import Reader

    found: dict[str, str] = {}
    for path in paths:
        try:
            with Reader(path) as reader:
                found.update((c.topic, c.msgtype) for c in reader.connections)
        except Exception as exc:
            raise RobotImportError(f"{path}: not a readable ROS 2 bag ({exc})") from None
    return sorted(found.items())


def frame_name(name: str) -> str:
    """TF frame ids compare without a leading slash (an old convention some bags keep)."""
    return name.lstrip("/")


def _stamp(header: Any, bag_ns: int, use_header: bool) -> int:
    if not use_header:
        return bag_ns
    ns = int(header.stamp.sec) * 1_000_000_000 + int(header.stamp.nanosec)
    return ns if ns > 0 else bag_ns


def _pose_of(pose: Any) -> tuple[float, float, float]:
    q = pose.orientation
    yaw = float(quat_yaw(q.x, q.y, q.z, q.w))
    return float(pose.position.x), float(pose.position.y), yaw


def pose_sample(msg: Any, msgtype: str, bag_ns: int, use_header: bool) -> Sample:
    """(time, x, y, yaw) of an Odometry, PoseStamped or PoseWithCovarianceStamped message."""
    pose = msg.pose if msgtype == POSE_STAMPED else msg.pose.pose
    return (_stamp(msg.header, bag_ns, use_header), *_pose_of(pose))


def _tf_samples(
    msg: Any, bag_ns: int, use_header: bool
) -> Iterable[tuple[tuple[str, str], Sample]]:
    for tr in msg.transforms:
        t, q = tr.transform.translation, tr.transform.rotation
        edge = (frame_name(tr.header.frame_id), frame_name(tr.child_frame_id))
        yaw = float(quat_yaw(q.x, q.y, q.z, q.w))
        yield edge, (_stamp(tr.header, bag_ns, use_header), float(t.x), float(t.y), yaw)


@dataclass(frozen=True)
class BagRequest:
    """Which topics an import reads; agent sources are topics or ``tf:FRAME``."""

    pose_topics: frozenset[str]
    want_tf: bool
    marker: str | None = None
    goal_topic: str | None = None
    use_header: bool = True


def _wanted(conn: Any, req: BagRequest, usage: TopicUsage, known: Any) -> str | None:
    """The role a connection plays in this import, or None (with the reason noted)."""
    if conn.topic == req.marker:
        return "marker"
    if conn.topic in req.pose_topics:
        if conn.msgtype in POSE_TYPES:
            return "pose"
        usage.note = "not a pose type (Odometry, PoseStamped, PoseWithCovarianceStamped)"
        return None
    if req.want_tf and conn.msgtype == TF:
        return "tf"
    if conn.topic == req.goal_topic:
        if conn.msgtype == STRING:
            return "goal"
        usage.note = "goal topic: expected std_msgs/msg/String"
        return None
    usage.note = "not used" if conn.msgtype in known else "unknown type, not used"
    return None


def read_bag(path: Path, req: BagRequest, advance: Callable[[int], None] | None = None) -> BagData:
    """Decode the requested topics of one bag."""
    from rosbags.rosbag2 import Reader
    from rosbags.typesys import Stores, get_typestore

    typestore = get_typestore(Stores.ROS2_HUMBLE)
    data = BagData(name=path.name)
    try:
        reader = Reader(path)
        reader.open()
    except Exception as exc:  # the library's many failure types all mean "unreadable"
        raise RobotImportError(f"{path}: not a readable ROS 2 bag ({exc})") from None
    try:
        roles: dict[int, str] = {}
        for conn in reader.connections:
            usage = data.usage.setdefault(conn.topic, TopicUsage(conn.topic, conn.msgtype))
            usage.messages += int(conn.msgcount or 0)
            role = _wanted(conn, req, usage, typestore.types)
            if role is not None:
                roles[conn.id] = role
        wanted = [c for c in reader.connections if c.id in roles]
        _read_messages(reader, wanted, roles, typestore, req, data, advance)
    finally:
        reader.close()
    for usage in data.usage.values():
        if usage.used == 0 and not usage.note:
            usage.note = "nothing decodable"
    return data


def _read_messages(
    reader: Any,
    wanted: list[Any],
    roles: dict[int, str],
    typestore: Any,
    req: BagRequest,
    data: BagData,
    advance: Callable[[int], None] | None,
) -> None:
    if not wanted:
        return
    count = 0
    try:
        for conn, bag_ns, raw in reader.messages(connections=wanted):
            count += 1
            if advance is not None:
                advance(1)
            _take(conn, roles[conn.id], int(bag_ns), raw, typestore, req, data)
    except RobotImportError:
        raise
    except Exception as exc:  # damage in the file: keep what was read before it
        data.warnings.append(f"{data.name}: reading stopped after {count} messages ({exc})")


def _take(
    conn: Any,
    role: str,
    bag_ns: int,
    raw: bytes,
    typestore: Any,
    req: BagRequest,
    data: BagData,
) -> None:
    usage = data.usage[conn.topic]
    if role == "marker":
        data.markers.append(bag_ns)
        usage.used += 1
        return
    try:
        msg = typestore.deserialize_cdr(raw, conn.msgtype)
        if role == "pose":
            data.poses.setdefault(conn.topic, []).append(
                pose_sample(msg, conn.msgtype, bag_ns, req.use_header)
            )
        elif role == "tf":
            for edge, sample in _tf_samples(msg, bag_ns, req.use_header):
                data.tf.setdefault(edge, []).append(sample)
        else:
            data.goals.append((bag_ns, str(msg.data)))
    except Exception:  # undecodable bytes or a differing definition: skip and count
        usage.note = "some messages undecodable"
        return
    usage.used += 1


def samples_array(samples: list[Sample]) -> tuple[np.ndarray, np.ndarray]:
    """Times (ns, int64) and poses (N, 3) of a sample list."""
    arr = np.array([s[1:] for s in samples], dtype=np.float64).reshape(-1, 3)
    return np.array([s[0] for s in samples], dtype=np.int64), arr


__all__ = [
    "POSE_TYPES",
    "TF_PREFIX",
    "BagData",
    "BagRequest",
    "Source",
    "TopicUsage",
    "bag_topics",
    "count_messages",
    "find_bags",
    "frame_name",
    "list_sources",
    "pose_sample",
    "read_bag",
    "samples_array",
]
