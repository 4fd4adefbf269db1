"""The scene hash: one value per scene however its numbers were written, and a tape whose
stored hash does not match its embedded scene is reported (stats, reader)."""

from __future__ import annotations

import copy
import hashlib
import json
from pathlib import Path

import numpy as np
import pytest

from arena_studio.cli import main
from arena_studio.core.scene.model import Scene, canonical_scene_json, scene_hash
from arena_studio.core.tape import open_tape
from arena_studio.core.tape.format import (
    MAGIC,
    TRAILER,
    TRAILER_MAGIC,
    encode_array,
    frame,
    pack,
)
from tests.core.tape_helpers import box_scene, header_record

ROOT = Path(__file__).resolve().parents[3]

# The worked example of DEVELOPERS.md ("Scene hash"): a scene written with integers as a
# person writes it, its canonical text and its SHA-256.
EXAMPLE_DOC = {
    "format": "arena-studio.scene",
    "version": 1,
    "name": "tiny",
    "units": "m",
    "rooms": [{"id": "r", "outline": [[0, 0], [4, 0], [4, 3], [0, 3]]}],
    "landmarks": [
        {"id": "A", "label": "A", "position": [1, 2.5], "reach_radius": 0.5, "mount": "free"}
    ],
    "agents": [
        {
            "id": "a",
            "radius": 0.25,
            "max_speed": 1,
            "max_turn_rate": 2,
            "start": {"pose": [1, 1, 0]},
        }
    ],
    "goals": {"rule": "all_at_end", "families": [1]},
}
EXAMPLE_TEXT = (
    '{"agents":[{"id":"a","max_speed":1.0,"max_turn_rate":2.0,"radius":0.25,'
    '"start":{"pose":[1.0,1.0,0.0]}}],"format":"arena-studio.scene",'
    '"goals":{"families":[1],"hold_time":0.0,"rule":"all_at_end","vectors":[]},'
    '"landmarks":[{"id":"A","label":"A","mount":"free","position":[1.0,2.5],'
    '"reach_radius":0.5}],"name":"tiny","obstacles":[],'
    '"rooms":[{"id":"r","outline":[[0.0,0.0],[4.0,0.0],[4.0,3.0],[0.0,3.0]]}],'
    '"units":"m","version":1}'
)
EXAMPLE_HASH = "3dc9ffc109c3714743151fe776bb8086e588a3f70a00461f709d7766e8d13e77"


def _floats(value: object) -> object:
    """The same document with every number written as a float (1 -> 1.0)."""
    if isinstance(value, dict):
        return {k: _floats(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_floats(v) for v in value]
    if isinstance(value, int) and not isinstance(value, bool):
        return float(value)
    return value


def test_worked_example_text_and_hash() -> None:
    assert canonical_scene_json(EXAMPLE_DOC) == EXAMPLE_TEXT
    # SHA-256 (FIPS 180-4) through Python's hashlib over the ASCII text
    assert hashlib.sha256(EXAMPLE_TEXT.encode("ascii")).hexdigest() == EXAMPLE_HASH
    assert scene_hash(EXAMPLE_DOC) == EXAMPLE_HASH
    assert Scene.from_dict(EXAMPLE_DOC).content_hash() == EXAMPLE_HASH


def test_worked_example_is_the_documented_one() -> None:
    text = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
    assert EXAMPLE_HASH in text
    assert EXAMPLE_TEXT in text.replace("\n", "")  # the doc wraps the line; nothing else


def test_canonical_text_is_json_with_sorted_keys_and_no_spaces() -> None:
    # RFC 8259 JSON read back by the json module gives the normalised document itself
    doc = json.loads(EXAMPLE_TEXT)
    assert json.dumps(doc, sort_keys=True, separators=(",", ":")) == EXAMPLE_TEXT
    assert EXAMPLE_TEXT.isascii()


def test_hash_does_not_depend_on_how_numbers_were_written() -> None:
    as_floats = _floats(copy.deepcopy(EXAMPLE_DOC))
    assert scene_hash(as_floats) == scene_hash(EXAMPLE_DOC)
    # hashing the file text as written is not the recipe: it differs, which is why the
    # recipe parses first
    written = json.dumps(EXAMPLE_DOC, sort_keys=True, separators=(",", ":"))
    assert hashlib.sha256(written.encode()).hexdigest() != EXAMPLE_HASH
    # a real change of value changes the hash
    moved = copy.deepcopy(EXAMPLE_DOC)
    moved["landmarks"][0]["position"] = [1, 2.25]
    assert scene_hash(moved) != EXAMPLE_HASH


def _tape_with_hash(tmp_path: Path, stored: object) -> Path:
    """A finished tape of one 2-step episode whose header stores ``stored`` as scene_hash
    (the key is left out for the sentinel ``...``)."""
    scene = box_scene()
    header = header_record(scene)
    if stored is ...:
        del header["scene_hash"]
    else:
        header["scene_hash"] = stored
    body = MAGIC + frame(ord("H"), pack(header))
    begin = len(body)
    body += frame(ord("B"), pack({"episode": 0, "team_goal": None}))
    poses = np.zeros((2, 2, 3))
    poses[:, 1, 0] = 3.0
    chunk = {"episode": 0, "start": 0, "steps": 2, "poses": encode_array(poses, "<f8")}
    body += frame(ord("C"), pack(chunk))
    body += frame(ord("E"), pack({"episode": 0, "steps": 2}))
    end = len(body)

    def col(v: int) -> dict:
        return encode_array(np.array([v], dtype=np.int64), "<i8")

    index = {"episodes": 1, "begin": col(begin), "end": col(end), "steps": col(2)}
    at = len(body)
    body += frame(ord("I"), pack(index)) + TRAILER.pack(at, TRAILER_MAGIC)
    path = tmp_path / "h.tape"
    path.write_bytes(body)
    return path


def test_reader_reports_a_wrong_hash(tmp_path: Path) -> None:
    wrong = hashlib.sha256(b"not the scene").hexdigest()
    tape = open_tape(_tape_with_hash(tmp_path, wrong))
    assert tape.scene_hash_ok is False
    assert tape.scene_hash_warning and "does not match" in tape.scene_hash_warning
    assert len(tape) == 1  # the tape stays readable: the embedded scene is what is used
    good = open_tape(_tape_with_hash(tmp_path, scene_hash(box_scene())))
    assert good.scene_hash_ok is True and good.scene_hash_warning is None
    absent = open_tape(_tape_with_hash(tmp_path, ...))
    assert absent.scene_hash_ok is None and absent.scene_hash_warning is None


@pytest.mark.parametrize("stored", [b"\x00" * 32, 7])
def test_reader_reports_a_hash_of_the_wrong_type(tmp_path: Path, stored: object) -> None:
    tape = open_tape(_tape_with_hash(tmp_path, stored))
    assert tape.scene_hash_ok is False and tape.scene_hash_warning


def test_stats_warns_about_a_wrong_hash(tmp_path: Path, capsys: pytest.CaptureFixture) -> None:
    path = _tape_with_hash(tmp_path, "0" * 64)
    assert main(["stats", str(path), "--json", "--quiet"]) == 0
    out = capsys.readouterr()
    assert "scene_hash" in out.err and "does not match" in out.err
    assert json.loads(out.out)["summary"]["scene_hash_ok"] is False
    good = _tape_with_hash(tmp_path, scene_hash(box_scene()))
    assert main(["stats", str(good), "--json", "--quiet"]) == 0
    out = capsys.readouterr()
    assert "scene_hash" not in out.err
    assert json.loads(out.out)["summary"]["scene_hash_ok"] is True
