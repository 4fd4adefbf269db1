"""Malformed scene files are refused with an error naming the file and the field path.

Inputs are built with the standard library's json module (RFC 8259; Python's json also
accepts the non-standard NaN/Infinity literals, which is exactly what must be refused).
"""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

import msgpack
import pytest

from arena_studio.core.errors import SceneFormatError
from arena_studio.core.scene.model import Scene, load_scene

GREENHOUSE = Path(__file__).resolve().parents[3] / "scenes" / "greenhouse.scene.json"


def good() -> dict[str, Any]:
    return json.loads(GREENHOUSE.read_text())


def refused(doc: Any) -> SceneFormatError:
    with pytest.raises(SceneFormatError) as info:
        Scene.from_dict(doc)
    return info.value


def write(tmp_path: Path, text: str | bytes, name: str = "x.scene.json") -> Path:
    p = tmp_path / name
    p.write_bytes(text.encode() if isinstance(text, str) else text)
    return p


def test_unknown_format_name() -> None:
    doc = good()
    doc["format"] = "some-other.layout"
    err = refused(doc)
    assert err.where == "format" and "not a scene" in str(err)


def test_newer_version_asks_for_upgrade() -> None:
    doc = good()
    doc["version"] = 7
    err = refused(doc)
    assert err.where == "version" and "newer" in err.problem and "7" in err.problem


@pytest.mark.parametrize("version", [0, -1, "1", None, True, 1.5])
def test_bad_version_values(version: Any) -> None:
    doc = good()
    doc["version"] = version
    assert refused(doc).where == "version"


@pytest.mark.parametrize(
    ("path", "key"),
    [
        ((), "rooms"),
        (("landmarks", 3), "reach_radius"),
        (("agents", 1), "start"),
        (("agents", 2, "start"), "region"),
        (("obstacles", 3, "circle"), "radius"),
        (("goals",), "rule"),
    ],
)
def test_missing_field_names_its_path(path: tuple, key: str) -> None:
    doc = good()
    node = doc
    for part in path:
        node = node[part]
    del node[key]
    where = refused(doc).where
    expected = "".join(f"[{p}]" if isinstance(p, int) else f".{p}" for p in path).lstrip(".")
    if key == "region":  # without a region the start has neither form
        assert where == "agents[2].start"
    else:
        assert where == (f"{expected}.{key}" if expected else key)


@pytest.mark.parametrize(
    ("mutate", "where", "words"),
    [
        (
            lambda d: d["landmarks"][3].update(reach_radius="big"),
            "landmarks[3].reach_radius",
            "expected a number, got a string",
        ),
        (
            lambda d: d["landmarks"][3].update(reach_radius=-1),
            "landmarks[3].reach_radius",
            "expected a number > 0",
        ),
        (
            lambda d: d["landmarks"][0].update(mount="ceiling"),
            "landmarks[0].mount",
            "expected one of wall, free",
        ),
        (lambda d: d["rooms"][0].update(outline="square"), "rooms[0].outline", "expected a list"),
        (
            lambda d: d["rooms"][1]["outline"][2].append(1.0),
            "rooms[1].outline[2]",
            "expected a point [x, y]",
        ),
        (
            lambda d: d["agents"][0]["start"].update(pose=[1, 1]),
            "agents[0].start.pose",
            "expected a pose",
        ),
        (lambda d: d["agents"][0].update(radius=True), "agents[0].radius", "got a boolean"),
        (lambda d: d["goals"].update(rule="sometimes"), "goals.rule", "expected one of"),
        (lambda d: d["goals"].update(families=[2, 2]), "goals.families", "only once"),
        (
            lambda d: d["goals"].update(vectors=[[1, 0, 2, 0, 0, 0]]),
            "goals.vectors[0][2]",
            "expected 0 or 1",
        ),
        (
            lambda d: d["goals"].update(weights={"families": [1]}),
            "goals.weights.families",
            "expected 2 weights",
        ),
        (lambda d: d.update(units="ft"), "units", "metres"),
        (lambda d: d.update(name="   "), "name", "non-empty"),
        (lambda d: d["landmarks"][1].update(id="x" * 65), "landmarks[1].id", "too long"),
    ],
)
def test_wrong_types_and_values_name_the_field(mutate, where: str, words: str) -> None:
    doc = good()
    mutate(doc)
    err = refused(doc)
    assert err.where == where
    assert words in err.problem


@pytest.mark.parametrize(
    ("mutate", "where"),
    [
        (lambda d: d.update(colour="green"), "colour"),
        (lambda d: d["rooms"][0].update(hieght=3), "rooms[0].hieght"),
        (lambda d: d["landmarks"][2].update(reach=1), "landmarks[2].reach"),
        (lambda d: d["agents"][0]["start"].update(heading=0.0), "agents[0].start.heading"),
        (lambda d: d["goals"].update(weights={"goal": [1]}), "goals.weights.goal"),
        (lambda d: d["obstacles"][3]["circle"].update(centre=[1, 1]), "obstacles[3].circle.centre"),
    ],
)
def test_unknown_keys_are_refused(mutate, where: str) -> None:
    doc = good()
    mutate(doc)
    err = refused(doc)
    assert err.where == where and "unknown field" in err.problem


def test_obstacle_with_both_shapes() -> None:
    doc = good()
    doc["obstacles"][0]["circle"] = {"center": [1, 1], "radius": 1}
    assert refused(doc).where == "obstacles[0]"


def test_empty_room_outline() -> None:
    doc = good()
    doc["rooms"][0]["outline"] = []
    err = refused(doc)
    assert err.where == "rooms[0].outline" and "at least 3 points" in err.problem


def test_empty_rooms_list_parses_and_the_checker_reports_it() -> None:
    # No rooms is a drawable state in the editor, so the parser keeps it and the checker
    # reports it (see tests/core/checks/test_checks.py::test_empty_scene_findings).
    doc = good()
    doc["rooms"] = []
    assert Scene.from_dict(doc).rooms == ()


@pytest.mark.parametrize("literal", ["NaN", "Infinity", "-Infinity"])
def test_nan_coordinates_in_json_file(tmp_path: Path, literal: str) -> None:
    text = GREENHOUSE.read_text().replace('"position": [8.0, 1.2]', f'"position": [{literal}, 1.2]')
    assert literal in text
    with pytest.raises(SceneFormatError) as info:
        load_scene(write(tmp_path, text))
    assert "finite" in str(info.value) and str(tmp_path) in str(info.value)


def test_nan_coordinates_in_msgpack_file(tmp_path: Path) -> None:
    doc = good()
    doc["landmarks"][3]["position"] = [float("nan"), 1.2]
    p = write(tmp_path, msgpack.packb(doc), "x.scene.msgpack")
    with pytest.raises(SceneFormatError) as info:
        load_scene(p)
    assert info.value.where == "landmarks[3].position[0]" and "finite" in info.value.problem


def test_truncated_json_names_line_and_column(tmp_path: Path) -> None:
    text = GREENHOUSE.read_text()
    cut = text[: len(text) // 2]
    with pytest.raises(SceneFormatError) as info:
        load_scene(write(tmp_path, cut))
    msg = str(info.value)
    assert "invalid JSON at line" in msg and "column" in msg


def test_truncated_msgpack(tmp_path: Path) -> None:
    data = msgpack.packb(good())
    with pytest.raises(SceneFormatError) as info:
        load_scene(write(tmp_path, data[: len(data) // 2], "x.scene.msgpack"))
    assert "invalid msgpack" in str(info.value)


@pytest.mark.parametrize(
    ("payload", "words"),
    [
        (b"", "empty"),
        (b"   \n", "empty"),
        (b"\xff\xfe\x00garbage", "not UTF-8"),
        (b"[1, 2, 3]", "expected an object"),
        (b"[" * 100_000, "invalid JSON"),
    ],
)
def test_non_scene_json_files(tmp_path: Path, payload: bytes, words: str) -> None:
    with pytest.raises(SceneFormatError) as info:
        load_scene(write(tmp_path, payload))
    assert words in str(info.value)


def test_unknown_file_type(tmp_path: Path) -> None:
    with pytest.raises(SceneFormatError) as info:
        load_scene(write(tmp_path, "{}", "x.scene.yaml"))
    assert "unknown scene file type" in str(info.value)


def test_million_vertex_outline_refused_before_its_points_are_read(tmp_path, monkeypatch):
    import arena_studio.core.scene.fields as fields

    doc = good()
    # 20,000 vertices: under the file bound and the scene total, so the outline limit answers
    doc["rooms"][0]["outline"] = [[i * 1e-3, (i % 2) * 1e-3] for i in range(20_000)]
    p = write(tmp_path, json.dumps(doc))
    read = []  # the points of the long outline that were parsed one by one

    def counting_point(value, path):
        if path.startswith("rooms[0].outline"):
            read.append(path)
        return point(value, path)

    point = fields.point
    monkeypatch.setattr(fields, "point", counting_point)
    with pytest.raises(SceneFormatError) as info:
        load_scene(p)
    assert info.value.where == "rooms[0].outline" and "too many vertices" in info.value.problem
    # refused on its length alone: no per-point work (no timing, so machine load cannot matter)
    assert read == []


def test_errors_do_not_mutate_input() -> None:
    doc = good()
    doc["landmarks"][0]["mount"] = "ceiling"
    before = copy.deepcopy(doc)
    refused(doc)
    assert doc == before
