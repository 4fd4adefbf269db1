"""Map-server YAML fields and the occupancy rule, as the map_server documentation states."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from arena_studio.core.robot.errors import RobotImportError
from arena_studio.core.robot.map_yaml import (
    FREE,
    OCCUPIED,
    UNKNOWN,
    MapInfo,
    classify,
    read_map,
    read_map_yaml,
)

from .map_helpers import write_map


def _info(**kw) -> MapInfo:
    base = {"image": Path("x.pgm"), "resolution": 0.05, "origin": (0.0, 0.0, 0.0)}
    return MapInfo(**{**base, **kw})


def test_trinary_values_of_the_documented_example() -> None:
    # map_server documentation (common practice): with negate 0, p = (255 - v) / 255;
    # p > occupied_thresh occupied, p < free_thresh free, else unknown. With 0.65 / 0.196:
    # 254 free, 0 occupied, 205 unknown.
    grey = np.array([[254, 0, 205]], dtype=np.uint8)
    got = classify(grey, _info(occupied_thresh=0.65, free_thresh=0.196))
    assert got.tolist() == [[FREE, OCCUPIED, UNKNOWN]]


def test_every_grey_value_follows_the_rule_with_and_without_negate() -> None:
    v = np.arange(256, dtype=np.uint8)[None]
    for negate in (False, True):
        got = classify(v, _info(negate=negate))[0]
        for value in range(256):
            # map_server documentation (common practice): negate flips p to v / 255
            p = value / 255 if negate else (255 - value) / 255
            want = OCCUPIED if p > 0.65 else FREE if p < 0.196 else UNKNOWN
            assert got[value] == want, (negate, value)


def test_negate_turns_black_into_free() -> None:
    grey = np.array([[0, 254]], dtype=np.uint8)
    assert classify(grey, _info(negate=True)).tolist() == [[FREE, OCCUPIED]]


def test_raw_mode_reads_percent_and_ignores_negate() -> None:
    grey = np.array([[0, 100, 50, 255]], dtype=np.uint8)
    for negate in (False, True):
        got = classify(grey, _info(mode="raw", negate=negate)).tolist()
        assert got == [[FREE, OCCUPIED, UNKNOWN, UNKNOWN]]


def test_scale_mode_transparent_pixel_is_unknown() -> None:
    grey = np.array([[254, 254]], dtype=np.uint8)
    alpha = np.array([[255, 0]], dtype=np.uint8)
    assert classify(grey, _info(mode="scale"), alpha).tolist() == [[FREE, UNKNOWN]]


def test_yaml_fields_and_relative_image(tmp_path: Path) -> None:
    path = write_map(tmp_path, origin=(-3.5, 2.0, 0.25), negate=1, extra="mode: scale\n")
    info = read_map_yaml(path)
    assert info.image == tmp_path / "floor.pgm"
    assert info.origin == (-3.5, 2.0, 0.25) and info.negate and info.mode == "scale"
    omap = read_map(path)
    assert omap.cells.shape == omap.pixels.shape == (120, 160)


@pytest.mark.parametrize(
    ("text", "field"),
    [
        ("resolution: 0.05\norigin: [0, 0, 0]\n", "image"),
        ("image: a.pgm\norigin: [0, 0, 0]\n", "resolution"),
        ("image: a.pgm\nresolution: -1\norigin: [0, 0, 0]\n", "resolution"),
        ("image: a.pgm\nresolution: 0.05\norigin: [0, 0, x]\n", "origin[2]"),
        ("image: a.pgm\nresolution: 0.05\norigin: [0, 0, 0]\nmode: fuzzy\n", "mode"),
        ("image: a.pgm\nresolution: 0.05\norigin: [0, 0, 0]\nnegate: 2\n", "negate"),
        ("image: a.pgm\nresolution: 0.05\norigin: [0, 0, 0]\nfree_thresh: 0.9\n", "free_thresh"),
        ("image: [a\n", "line"),
    ],
)
def test_bad_yaml_names_the_field(tmp_path: Path, text: str, field: str) -> None:
    path = tmp_path / "m.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(RobotImportError) as err:
        read_map_yaml(path)
    assert str(path) in str(err.value) and field in str(err.value)


def test_missing_or_broken_image_is_one_clear_error(tmp_path: Path) -> None:
    path = write_map(tmp_path)
    (tmp_path / "floor.pgm").unlink()
    with pytest.raises(RobotImportError, match="map image not found"):
        read_map(path)
    (tmp_path / "floor.pgm").write_bytes(b"P5\n10 10\n255\n")  # header without pixels
    with pytest.raises(RobotImportError, match="not a readable image"):
        read_map(path)
