"""The scene model: rooms, obstacles, landmarks, agents and the team goal set.

Scenes are immutable values (frozen dataclasses of tuples): equality is by value, a scene can
be hashed, and an editor builds a changed copy with :func:`dataclasses.replace`. Shapely
geometry is derived on demand in :mod:`arena_studio.core.geometry.regions`.

Public API::

    from arena_studio.core.scene.model import Scene, load_scene, save_scene
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Literal

from arena_studio.core.errors import SceneFormatError

FORMAT_NAME = "arena-studio.scene"
FORMAT_VERSION = 1

Point = tuple[float, float]
Pose = tuple[float, float, float]
Mount = Literal["wall", "free"]
Rule = Literal["all_at_end", "all_at_once", "all_visited"]
MOUNTS: tuple[str, ...] = ("wall", "free")
RULES: tuple[str, ...] = ("all_at_end", "all_at_once", "all_visited")


def _pts(points: tuple[Point, ...]) -> list[list[float]]:
    return [[float(x), float(y)] for x, y in points]


@dataclass(frozen=True)
class Room:
    """A walkable polygon. Rooms that overlap or touch join into one walkable area."""

    id: str
    outline: tuple[Point, ...]

    def to_dict(self) -> dict[str, Any]:
        return {"id": self.id, "outline": _pts(self.outline)}


@dataclass(frozen=True)
class Circle:
    center: Point
    radius: float


@dataclass(frozen=True)
class Obstacle:
    """A region agents cannot enter: exactly one of ``outline`` (polygon) or ``circle``."""

    id: str
    outline: tuple[Point, ...] | None = None
    circle: Circle | None = None

    def __post_init__(self) -> None:
        if (self.outline is None) == (self.circle is None):
            raise ValueError("an obstacle has exactly one of outline or circle")

    @property
    def kind(self) -> Literal["polygon", "circle"]:
        return "polygon" if self.outline is not None else "circle"

    def to_dict(self) -> dict[str, Any]:
        if self.outline is not None:
            return {"id": self.id, "outline": _pts(self.outline)}
        assert self.circle is not None
        return {
            "id": self.id,
            "circle": {
                "center": _pts((self.circle.center,))[0],
                "radius": float(self.circle.radius),
            },
        }


@dataclass(frozen=True)
class Landmark:
    """A point of interest; reached when an agent's centre is within ``reach_radius``."""

    id: str
    label: str
    position: Point
    reach_radius: float
    mount: Mount = "free"

    def to_dict(self) -> dict[str, Any]:
        return {
            "id": self.id,
            "label": self.label,
            "position": _pts((self.position,))[0],
            "reach_radius": float(self.reach_radius),
            "mount": self.mount,
        }


@dataclass(frozen=True)
class Start:
    """An agent's start: a fixed ``pose``, or a ``region`` polygon it is placed in at random.

    For a region, ``heading`` is fixed when given and drawn uniformly when ``None``.
    """

    pose: Pose | None = None
    region: tuple[Point, ...] | None = None
    heading: float | None = None

    def __post_init__(self) -> None:
        if (self.pose is None) == (self.region is None):
            raise ValueError("a start has exactly one of pose or region")

    def to_dict(self) -> dict[str, Any]:
        if self.pose is not None:
            return {"pose": [float(v) for v in self.pose]}
        assert self.region is not None
        return {
            "region": _pts(self.region),
            "heading": None if self.heading is None else float(self.heading),
        }


@dataclass(frozen=True)
class Agent:
    """A disc-shaped robot with unicycle limits: top speed (m/s) and top turn rate (rad/s)."""

    id: str
    radius: float
    max_speed: float
    max_turn_rate: float
    start: Start

    def to_dict(self) -> dict[str, Any]:
        return {
            "id": self.id,
            "radius": float(self.radius),
            "max_speed": float(self.max_speed),
            "max_turn_rate": float(self.max_turn_rate),
            "start": self.start.to_dict(),
        }


@dataclass(frozen=True)
class GoalSpec:
    """The goal set and success rule.

    ``families`` lists k values: every k-hot vector over the landmarks is a goal. ``vectors``
    adds explicit multi-hot goals (ordered as the scene's landmarks). ``family_weights`` and
    ``vector_weights`` (default 1 each) give every goal of a family, or one explicit vector,
    its sampling weight; :mod:`.planning.goal_set` normalises them. ``hold_time`` is how
    long (s) the rule's condition must hold.
    """

    rule: Rule = "all_at_end"
    hold_time: float = 0.0
    families: tuple[int, ...] = (1,)
    vectors: tuple[tuple[int, ...], ...] = ()
    family_weights: tuple[float, ...] | None = None
    vector_weights: tuple[float, ...] | None = None

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "rule": self.rule,
            "hold_time": float(self.hold_time),
            "families": list(self.families),
            "vectors": [list(v) for v in self.vectors],
        }
        weights: dict[str, Any] = {}
        if self.family_weights is not None:
            weights["families"] = [float(w) for w in self.family_weights]
        if self.vector_weights is not None:
            weights["vectors"] = [float(w) for w in self.vector_weights]
        if weights:
            out["weights"] = weights
        return out


@dataclass(frozen=True)
class Scene:
    """One layout: rooms, obstacles, landmarks, agents, goal set and success rule."""

    name: str = "untitled"
    rooms: tuple[Room, ...] = ()
    obstacles: tuple[Obstacle, ...] = ()
    landmarks: tuple[Landmark, ...] = ()
    agents: tuple[Agent, ...] = ()
    goals: GoalSpec = field(default_factory=GoalSpec)
    description: str = ""

    # -- conversions -------------------------------------------------------------------
    def to_dict(self) -> dict[str, Any]:
        """Plain dict in file-format order (what ``*.scene.json`` holds)."""
        out: dict[str, Any] = {
            "format": FORMAT_NAME,
            "version": FORMAT_VERSION,
            "name": self.name,
            "units": "m",
        }
        if self.description:
            out["description"] = self.description
        out["rooms"] = [r.to_dict() for r in self.rooms]
        out["obstacles"] = [o.to_dict() for o in self.obstacles]
        out["landmarks"] = [lm.to_dict() for lm in self.landmarks]
        out["agents"] = [a.to_dict() for a in self.agents]
        out["goals"] = self.goals.to_dict()
        return out

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> Scene:
        """Parse and validate a plain dict; errors name the field path.

        Older versions are upgraded first (:mod:`arena_studio.core.scene.upgrade`).
        """
        from arena_studio.core.scene.parse import parse_scene

        return parse_scene(data)

    def content_hash(self) -> str:
        """SHA-256 of the canonical JSON form: equal scenes share a hash on every machine."""
        text = json.dumps(self.to_dict(), sort_keys=True, separators=(",", ":"))
        return hashlib.sha256(text.encode("utf-8")).hexdigest()

    # -- lookups -----------------------------------------------------------------------
    def landmark_index(self, landmark_id: str) -> int:
        for i, lm in enumerate(self.landmarks):
            if lm.id == landmark_id:
                return i
        raise KeyError(landmark_id)

    def agent_index(self, agent_id: str) -> int:
        for i, a in enumerate(self.agents):
            if a.id == agent_id:
                return i
        raise KeyError(agent_id)

    def all_ids(self) -> list[str]:
        """Every object id in the scene, in document order (duplicates kept)."""
        groups: tuple[tuple[Any, ...], ...] = (
            self.rooms,
            self.obstacles,
            self.landmarks,
            self.agents,
        )
        return [obj.id for group in groups for obj in group]

    def with_changes(self, **changes: Any) -> Scene:
        return replace(self, **changes)


def load_scene(path: str | Path) -> Scene:
    """Read ``*.scene.json`` or ``*.scene.msgpack``; errors name the file and the field."""
    from arena_studio.core.scene.files import read_scene_file

    return read_scene_file(Path(path))


def save_scene(scene: Scene, path: str | Path) -> None:
    """Write atomically (temp file in the same folder, fsync, ``os.replace``)."""
    from arena_studio.core.scene.files import write_scene_file

    write_scene_file(scene, Path(path))


__all__ = [
    "FORMAT_NAME",
    "FORMAT_VERSION",
    "MOUNTS",
    "RULES",
    "Agent",
    "Circle",
    "GoalSpec",
    "Landmark",
    "Obstacle",
    "Room",
    "Scene",
    "SceneFormatError",
    "Start",
    "load_scene",
    "save_scene",
]
