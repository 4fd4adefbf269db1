"""Documented scene maxima, the goal-table limit and the sparse label-overlap sum.

Overlap areas are checked against shapely's box intersection areas (GEOS, OGC Simple
Features); list limits against the JSON Schema (``jsonschema``, draft 2020-12), which must
refuse the same documents as the reader.
"""

from __future__ import annotations

import json

import jsonschema
import numpy as np
import pytest
import shapely

from arena_studio.core.errors import SceneFormatError
from arena_studio.core.export.label_place import _fixed_cost
from arena_studio.core.resources import resource_path
from arena_studio.core.scene import parse as scene_parse
from arena_studio.core.scene.model import Scene
from tests.fuzz import big_scenes as big


@pytest.mark.parametrize(
    ("doc", "field"),
    [
        (lambda: big.many_landmarks(scene_parse.MAX_LANDMARKS + 1), "landmarks"),
        (lambda: big.many_agents(scene_parse.MAX_AGENTS + 1), "agents"),
        (lambda: big.many_obstacles(scene_parse.MAX_OBSTACLES + 1), "obstacles"),
    ],
)
def test_lists_over_the_maxima_are_refused_by_reader_and_schema(doc, field):
    data = doc()
    with pytest.raises(SceneFormatError, match=f"{field}: too many items"):
        Scene.from_dict(data)
    schema = json.loads(resource_path("schema", "scene.schema.json").read_text())
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(data, schema)


def test_lists_at_the_maxima_are_read():
    assert len(Scene.from_dict(big.many_landmarks(scene_parse.MAX_LANDMARKS)).landmarks) == (
        scene_parse.MAX_LANDMARKS
    )


def test_total_outline_vertices_are_bounded():
    doc = big.base()
    ring = [[float(i % 2), float(i)] for i in range(5_000)]
    doc["obstacles"] = [{"id": f"o{k}", "outline": ring} for k in range(41)]  # 205,000
    with pytest.raises(SceneFormatError, match=r"too many outline vertices in all"):
        Scene.from_dict(doc)


def test_sparse_overlap_sum_matches_shapely_areas():
    rng = np.random.default_rng(3)
    lo = rng.uniform(0, 10, size=(60, 2))
    flat = np.hstack([lo, lo + rng.uniform(0.1, 2, size=(60, 2))])
    lo = rng.uniform(0, 10, size=(20, 2))
    fixed = np.hstack([lo, lo + rng.uniform(0.1, 2, size=(20, 2))])
    per = 3
    got = _fixed_cost(flat, fixed, per)
    a, b = shapely.box(*flat.T), shapely.box(*fixed.T)
    for k in range(len(flat)):
        areas = shapely.area(shapely.intersection(a[k], b))
        areas[k // per] = 0.0  # its own mark does not count
        assert got[k] == pytest.approx(areas.sum(), abs=1e-12)
