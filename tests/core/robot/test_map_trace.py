"""Tracing a synthetic L-shaped room with a pillar; areas and placement checked with shapely."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from shapely import affinity
from shapely.geometry import Polygon

from arena_studio.cli import main
from arena_studio.core.robot.map_trace import map_scene, trace_map
from arena_studio.core.robot.map_yaml import read_map
from arena_studio.core.scene import load_scene

from .map_helpers import RES, TRUE_PILLAR, TRUE_ROOM, draw_map, draw_stairs_map, write_map


def _within_one_cell_row(got: Polygon, true: Polygon) -> None:
    # "one cell row": a band one cell wide along the true outline (areas by shapely)
    assert abs(got.area - true.area) <= true.length * RES, (got.area, true.area)


def test_room_and_pillar_areas(tmp_path: Path) -> None:
    traced = trace_map(read_map(write_map(tmp_path)))
    assert len(traced.rooms) == 1 and len(traced.obstacles) == 1
    _within_one_cell_row(traced.rooms[0], TRUE_ROOM)
    _within_one_cell_row(traced.obstacles[0], TRUE_PILLAR)
    # the traced outline lies on the true one: their difference is a thin band (shapely)
    assert traced.rooms[0].symmetric_difference(TRUE_ROOM).area <= TRUE_ROOM.length * RES
    assert traced.vertex_count < 40  # simplified: the L has 6 corners, the pillar 4


@pytest.mark.parametrize("origin", [(-2.5, 4.0, 0.0), (10.0, -3.0, math.pi / 6)])
def test_origin_and_yaw_are_respected(tmp_path: Path, origin: tuple[float, float, float]) -> None:
    traced = trace_map(read_map(write_map(tmp_path, origin=origin)))
    ox, oy, yaw = origin
    # map_server documentation (common practice): origin is the pose of the lower-left pixel
    want_room = affinity.translate(
        affinity.rotate(TRUE_ROOM, yaw, origin=(0, 0), use_radians=True), ox, oy
    )
    want_pillar = affinity.translate(
        affinity.rotate(TRUE_PILLAR, yaw, origin=(0, 0), use_radians=True), ox, oy
    )
    assert traced.rooms[0].symmetric_difference(want_room).area <= TRUE_ROOM.length * RES
    got_c, want_c = traced.obstacles[0].centroid, want_pillar.centroid
    assert got_c.distance(want_c) < RES


def test_negated_image_gives_the_same_layout(tmp_path: Path) -> None:
    a = trace_map(read_map(write_map(tmp_path, name="plain")))
    b = trace_map(read_map(write_map(tmp_path, name="neg", negate=1, img=255 - draw_map())))
    assert a.rooms[0].equals(b.rooms[0]) and a.obstacles[0].equals(b.obstacles[0])


def test_specks_are_dropped_and_tolerance_simplifies(tmp_path: Path) -> None:
    img = draw_map()
    img[60, 40] = 0  # one occupied cell inside the room: a speck, becomes floor
    img[5:7, 150:152] = 254  # a 2 x 2 free speck outside the building
    traced = trace_map(read_map(write_map(tmp_path, img=img)))
    assert len(traced.rooms) == 1 and len(traced.obstacles) == 1 and traced.dropped == 2
    kept = trace_map(read_map(write_map(tmp_path, img=img, name="b")), min_area=0.0)
    assert len(kept.rooms) == 2 and len(kept.obstacles) == 2
    stairs = draw_stairs_map()
    fine = trace_map(read_map(write_map(tmp_path, img=stairs, name="c")), tolerance=0.0)
    coarse = trace_map(read_map(write_map(tmp_path, img=stairs, name="d")))
    assert fine.vertex_count >= coarse.vertex_count + 25  # 32 stair corners become a line


def test_scene_and_command(tmp_path: Path, capsys) -> None:
    path = write_map(tmp_path, origin=(1.0, 2.0, 0.0))
    scene = map_scene(trace_map(read_map(path)), "floor")
    assert [r.id for r in scene.rooms] == ["room-1"] and scene.obstacles[0].id == "obstacle-1"
    out = tmp_path / "floor.scene.json"
    assert main(["import", "map", str(path), "-o", str(out), "--quiet"]) == 0
    loaded = load_scene(out)
    assert Polygon(loaded.rooms[0].outline).equals_exact(Polygon(scene.rooms[0].outline), 1e-6)
    assert "1 room(s), 1 obstacle(s)" in capsys.readouterr().out
    # the map image lies under the layout, placed as the YAML says, by a relative path
    assert loaded.underlay is not None and loaded.underlay.image == "floor.pgm"
    assert loaded.underlay.origin == (1.0, 2.0) and loaded.underlay.scale == RES
    assert main(["import", "map", str(path), "-o", str(out), "--tolerance", "-1"]) == 2
    assert "tolerance" in capsys.readouterr().err
    (tmp_path / "floor.pgm").unlink()
    assert main(["import", "map", str(path), "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "floor.pgm: map image not found" in err[0]


def test_empty_map_is_a_problem_not_a_crash(tmp_path: Path, capsys) -> None:
    path = write_map(tmp_path, img=np.full((20, 20), 205, dtype=np.uint8))
    assert main(["import", "map", str(path), "-o", str(tmp_path / "x.scene.json")]) == 1
    assert "no free space" in capsys.readouterr().err


def test_unsimplified_outlines_follow_cell_edges_exactly(tmp_path: Path) -> None:
    img = draw_map()
    img[30:34, 40:43] = 0  # a second, odd-sized blob
    img[70, 100] = 0  # a one-cell blob, kept with min_area 0
    omap = read_map(write_map(tmp_path, img=img))
    traced = trace_map(omap, tolerance=0.0, min_area=0.0)
    free = traced.rooms[0].area - sum(o.area for o in traced.obstacles)
    # numpy count of free cells x cell area; shapely areas of the traced outlines
    assert free == pytest.approx(np.count_nonzero(omap.cells == 0) * RES * RES, abs=1e-9)
    assert sorted(round(o.area / RES**2) for o in traced.obstacles) == [1, 12, 144]
