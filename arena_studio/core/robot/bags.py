"""Recorded ROS 2 runs to tapes: pose topics or TF chains per agent, split and resampled.

::

    from arena_studio.core.robot.bags import BagImportOptions, import_bags

    opts = BagImportOptions(agents={"rover-1": "/robot1/odom", "rover-2": "tf:robot2/base"})
    report = import_bags(["run1"], scene, "run1.tape", opts)

Each scene agent takes its poses from one source: a topic of ``nav_msgs/Odometry``,
``geometry_msgs/PoseStamped`` or ``PoseWithCovarianceStamped``, or ``tf:FRAME``, the TF chain
from ``fixed_frame`` down to FRAME (``/tf`` and ``/tf_static``, composed in the plane). A
rigid ``transform`` (the pose of the map frame in the scene) moves every pose into the
scene. Episodes are split (:mod:`.run_split`), resampled every ``dt`` seconds with headings
interpolated on the circle, and written with the optional team goal. A replay of real runs
is an analysis aid; safety of robots near people is assessed on site under the applicable
standards.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from arena_studio.core.robot.bag_read import (
    TF_PREFIX,
    BagData,
    BagRequest,
    TopicUsage,
    find_bags,
    frame_name,
    read_bag,
    samples_array,
)
from arena_studio.core.robot.errors import RobotImportError
from arena_studio.core.robot.pose_math import compose, interp_poses, sorted_unique
from arena_studio.core.robot.run_split import (
    Stream,
    resample_span,
    spans_by_gap,
    spans_by_marker,
    spans_whole,
)
from arena_studio.core.scene import Scene

SPLITS = ("gap", "marker", "bag")


@dataclass(frozen=True)
class BagImportOptions:
    agents: Mapping[str, str]  # scene agent id -> topic or "tf:FRAME"
    dt: float = 0.1
    transform: tuple[float, float, float] = (0.0, 0.0, 0.0)
    scale: float = 1.0  # map metres to scene metres (1 unless an underlay was rescaled)
    fixed_frame: str = "map"
    split: str = "gap"
    gap: float = 2.0
    marker: str | None = None
    goal: str | None = None  # landmark ids joined by "+", for every episode
    goal_topic: str | None = None
    use_header: bool = True  # header stamps (else the bag's record times)


@dataclass
class RunEpisode:
    poses: np.ndarray  # (T, A, 3)
    team_goal: np.ndarray | None
    source: str
    start: float  # seconds since the first bag's first message


@dataclass
class BagImportReport:
    episodes: list[RunEpisode] = field(default_factory=list)
    topics: dict[str, TopicUsage] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    skipped_episodes: int = 0
    bags: int = 0


def parse_agent_args(items: Sequence[str]) -> dict[str, str]:
    """``["rover-1=/robot1/odom", ...]`` -> {"rover-1": "/robot1/odom"}."""
    out: dict[str, str] = {}
    for item in items:
        agent, sep, source = item.partition("=")
        if not sep or not agent.strip() or not source.strip():
            raise RobotImportError(f"--agent: expected ID=TOPIC or ID=tf:FRAME, got {item!r}")
        if agent.strip() in out:
            raise RobotImportError(f"--agent: {agent.strip()!r} is given twice")
        out[agent.strip()] = source.strip()
    return out


def goal_vector(text: str, scene: Scene, where: str) -> np.ndarray:
    """Landmark ids joined by '+', ',' or spaces -> a 0/1 vector over the scene's landmarks."""
    ids = [s for s in re.split(r"[+,\s]+", text.strip()) if s]
    vec = np.zeros(len(scene.landmarks), dtype=np.uint8)
    known = {lm.id: i for i, lm in enumerate(scene.landmarks)}
    for name in ids:
        if name not in known:
            raise RobotImportError(f"{where}: unknown landmark {name!r}")
        vec[known[name]] = 1
    if not ids:
        raise RobotImportError(f"{where}: no landmark ids")
    return vec


def check_options(scene: Scene, opts: BagImportOptions) -> None:
    """Refuse options that cannot work before any bag is read."""
    ids = [a.id for a in scene.agents]
    for agent in opts.agents:
        if agent not in ids:
            raise RobotImportError(f"--agent: {agent!r} is not a scene agent ({', '.join(ids)})")
    missing = [a for a in ids if a not in opts.agents]
    if missing:
        raise RobotImportError(f"--agent: no source for scene agent(s) {', '.join(missing)}")
    if not (math.isfinite(opts.dt) and opts.dt > 0):
        raise RobotImportError("--dt: expected a time step > 0")
    if not (math.isfinite(opts.scale) and opts.scale > 0):
        raise RobotImportError("transform scale: expected a factor > 0")
    if not (math.isfinite(opts.gap) and opts.gap > 0):
        raise RobotImportError("--gap: expected seconds > 0")
    if opts.split not in SPLITS:
        raise RobotImportError(f"--split: expected one of {', '.join(SPLITS)}")
    if opts.split == "marker" and not opts.marker:
        raise RobotImportError("--split marker needs --marker TOPIC")
    if opts.goal is not None:
        goal_vector(opts.goal, scene, "--goal")


def _request(opts: BagImportOptions) -> BagRequest:
    sources = opts.agents.values()
    return BagRequest(
        pose_topics=frozenset(s for s in sources if not s.startswith(TF_PREFIX)),
        want_tf=any(s.startswith(TF_PREFIX) for s in sources),
        marker=opts.marker,
        goal_topic=opts.goal_topic,
        use_header=opts.use_header,
    )


def tf_stream(data: BagData, fixed: str, frame: str) -> tuple[np.ndarray, np.ndarray]:
    """Poses of ``frame`` in ``fixed`` at the times of its own (deepest) TF edge."""
    parent_of = {child: parent for parent, child in data.tf}
    chain: list[tuple[str, str]] = []
    node = frame
    while node != fixed:
        if node not in parent_of or len(chain) > 64:
            end = f" (the chain ends at {node!r})" if chain else ""
            raise RobotImportError(f"{data.name}: no TF chain from {fixed!r} to {frame!r}{end}")
        chain.append((parent_of[node], node))
        node = parent_of[node]
    edges = [sorted_unique(*samples_array(data.tf[e])) for e in reversed(chain)]
    dynamic = [e for e in edges if len(e[0]) > 1] or edges
    times = dynamic[-1][0]
    pose = np.zeros((len(times), 3))
    for t, p in edges:
        pose = compose(pose, interp_poses(t.astype(np.float64), p, times.astype(np.float64)))
    return times, pose


def agent_streams(
    data: BagData, scene: Scene, opts: BagImportOptions, t0: int
) -> tuple[list[Stream], list[str]]:
    """Per scene agent: times (s since ``t0``) and scene poses; problems as messages."""
    streams: list[Stream] = []
    problems = []
    move = np.asarray(opts.transform, dtype=np.float64)
    for agent in scene.agents:
        source = opts.agents[agent.id]
        try:
            if source.startswith(TF_PREFIX):
                frame = frame_name(source[len(TF_PREFIX) :])
                t, p = tf_stream(data, frame_name(opts.fixed_frame), frame)
            else:
                t, p = sorted_unique(*samples_array(data.poses.get(source, [])))
        except RobotImportError as exc:
            problems.append(str(exc))
            t, p = np.empty(0, dtype=np.int64), np.empty((0, 3))
        if not len(t) and not problems:
            problems.append(f"{data.name}: no poses for {agent.id} from {source}")
        good = np.isfinite(p).all(axis=1)
        scaled = p[good] * np.array([opts.scale, opts.scale, 1.0])
        streams.append(((t[good] - t0) / 1e9, compose(move, scaled)))
    return streams, problems


def _spans(
    data: BagData, streams: list[Stream], opts: BagImportOptions, t0: int
) -> list[tuple[float, float]]:
    if opts.split == "gap":
        return spans_by_gap(streams, opts.gap)
    if opts.split == "marker":
        return spans_by_marker(streams, [(m - t0) / 1e9 for m in data.markers])
    return spans_whole(streams)


def _episode_goal(
    data: BagData,
    scene: Scene,
    opts: BagImportOptions,
    end: float,
    t0: int,
    report: BagImportReport,
) -> np.ndarray | None:
    if opts.goal is not None:
        return goal_vector(opts.goal, scene, "--goal")
    if not opts.goal_topic:
        return None
    before = [(t, text) for t, text in data.goals if (t - t0) / 1e9 <= end + 1e-9]
    if not before:
        return None
    t, text = before[-1]
    try:
        return goal_vector(text, scene, f"{data.name}: {opts.goal_topic} at {(t - t0) / 1e9:.3f} s")
    except RobotImportError as exc:
        report.warnings.append(f"{exc}; episode kept without a team goal")
        return None


def read_runs(
    paths: Sequence[str | Path],
    scene: Scene,
    opts: BagImportOptions,
    advance: Callable[[int], None] | None = None,
) -> BagImportReport:
    """Episodes of every bag, in bag order, with the per-topic usage report."""
    check_options(scene, opts)
    bags = [b for p in paths for b in find_bags(p)]
    report = BagImportReport(bags=len(bags))
    req = _request(opts)
    t0: int | None = None
    for bag in bags:
        data = read_bag(bag, req, advance)
        report.warnings.extend(data.warnings)
        _merge_usage(report, data)
        firsts = [s[0] for v in data.poses.values() for s in v[:1]]
        firsts += [s[0] for v in data.tf.values() for s in v[:1]]
        if t0 is None and firsts:
            t0 = min(firsts)
        base = t0 if t0 is not None else 0
        streams, problems = agent_streams(data, scene, opts, base)
        if problems:
            report.warnings.extend(f"{p}; bag skipped" for p in problems)
            report.skipped_episodes += 1
            continue
        for start, end in _spans(data, streams, opts, base):
            poses, missing = resample_span(streams, start, end, opts.dt)
            if poses is None:
                names = ", ".join(scene.agents[a].id for a in missing)
                report.warnings.append(
                    f"{data.name}: episode at {start:.3f} s: no poses for {names}; skipped"
                )
                report.skipped_episodes += 1
                continue
            goal = _episode_goal(data, scene, opts, end, base, report)
            report.episodes.append(RunEpisode(poses, goal, data.name, start))
    return report


def _merge_usage(report: BagImportReport, data: BagData) -> None:
    for topic, usage in data.usage.items():
        have = report.topics.get(topic)
        if have is None:
            report.topics[topic] = TopicUsage(
                topic, usage.msgtype, usage.messages, usage.used, usage.note
            )
        else:
            have.messages += usage.messages
            have.used += usage.used
            have.note = have.note or usage.note


def import_bags(
    paths: Sequence[str | Path],
    scene: Scene,
    out: str | Path,
    opts: BagImportOptions,
    advance: Callable[[int], None] | None = None,
) -> BagImportReport:
    """Read the bags and write their episodes into a tape (atomically, nothing on failure)."""
    from arena_studio.core.tape import TapeWriter

    report = read_runs(paths, scene, opts, advance)
    if not report.episodes:
        raise RobotImportError(
            "no episode could be imported" + (f": {report.warnings[0]}" if report.warnings else "")
        )
    meta = {
        "generator": "arena-studio import bag",
        "sources": [Path(p).name for p in paths],
        "agents": dict(opts.agents),
        "transform": list(opts.transform),
        "scale": opts.scale,
    }
    with TapeWriter(out, scene, dt=opts.dt, metadata=meta, keep_partial=False) as w:
        for ep in report.episodes:
            w.begin_episode(team_goal=ep.team_goal)
            w.steps(ep.poses)
            w.end_episode({"source": ep.source, "start_time": round(ep.start, 6)})
    return report


__all__ = [
    "SPLITS",
    "BagImportOptions",
    "BagImportReport",
    "RunEpisode",
    "check_options",
    "goal_vector",
    "import_bags",
    "parse_agent_args",
    "read_runs",
    "tf_stream",
]
