"""core.geometry.inward_normals: the direction from a wall landmark into the open area.

Expected directions are the inward normals of axis-aligned walls (plane geometry; common
practice, no source): a landmark on the right wall of a room looks left, one on the lower
edge of an obstacle looks down, a free-standing one gets the default (0, 1).
"""

from __future__ import annotations

import pytest

from arena_studio.core.geometry.regions import inward_normals
from arena_studio.core.scene.model import Agent, Landmark, Obstacle, Room, Scene, Start


def _scene() -> Scene:
    return Scene(
        rooms=(Room("room", ((0.0, 0.0), (10.0, 0.0), (10.0, 6.0), (0.0, 6.0))),),
        obstacles=(Obstacle("shelf", outline=((3.0, 4.0), (7.0, 4.0), (7.0, 5.0), (3.0, 5.0))),),
        landmarks=(
            Landmark("east", "East", (10.0, 3.0), 0.6, "wall"),
            Landmark("top", "Top", (2.0, 6.0), 0.6, "wall"),
            Landmark("shelf-front", "Shelf", (5.0, 4.0), 0.6, "wall"),
            Landmark("free", "Free", (5.0, 2.0), 0.6, "free"),
        ),
        agents=(Agent("a", 0.2, 1.0, 1.0, Start(pose=(1.0, 1.0, 0.0))),),
    )


def test_inward_normals_of_axis_aligned_walls() -> None:
    east, top, shelf, free = inward_normals(_scene())
    assert east == pytest.approx((-1.0, 0.0), abs=1e-9)
    assert top == pytest.approx((0.0, -1.0), abs=1e-9)
    assert shelf == pytest.approx((0.0, -1.0), abs=1e-9)  # obstacle outline: into the room
    assert free == (0.0, 1.0)
