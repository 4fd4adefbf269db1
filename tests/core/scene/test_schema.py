"""resources/schema/scene.schema.json against the reader, judged by the ``jsonschema`` package
(JSON Schema draft 2020-12, ``Draft202012Validator``) as the outside reference."""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

import jsonschema
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from arena_studio.core.errors import SceneFormatError
from arena_studio.core.resources import resource_path
from arena_studio.core.scene.model import Scene
from tests.core.scene.test_scene_roundtrip import scene_docs

REPO = Path(__file__).resolve().parents[3]
SCENE_FILES = [
    *sorted((REPO / "scenes").glob("*.scene.json")),
    REPO / "tests" / "data" / "broken.scene.json",  # broken in meaning, well-formed in shape
    REPO / "tests" / "data" / "version1.scene.json",  # stored as version 1
    REPO / "tests" / "data" / "underlay.scene.json",  # version 2 with an underlay
]


@pytest.fixture(scope="module")
def validator() -> jsonschema.Draft202012Validator:
    schema = json.loads(resource_path("schema", "scene.schema.json").read_text())
    jsonschema.Draft202012Validator.check_schema(schema)  # the schema itself is valid 2020-12
    return jsonschema.Draft202012Validator(schema)


def parser_accepts(doc: Any) -> bool:
    try:
        Scene.from_dict(doc)
    except SceneFormatError:
        return False
    return True


def known_gap(doc: Any) -> bool:
    """Rules JSON Schema cannot state (named in the schema's description): a 3-item ring whose
    closing point repeats the first, and weights lists whose length differs from their list."""
    if isinstance(doc, dict):
        for key, value in doc.items():
            ring = key in ("outline", "region") and isinstance(value, list) and len(value) == 3
            if ring and value[0] == value[-1]:
                return True
            if key == "weights" and isinstance(value, dict):
                for name in ("families", "vectors"):
                    listed = doc.get(name, [])
                    given_w = value.get(name)
                    lists = isinstance(given_w, list) and isinstance(listed, list)
                    if lists and len(given_w) != len(listed):
                        return True
            if known_gap(value):
                return True
    elif isinstance(doc, list):
        return any(known_gap(v) for v in doc)
    return False


@pytest.mark.parametrize("path", SCENE_FILES, ids=lambda p: p.name)
def test_every_scene_file_validates(validator, path: Path) -> None:
    doc = json.loads(path.read_text())
    errors = [e.message for e in validator.iter_errors(doc)]
    assert errors == []
    assert parser_accepts(doc)


def _greenhouse() -> dict[str, Any]:
    return json.loads((REPO / "scenes" / "greenhouse.scene.json").read_text())


GOOD_EDITS = [
    lambda d: d.pop("obstacles"),
    lambda d: d.pop("description"),
    lambda d: d.update(description=""),
    lambda d: d.update(version=1.0),
    lambda d: d.update(version=2),
    lambda d: d.update(version=2, underlay={"image": "m.png", "origin": [0, 0], "scale": 0.1}),
    lambda d: d["agents"][2]["start"].pop("heading"),
    lambda d: d["agents"][2]["start"].update(heading=1.25),
    lambda d: d["goals"].update(weights={"families": [1, 0]}),
    lambda d: d["goals"].update(vectors=[[1, 1, 0, 0, 0, 1.0]], weights={"vectors": [2]}),
    lambda d: d["goals"].update(families=[]),
    lambda d: d["rooms"][0]["outline"].append(d["rooms"][0]["outline"][0]),
    lambda d: d.update(rooms=[], agents=[], landmarks=[]),
]
BAD_EDITS = [
    lambda d: d.update(format="x"),
    lambda d: d.update(version=3),
    lambda d: d.update(underlay={"image": "m.png", "origin": [0, 0], "scale": 0.1}),  # v1
    lambda d: d.update(version=2, underlay={"image": "m.png", "origin": [0, 0]}),
    lambda d: d.update(version=2, underlay={"image": "m.png", "origin": [0], "scale": 1}),
    lambda d: d.update(units="cm"),
    lambda d: d.update(extra=1),
    lambda d: d.pop("goals"),
    lambda d: d.update(name=" "),
    lambda d: d["rooms"][0].update(outline=[[0, 0], [1, 0]]),
    lambda d: d["rooms"][0]["outline"][0].append(3),
    lambda d: d["obstacles"][0].update(circle={"center": [0, 0], "radius": 1}),
    lambda d: d["obstacles"][3]["circle"].update(radius=0),
    lambda d: d["obstacles"][3].pop("circle"),
    lambda d: d["landmarks"][0].update(mount="roof"),
    lambda d: d["landmarks"][0].update(reach_radius="1"),
    lambda d: d["landmarks"][0].update(label="x" * 81),
    lambda d: d["landmarks"][0].update(id=""),
    lambda d: d["landmarks"][0].pop("label"),
    lambda d: d["agents"][0]["start"].update(region=[[0, 0], [1, 0], [1, 1]]),
    lambda d: d["agents"][0].update(start={}),
    lambda d: d["agents"][0].update(max_speed=-1),
    lambda d: d["agents"][2]["start"].update(heading="north"),
    lambda d: d["goals"].update(rule="any"),
    lambda d: d["goals"].update(hold_time=-0.5),
    lambda d: d["goals"].update(families=[1, 1]),
    lambda d: d["goals"].update(families=[0]),
    lambda d: d["goals"].update(families=[1.5]),
    lambda d: d["goals"].update(vectors=[[True, 0, 0, 0, 0, 0]]),
    lambda d: d["goals"].update(vectors=[[2, 0, 0, 0, 0, 0]]),
    lambda d: d["goals"].update(weights={"families": [1, -1]}),
    lambda d: d["goals"].update(weights={"other": []}),
    # ids, labels and names are one line of printable text (no forged export lines)
    lambda d: d["rooms"][0].update(id="hall\tPOINT (0 0)"),
    lambda d: d["landmarks"][0].update(label="West valve\nroom:x\tPOINT (0 0)"),
    lambda d: d.update(name="demo\u2028second line"),
    lambda d: d["agents"][0].update(id="rover\x1b[31m"),
    lambda d: d["obstacles"][0].update(id="bench\x85"),
]


@pytest.mark.parametrize("edit", range(len(GOOD_EDITS)))
def test_parser_and_schema_accept_the_same_good_documents(validator, edit: int) -> None:
    doc = _greenhouse()
    GOOD_EDITS[edit](doc)
    assert validator.is_valid(doc)
    assert parser_accepts(doc)


@pytest.mark.parametrize("edit", range(len(BAD_EDITS)))
def test_parser_and_schema_refuse_the_same_bad_documents(validator, edit: int) -> None:
    doc = _greenhouse()
    BAD_EDITS[edit](doc)
    assert not validator.is_valid(doc)
    assert not parser_accepts(doc)


@settings(max_examples=40, deadline=None)
@given(scene_docs())
def test_generated_scenes_validate(validator, doc: dict) -> None:
    assert validator.is_valid(doc)


JUNK = [None, True, False, "x", "", -1, 0, 1, 1.5, 1e3, [], {}, [1, 2], [[0, 0]], {"id": "a"}]


def _paths(node: Any, prefix: tuple = ()) -> list[tuple]:
    out = [prefix] if prefix else []
    if isinstance(node, dict):
        for k, v in node.items():
            out += _paths(v, (*prefix, k))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            out += _paths(v, (*prefix, i))
    return out


@settings(max_examples=150, deadline=None)
@given(st.data())
def test_parser_and_schema_agree_on_random_corruptions(validator, data: st.DataObject) -> None:
    doc = copy.deepcopy(_GOOD[data.draw(st.integers(0, len(_GOOD) - 1), label="scene")])
    for _ in range(data.draw(st.integers(1, 2), label="edits")):
        paths = _paths(doc)
        path = data.draw(st.sampled_from(paths), label="path")
        parent = doc
        for key in path[:-1]:
            parent = parent[key]
        if isinstance(parent, dict) and data.draw(st.booleans(), label="delete"):
            del parent[path[-1]]
        else:
            parent[path[-1]] = copy.deepcopy(data.draw(st.sampled_from(JUNK), label="value"))
    schema_ok = validator.is_valid(doc)
    parser_ok = parser_accepts(doc)
    if known_gap(doc):
        assert not parser_ok  # the reader enforces what the schema cannot say
    else:
        assert schema_ok == parser_ok, doc


_GOOD = [json.loads(p.read_text()) for p in SCENE_FILES]
