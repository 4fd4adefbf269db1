"""Underlay image files: relative paths kept relative to the scene file, missing ones named.

A scene stores its underlay image as a path relative to the scene file's folder, so a folder
of scene and map moves as one. The image is a drawing aid: a missing file is a warning for
the user, never a reason to refuse the scene.
"""

from __future__ import annotations

import dataclasses
import math
import os
from pathlib import Path, PurePosixPath

from arena_studio.core.robot.map_yaml import MapInfo
from arena_studio.core.scene import Scene, Underlay


def image_path(underlay: Underlay, scene_path: str | Path | None) -> Path:
    """Where the image lives: relative paths are taken from the scene file's folder."""
    p = Path(*PurePosixPath(underlay.image).parts)
    if p.is_absolute() or scene_path is None:
        return p
    return Path(scene_path).resolve().parent / p


def relative_image(image: str | Path, scene_path: str | Path) -> str:
    """``image`` as a path from the scene file's folder, with ``/`` separators."""
    folder = Path(scene_path).resolve().parent
    target = Path(image).resolve()
    try:
        rel = os.path.relpath(target, folder)
    except ValueError:  # another drive (Windows): only an absolute path can reach it
        return target.as_posix()
    return Path(rel).as_posix()


def underlay_problem(scene: Scene, scene_path: str | Path | None) -> str | None:
    """A one-line warning when the scene's underlay image cannot be found, else None."""
    if scene.underlay is None:
        return None
    path = image_path(scene.underlay, scene_path)
    if path.is_file():
        return None
    return f"underlay image {scene.underlay.image} not found ({path}); the scene opens without it"


def rebase(scene: Scene, old_path: str | Path | None, new_path: str | Path) -> Scene:
    """The scene as saved at ``new_path``: a relative underlay path still finds its image."""
    if scene.underlay is None:
        return scene
    found = image_path(scene.underlay, old_path)
    if not found.is_absolute():
        found = Path.cwd() / found
    moved = dataclasses.replace(scene.underlay, image=relative_image(found, new_path))
    return dataclasses.replace(scene, underlay=moved)


def calibrate(
    underlay: Underlay, a: tuple[float, float], b: tuple[float, float], distance: float
) -> Underlay:
    """Rescale so the points ``a`` and ``b`` (where they are drawn now) lie ``distance`` m apart.

    ``a`` stays where it is; the rotation is kept.
    """
    measured = ((b[0] - a[0]) ** 2 + (b[1] - a[1]) ** 2) ** 0.5
    if not measured > 0:
        raise ValueError("the two points are the same point")
    if not distance > 0:
        raise ValueError("the distance must be greater than 0")
    k = distance / measured
    ox, oy = underlay.origin
    origin = (a[0] + k * (ox - a[0]), a[1] + k * (oy - a[1]))
    return dataclasses.replace(underlay, origin=origin, scale=underlay.scale * k)


def map_frame_in_scene(
    info: MapInfo, underlay: Underlay | None
) -> tuple[tuple[float, float, float], float]:
    """Where the map frame lies in a scene: pose (x, y, yaw) and scale factor.

    The map's YAML places its image's lower-left corner at ``info.origin`` in the map frame;
    the scene places the same corner at its underlay's origin and rotation (at (0, 0),
    unturned, when the scene has no underlay), one pixel ``underlay.scale`` metres against
    the map's ``resolution``. A scene made by ``import map`` gives the identity.
    """
    ox, oy, yaw = info.origin
    ux, uy, urot, k = 0.0, 0.0, 0.0, 1.0
    if underlay is not None:
        (ux, uy), urot = underlay.origin, underlay.rotation
        k = underlay.scale / info.resolution
    theta = urot - yaw
    c, s = math.cos(theta), math.sin(theta)
    tx = ux - k * (c * ox - s * oy)
    ty = uy - k * (s * ox + c * oy)
    return (tx, ty, theta), k


def map_underlay(info: MapInfo, scene_path: str | Path, opacity: float = 0.5) -> Underlay:
    """The map image placed as its YAML says: lower-left corner at origin, turned by yaw."""
    ox, oy, yaw = info.origin
    return Underlay(
        image=relative_image(info.image, scene_path),
        origin=(ox, oy),
        scale=info.resolution,
        rotation=yaw,
        opacity=opacity,
        locked=True,
    )


__all__ = [
    "calibrate",
    "image_path",
    "map_underlay",
    "rebase",
    "relative_image",
    "underlay_problem",
]
