"""Scenes: the layout model, parsing with field-path errors, files and version upgrades.

Owns everything about one layout document and imports nothing else of the core but
``errors`` and ``atomic``. The model's names are re-exported here::

    from arena_studio.core.scene import Scene, load_scene, save_scene
"""

from __future__ import annotations

from arena_studio.core.scene.model import (
    FORMAT_NAME,
    FORMAT_VERSION,
    MOUNTS,
    RULES,
    Agent,
    Circle,
    GoalSpec,
    Landmark,
    Obstacle,
    Room,
    Scene,
    SceneFormatError,
    Start,
    Underlay,
    load_scene,
    save_scene,
)

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
    "Underlay",
    "load_scene",
    "save_scene",
]
