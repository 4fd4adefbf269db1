"""Occupancy grids with a clearance: free cell centres keep that distance from walls.

Sources: the inner parallel of a convex polygon at distance c is the polygon with every edge
moved in by c (plane geometry, common practice, no source), so a 10 m x 6 m room with c = 0.5
leaves [0.5, 9.5] x [0.5, 5.5]; scipy.ndimage.distance_transform_edt (a general-purpose
library) gives each free cell's distance to the nearest blocked cell on a fine grid, an
independent estimate of the clearance; scipy.ndimage.label counts connected free regions.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from scipy import ndimage

from arena_studio.core.export import ExportError, export_scene
from arena_studio.core.export.grid import occupancy
from arena_studio.core.scene.model import GoalSpec, Room, Scene, load_scene
from tests.conftest import SCENES


def _rooms(*outlines) -> Scene:
    return Scene(
        name="clearance test",
        rooms=tuple(Room(f"r{i}", tuple(o)) for i, o in enumerate(outlines)),
        goals=GoalSpec(families=(1,)),
    )


def _centres(grid: np.ndarray, origin, r: float):
    rows, cols = grid.shape
    xs = origin[0] + (np.arange(cols) + 0.5) * r
    ys = origin[1] + (np.arange(rows) + 0.5) * r
    return np.meshgrid(xs, ys)


def test_a_rectangle_room_shrinks_by_the_clearance_on_every_side():
    scene = _rooms([(0, 0), (10, 0), (10, 6), (0, 6)])
    grid, origin = occupancy(scene, 0.1, clearance=0.5)
    gx, gy = _centres(grid, origin, 0.1)
    expected = (gx >= 0.5) & (gx <= 9.5) & (gy >= 0.5) & (gy <= 5.5)
    assert np.array_equal(grid == 0, expected)


def test_clearance_agrees_with_a_distance_transform_on_a_demo_scene():
    scene = load_scene(SCENES / "lab-wing.scene.json")
    r, c = 0.05, 0.3
    plain, _ = occupancy(scene, r)
    cleared, _ = occupancy(scene, r, clearance=c)
    # distance from each cell centre to the nearest blocked cell centre (scipy; the grid's
    # rim is padded with blocked cells: outside the scene is not open), less half a cell:
    # the blocked region's edge lies between the two centres
    padded = np.pad(plain == 0, 1, constant_values=False)
    dist = ndimage.distance_transform_edt(padded)[1:-1, 1:-1] * r - r / 2
    sure_free, sure_blocked = dist >= c + r, dist <= c - r
    assert (cleared[sure_free] == 0).all()
    assert (cleared[sure_blocked] == 1).all()
    unsure = ~(sure_free | sure_blocked)
    assert unsure.mean() < 0.05  # the comparison covers nearly every cell
    assert ((plain == 1) <= (cleared == 1)).all()  # clearance only ever blocks more


def test_a_doorway_narrower_than_twice_the_clearance_closes():
    # two 4 m rooms joined by a 0.8 m wide passage
    scene = _rooms(
        [(0, 0), (4, 0), (4, 4), (0, 4)],
        [(4, 1.6), (5, 1.6), (5, 2.4), (4, 2.4)],
        [(5, 0), (9, 0), (9, 4), (5, 4)],
    )
    for clearance, parts in ((0.3, 1), (0.5, 2)):
        grid, _ = occupancy(scene, 0.05, clearance=clearance)
        _labels, count = ndimage.label(grid == 0)
        assert count == parts, f"clearance {clearance}: {count} free regions"


def test_clearance_is_recorded_and_checked(tmp_path: Path):
    scene = _rooms([(0, 0), (4, 0), (4, 3), (0, 3)])
    npy, _png, side = export_scene(scene, "grid", tmp_path / "map", resolution=0.1, clearance=0.25)
    assert json.loads(side.read_text())["clearance"] == 0.25
    assert np.load(npy).sum() > 0  # the margin is blocked
    with pytest.raises(ExportError, match="clearance"):
        export_scene(scene, "grid", tmp_path / "bad", resolution=0.1, clearance=-1.0)
    with pytest.raises(ExportError, match="clearance"):
        export_scene(scene, "grid", tmp_path / "bad", resolution=0.1, clearance=float("nan"))
