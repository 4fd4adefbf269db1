"""Exports checked with the libraries that read them.

Sources: shapely/GEOS (OGC Simple Features WKT, 06-103r4) reloads the WKT; xml.etree parses
the SVG (SVG 2 has no DTD: check the root in the SVG namespace and its viewBox; W3C SVG 2
recommendation); numpy.load with allow_pickle=False reads the npz and npy; Pillow opens the PNG;
the scene loader reads the json/msgpack exports back.
"""

from __future__ import annotations

import dataclasses
import json
import math
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
from PIL import Image

from arena_studio.core.export import CAUTION, ExportError, export_scene
from arena_studio.core.export.npz import ARRAYS
from arena_studio.core.export.wkt import labelled_geometries
from arena_studio.core.geometry.regions import open_area
from arena_studio.core.planning.goal_set import enumerate_goals
from arena_studio.core.scene.model import Scene, load_scene
from tests.conftest import SCENES

DEMOS = sorted(SCENES.glob("*.scene.json"))
SVG = "{http://www.w3.org/2000/svg}"


@pytest.fixture(params=DEMOS, ids=lambda p: p.name.split(".")[0])
def scene(request: pytest.FixtureRequest) -> Scene:
    return load_scene(request.param)


def test_wkt_reloads_with_shapely(scene: Scene, tmp_path: Path) -> None:
    import shapely

    (out,) = export_scene(scene, "wkt", tmp_path / "s.wkt")
    text = out.read_text(encoding="utf-8")
    assert scene.content_hash() in text and CAUTION in text
    rows = [line for line in text.splitlines() if line and not line.startswith("#")]
    original = labelled_geometries(scene)
    assert len(rows) == len(original)
    for line, (label, geom) in zip(rows, original, strict=True):
        got_label, _, wkt = line.partition("\t")
        assert got_label == label
        back = shapely.from_wkt(wkt)  # shapely/GEOS WKT reader
        assert abs(back.area - geom.area) <= 1e-9
        assert back.symmetric_difference(geom).area <= 1e-9
    labels = [label for label, _ in original]
    assert any(label.startswith("free_space:r=") for label in labels)


def test_svg_parses_and_labels_each_landmark_once(scene: Scene, tmp_path: Path) -> None:
    (out,) = export_scene(scene, "svg", tmp_path / "s.svg")
    root = ET.parse(out).getroot()  # xml.etree reference parser
    assert root.tag == f"{SVG}svg"
    assert root.get("width", "").endswith("mm") and root.get("height", "").endswith("mm")
    vb = [float(v) for v in root.get("viewBox", "").split()]
    assert vb[:2] == [0, 0] and vb[2] == pytest.approx(float(root.get("width")[:-2]), abs=0.01)
    texts = [t.text for t in root.iter(f"{SVG}text")]
    for lm in scene.landmarks:
        assert texts.count(lm.label) == 1, lm.label
    metadata = json.loads(root.find(f"{SVG}metadata").text)
    assert metadata["content_hash"] == scene.content_hash()
    assert "not a safety assessment" in root.find(f"{SVG}desc").text
    assert any(t and t.endswith(" m") for t in texts)  # the scale bar


def test_npz_shapes_and_values(scene: Scene, tmp_path: Path) -> None:
    (out,) = export_scene(scene, "npz", tmp_path / "s.npz")
    with np.load(out, allow_pickle=False) as data:  # numpy reads it without this package
        assert set(data.files) == set(ARRAYS)
        lms, agents = len(scene.landmarks), len(scene.agents)
        table = enumerate_goals(scene)
        assert data["wall_segments"].ndim == 3 and data["wall_segments"].shape[1:] == (2, 2)
        assert data["landmark_positions"].shape == (lms, 2)
        assert data["landmark_reach"].shape == (lms,)
        assert data["agent_radius"].shape == data["agent_max_speed"].shape == (agents,)
        assert data["start_poses"].shape == (agents, 3)
        assert data["goal_matrix"].dtype == np.uint8
        assert data["goal_matrix"].shape == (len(table), lms)
        assert np.array_equal(data["goal_matrix"], table.vectors)
        assert data["goal_weights"].shape == data["goal_par_times"].shape == (len(table),)
        assert data["goal_weights"].sum() == pytest.approx(1.0)
        assert str(data["content_hash"]) == scene.content_hash()
        assert "safety" in str(data["caution"])
        assert list(data["landmark_ids"]) == [lm.id for lm in scene.landmarks]


def test_npz_par_times_nan_for_infeasible(tmp_path: Path) -> None:
    scene = load_scene(SCENES / "greenhouse.scene.json")
    # 4-hot goals need 4 agents at once; the greenhouse has 3: infeasible -> NaN
    scene = dataclasses.replace(
        scene, goals=dataclasses.replace(scene.goals, rule="all_at_once", families=(1, 4))
    )
    (out,) = export_scene(scene, "npz", tmp_path / "s.npz")
    with np.load(out) as data:
        par = data["goal_par_times"]
        counts = data["goal_matrix"].sum(axis=1)
        assert np.all(np.isnan(par[counts == 4])) and np.all(np.isfinite(par[counts == 1]))
        assert math.comb(6, 4) == int(np.sum(counts == 4))  # math.comb reference


@pytest.mark.parametrize("resolution", [0.05, 0.1])
def test_grid_free_fraction_matches_area(scene: Scene, tmp_path: Path, resolution: float) -> None:
    npy, png, side = export_scene(scene, "grid", tmp_path / "map", resolution=resolution)
    grid = np.load(npy, allow_pickle=False)
    assert grid.dtype == np.uint8 and set(np.unique(grid)) <= {0, 1}
    meta = json.loads(side.read_text(encoding="utf-8"))
    assert meta["resolution"] == resolution and meta["shape"] == list(grid.shape)
    assert meta["content_hash"] == scene.content_hash()
    rows, cols = grid.shape
    free_area = float(np.count_nonzero(grid == 0)) * resolution**2
    # shapely area of the open area; tolerance: one row of cells (cols * r^2)
    assert abs(free_area - open_area(scene).area) <= cols * resolution**2
    with Image.open(png) as image:  # Pillow reads the preview
        assert image.size == (cols, rows)
        assert image.text["content_hash"] == scene.content_hash()
    # origin and row order: the cell holding the first room's first corner (nudged inside)
    x0, y0 = meta["origin"]
    assert x0 <= min(x for r in scene.rooms for x, _ in r.outline) + 1e-9
    assert y0 <= min(y for r in scene.rooms for _, y in r.outline) + 1e-9


def test_scene_file_exports_reload(scene: Scene, tmp_path: Path) -> None:
    for fmt, name in (("json", "s.scene.json"), ("msgpack", "s.scene.msgpack")):
        out, about = export_scene(scene, fmt, tmp_path / name)
        assert load_scene(out) == scene
        meta = json.loads(about.read_text(encoding="utf-8"))
        assert meta["content_hash"] == scene.content_hash() and meta["caution"] == CAUTION


def test_bad_export_requests(tmp_path: Path) -> None:
    scene = load_scene(SCENES / "greenhouse.scene.json")
    with pytest.raises(ExportError, match="resolution"):
        export_scene(scene, "grid", tmp_path / "g", resolution=0.0)
    with pytest.raises(ExportError, match="coarser"):
        export_scene(scene, "grid", tmp_path / "g", resolution=1e-4)
    with pytest.raises(ExportError, match="unknown export format"):
        export_scene(scene, "dxf", tmp_path / "g")
    with pytest.raises(ExportError, match="no such folder"):
        export_scene(scene, "svg", tmp_path / "missing" / "g.svg")
    assert list(tmp_path.iterdir()) == []  # nothing half-written left behind
