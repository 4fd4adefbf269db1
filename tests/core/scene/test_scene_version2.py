"""Scene format version 2 (the underlay) and the ordered upgrade from version 1."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import jsonschema
import pytest

from arena_studio.core.errors import SceneFormatError
from arena_studio.core.resources import resource_path
from arena_studio.core.robot.underlay import rebase, underlay_problem
from arena_studio.core.scene import FORMAT_VERSION, Scene, Underlay, load_scene, save_scene
from arena_studio.core.tape import open_tape

DATA = Path(__file__).resolve().parents[2] / "data"
REPO = Path(__file__).resolve().parents[3]
V1 = DATA / "version1.scene.json"


def _validator() -> jsonschema.Draft202012Validator:
    schema = json.loads(resource_path("schema", "scene.schema.json").read_text())
    return jsonschema.Draft202012Validator(schema)


def test_version1_file_loads_upgrades_and_saves_as_version2(tmp_path: Path) -> None:
    doc = json.loads(V1.read_text())
    assert doc["version"] == 1
    scene = load_scene(V1)
    assert FORMAT_VERSION == 2 and scene.underlay is None
    assert [r.id for r in scene.rooms] == ["boiler-room", "corridor"]
    out = tmp_path / "boiler.scene.json"
    save_scene(scene, out)
    saved = json.loads(out.read_text())
    assert saved["version"] == 2 and load_scene(out) == scene
    # JSON Schema 2020-12 (jsonschema package): the schema takes both versions
    assert _validator().is_valid(doc) and _validator().is_valid(saved)


def test_underlay_round_trip_and_schema(tmp_path: Path) -> None:
    under = Underlay("maps/floor.pgm", (-3.0, 2.0), 0.05, 0.25, 0.4, False)
    scene = load_scene(V1).with_changes(underlay=under)
    out = tmp_path / "boiler.scene.msgpack"
    save_scene(scene, out)
    assert load_scene(out) == scene
    doc = scene.to_dict()
    assert _validator().is_valid(doc)
    doc["version"] = 1  # a version-1 file cannot carry an underlay: both refuse it
    assert not _validator().is_valid(doc)
    with pytest.raises(SceneFormatError, match="underlay: needs version 2"):
        Scene.from_dict(doc)


@pytest.mark.parametrize(
    ("edit", "field"),
    [
        ({"opacity": 1.5}, "underlay.opacity"),
        ({"scale": 0}, "underlay.scale"),
        ({"locked": 1}, "underlay.locked"),
        ({"image": " "}, "underlay.image"),
        ({"tilt": 1}, "underlay.tilt"),
    ],
)
def test_bad_underlay_fields_are_named(edit: dict, field: str) -> None:
    doc = load_scene(V1).with_changes(underlay=Underlay("a.png")).to_dict()
    doc["underlay"].update(edit)
    with pytest.raises(SceneFormatError) as err:
        Scene.from_dict(doc)
    assert str(err.value).startswith(field)
    assert not _validator().is_valid(doc)


def test_underlay_is_not_part_of_the_layout_hash() -> None:
    scene = load_scene(V1)
    moved = scene.with_changes(underlay=Underlay("a.png", (1.0, 1.0)))
    assert moved.content_hash() == scene.content_hash()
    # the hash version 1 wrote (SHA-256 of the sorted, compact JSON of the version-1
    # document, hashlib) is the hash now: tapes recorded before version 2 still match
    doc = scene.to_dict()
    doc["version"] = 1
    text = json.dumps(doc, sort_keys=True, separators=(",", ":"))
    assert scene.content_hash() == hashlib.sha256(text.encode("utf-8")).hexdigest()
    tape = open_tape(REPO / "scenes" / "greenhouse-shared.tape")
    assert tape.scene_hash_ok


def test_missing_image_is_a_warning_and_paths_stay_relative(tmp_path: Path) -> None:
    (tmp_path / "maps").mkdir()
    (tmp_path / "maps" / "floor.png").write_bytes(b"")
    scene = load_scene(V1).with_changes(underlay=Underlay("maps/floor.png"))
    first = tmp_path / "a.scene.json"
    save_scene(scene, first)
    assert underlay_problem(load_scene(first), first) is None
    (tmp_path / "sub").mkdir()
    second = tmp_path / "sub" / "b.scene.json"
    moved = rebase(scene, first, second)
    assert moved.underlay is not None and moved.underlay.image == "../maps/floor.png"
    assert underlay_problem(moved, second) is None
    (tmp_path / "maps" / "floor.png").unlink()
    problem = underlay_problem(load_scene(first), first)  # the scene still loads
    assert problem is not None and "maps/floor.png not found" in problem


def test_two_point_calibration_scales_about_the_first_point() -> None:
    from arena_studio.core.robot.underlay import calibrate

    u = Underlay("a.png", origin=(1.0, 1.0), scale=0.1, rotation=0.3)
    # two points drawn 4 m apart that really are 2 m apart: everything halves about a
    got = calibrate(u, (3.0, 1.0), (3.0, 5.0), 2.0)
    assert got.scale == pytest.approx(0.05) and got.rotation == 0.3
    assert got.origin == pytest.approx((2.0, 1.0))
    with pytest.raises(ValueError):
        calibrate(u, (3.0, 1.0), (3.0, 1.0), 2.0)


def test_map_frame_in_scene_from_the_yaml_and_the_underlay(tmp_path: Path) -> None:
    import math

    import numpy as np

    from arena_studio.core.robot.map_yaml import MapInfo
    from arena_studio.core.robot.underlay import map_frame_in_scene, map_underlay

    info = MapInfo(tmp_path / "m.pgm", 0.05, (-3.0, 2.0, 0.4))
    # a scene made by import map lies in the map frame: identity
    (x, y, yaw), k = map_frame_in_scene(info, map_underlay(info, tmp_path / "s.scene.json"))
    assert (x, y, yaw, k) == pytest.approx((0.0, 0.0, 0.0, 1.0))

    def mat(pose, scale=1.0):  # similarity transform as a 3 x 3 matrix (homogeneous form)
        c, s = math.cos(pose[2]), math.sin(pose[2])
        return np.array(
            [[scale * c, -scale * s, pose[0]], [scale * s, scale * c, pose[1]], [0, 0, 1]]
        )

    # image corner at U in the scene, at Y in the map frame: scene <- map = U · S(k) · Y^-1
    under = Underlay("m.pgm", (1.0, 4.0), 0.1, -0.3)
    pose, k = map_frame_in_scene(info, under)
    want = mat((1.0, 4.0, -0.3)) @ np.diag([2.0, 2.0, 1.0]) @ np.linalg.inv(mat(info.origin))
    assert np.allclose(mat(pose, k), want) and k == pytest.approx(2.0)
