"""The scene one episode ran in: the tape's scene with that episode's landmark positions.

Simulators that move landmarks at every reset record where they stood in the episode's begin
record (``landmark_positions``, DEVELOPERS.md "Tape format"). Metrics, diagnoses, roles and
the replay judge an episode against :func:`episode_scene`, never the tape's scene alone::

    from arena_studio.core.tape.episode_scene import episode_scene
    scene_e = episode_scene(tape.scene, episode)   # tape.scene itself when nothing moved

Equal positions give the same Scene object (remembered per thread), so per-scene caches
(free space, planners, par times) are shared by the episodes of one layout.
"""

from __future__ import annotations

import dataclasses
import threading
from typing import Any

import numpy as np

from arena_studio.core.scene.model import Scene
from arena_studio.core.tape.episode import Episode

#: distinct landmark layouts remembered per thread
MAX_LAYOUTS = 256


class _Layouts(threading.local):
    def __init__(self) -> None:
        self.made: dict[tuple[int, bytes], tuple[Scene, Scene]] = {}


_LAYOUTS = _Layouts()


def moved_landmarks(scene: Scene, positions: Any) -> Scene:
    """``scene`` with landmark ``i`` at ``positions[i]`` (ids, labels, reach and mount kept)."""
    pos = np.asarray(positions, dtype=np.float64).reshape(-1, 2)
    if pos.shape[0] != len(scene.landmarks):
        raise ValueError(
            f"{pos.shape[0]} landmark positions for a scene of {len(scene.landmarks)} landmarks"
        )
    if np.array_equal(pos, [lm.position for lm in scene.landmarks]):
        return scene
    key = (id(scene), pos.tobytes())
    known = _LAYOUTS.made.get(key)
    if known is not None and known[0] is scene:  # the id may have been reused: check
        return known[1]
    landmarks = tuple(
        dataclasses.replace(lm, position=(float(x), float(y)))
        for lm, (x, y) in zip(scene.landmarks, pos.tolist(), strict=True)
    )
    made = dataclasses.replace(scene, landmarks=landmarks)
    if len(_LAYOUTS.made) >= MAX_LAYOUTS:
        _LAYOUTS.made.clear()
    _LAYOUTS.made[key] = (scene, made)
    return made


def episode_scene(scene: Scene, episode: Episode) -> Scene:
    """The scene ``episode`` ran in: ``scene`` unless the episode recorded landmark positions."""
    positions = getattr(episode, "landmark_positions", None)
    if positions is None:
        return scene
    return moved_landmarks(scene, positions)


def same_layout(a: Episode, b: Episode) -> bool:
    """True when two episodes ran with the same landmark positions (both the scene's, or
    equal recorded ones)."""
    pa, pb = a.landmark_positions, b.landmark_positions
    if pa is None or pb is None:
        return pa is None and pb is None
    return bool(np.array_equal(pa, pb))


__all__ = ["episode_scene", "moved_landmarks", "same_layout"]
