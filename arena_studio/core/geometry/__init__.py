"""Geometry of a scene: walkable area, free space per agent radius, walls, shortest paths.

``regions`` derives shapely geometry from a scene (cached per thread: GEOS prepared
geometry is not thread-safe); ``inside_test`` answers point-in-free-space fast and exactly
like shapely; ``visibility`` and ``visibility_fields`` build the reduced visibility graph and
distance fields; ``paths`` plans shortest collision-free paths. Imports only ``scene``.
The free-space helpers are re-exported here::

    from arena_studio.core.geometry import free_space, walkable_area, wall_lines
"""

from __future__ import annotations

from arena_studio.core.geometry.regions import (
    ARC_TOLERANCE,
    bounds,
    free_parts,
    free_space,
    inward_normals,
    nearest_wall_point,
    obstacle_area,
    obstacle_geometry,
    open_area,
    per_thread_cache,
    polygon,
    quad_segments,
    segments_of,
    walkable_area,
    wall_lines,
    wall_segments,
)

__all__ = [
    "ARC_TOLERANCE",
    "bounds",
    "free_parts",
    "free_space",
    "inward_normals",
    "nearest_wall_point",
    "obstacle_area",
    "obstacle_geometry",
    "open_area",
    "per_thread_cache",
    "polygon",
    "quad_segments",
    "segments_of",
    "walkable_area",
    "wall_lines",
    "wall_segments",
]
