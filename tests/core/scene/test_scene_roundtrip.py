"""Lossless round trips: JSON -> model -> JSON and msgpack -> model -> msgpack.

Property tests with hypothesis; the reference decoders are the standard library's ``json``
(RFC 8259) and the ``msgpack`` package (msgpack specification), not our own code.
"""

from __future__ import annotations

import json
from pathlib import Path

import msgpack
from hypothesis import given, settings
from hypothesis import strategies as st

from arena_studio.core.scene.files import dumps_readable, encode_scene
from arena_studio.core.scene.model import FORMAT_NAME, FORMAT_VERSION, Scene, load_scene, save_scene

GREENHOUSE = Path(__file__).resolve().parents[3] / "scenes" / "greenhouse.scene.json"

coord = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False)
positive = st.floats(min_value=1e-6, max_value=1e3, allow_nan=False)
# one line of printable text: the reader refuses control characters and line separators
text = st.text(
    alphabet=st.characters(blacklist_categories=("Cc", "Cs"), blacklist_characters="\u2028\u2029"),
    min_size=1,
    max_size=20,
).filter(lambda s: s.strip() != "")
ident = st.text(
    alphabet=st.characters(codec="utf-8", categories=("L", "N", "Pd")), min_size=1, max_size=12
)
point = st.lists(coord, min_size=2, max_size=2)
outline = st.lists(point, min_size=3, max_size=8).filter(lambda pts: pts[0] != pts[-1])


@st.composite
def scene_docs(draw: st.DrawFn) -> dict:
    n_lm = draw(st.integers(0, 5))
    rooms = [{"id": draw(ident), "outline": draw(outline)} for _ in range(draw(st.integers(0, 3)))]
    obstacles = []
    for _ in range(draw(st.integers(0, 3))):
        if draw(st.booleans()):
            obstacles.append({"id": draw(ident), "outline": draw(outline)})
        else:
            obstacles.append(
                {"id": draw(ident), "circle": {"center": draw(point), "radius": draw(positive)}}
            )
    landmarks = [
        {
            "id": draw(ident),
            "label": draw(text),
            "position": draw(point),
            "reach_radius": draw(positive),
            "mount": draw(st.sampled_from(["wall", "free"])),
        }
        for _ in range(n_lm)
    ]
    agents = []
    for _ in range(draw(st.integers(0, 3))):
        if draw(st.booleans()):
            start = {"pose": draw(st.lists(coord, min_size=3, max_size=3))}
        else:
            start = {"region": draw(outline), "heading": draw(st.none() | coord)}
        agents.append(
            {
                "id": draw(ident),
                "radius": draw(positive),
                "max_speed": draw(positive),
                "max_turn_rate": draw(positive),
                "start": start,
            }
        )
    families = draw(st.lists(st.integers(1, 6), unique=True, max_size=3))
    vectors = draw(st.lists(st.lists(st.integers(0, 1), min_size=n_lm, max_size=n_lm), max_size=3))
    goals: dict = {
        "rule": draw(st.sampled_from(["all_at_end", "all_at_once", "all_visited"])),
        "hold_time": draw(st.floats(0, 100)),
        "families": families,
        "vectors": vectors,
    }
    weights = {}
    if draw(st.booleans()):
        weights["families"] = [draw(st.floats(0, 10)) for _ in families]
    if draw(st.booleans()):
        weights["vectors"] = [draw(st.floats(0, 10)) for _ in vectors]
    if weights:
        goals["weights"] = weights
    doc = {"format": FORMAT_NAME, "version": FORMAT_VERSION, "name": draw(text), "units": "m"}
    if draw(st.booleans()):
        doc["description"] = draw(text)
    doc.update(rooms=rooms, obstacles=obstacles, landmarks=landmarks, agents=agents, goals=goals)
    if draw(st.booleans()):  # version 2: a reference image under the layout
        doc["underlay"] = {
            "image": draw(text),
            "origin": draw(point),
            "scale": draw(positive),
            "rotation": draw(coord),
            "opacity": draw(st.floats(0, 1)),
            "locked": draw(st.booleans()),
        }
    return doc


@settings(max_examples=60, deadline=None)
@given(scene_docs())
def test_json_model_json_is_lossless(doc: dict) -> None:
    data = json.dumps(doc).encode()
    scene = Scene.from_dict(json.loads(data))
    again = json.loads(encode_scene(scene, "json"))
    assert again == doc  # every field, every float bit (json writes repr, RFC 8259 numbers)
    assert Scene.from_dict(again) == scene
    assert json.loads(dumps_readable(doc)) == doc


@settings(max_examples=60, deadline=None)
@given(scene_docs())
def test_msgpack_model_msgpack_is_lossless(doc: dict) -> None:
    data = msgpack.packb(doc, use_bin_type=True)
    scene = Scene.from_dict(msgpack.unpackb(data, raw=False))
    out = encode_scene(scene, "msgpack")
    assert msgpack.unpackb(out, raw=False) == doc
    assert encode_scene(Scene.from_dict(msgpack.unpackb(out, raw=False)), "msgpack") == out


@settings(max_examples=15, deadline=None)
@given(scene_docs())
def test_files_round_trip_both_formats(tmp_path_factory, doc: dict) -> None:
    folder: Path = tmp_path_factory.mktemp("rt")
    scene = Scene.from_dict(doc)
    for name in ("s.scene.json", "s.scene.msgpack"):
        save_scene(scene, folder / name)
        assert load_scene(folder / name) == scene
    assert load_scene(folder / "s.scene.json").content_hash() == scene.content_hash()


def test_closing_point_is_dropped() -> None:
    doc = json.loads(GREENHOUSE.read_text())
    ring = doc["rooms"][0]["outline"]
    doc["rooms"][0]["outline"] = [*ring, ring[0]]
    assert Scene.from_dict(doc).rooms[0].outline == tuple(tuple(p) for p in ring)


def test_whole_floats_read_as_integers() -> None:
    # JSON Schema 2020-12 treats 1.0 as an integer; the reader agrees (version, k, bits).
    doc = json.loads(GREENHOUSE.read_text())
    doc["version"] = 1.0
    doc["goals"]["families"] = [1.0, 2]
    doc["goals"]["vectors"] = [[1.0, 0, 0, 0, 0, 1]]
    s = Scene.from_dict(doc)
    assert s.goals.families == (1, 2) and s.goals.vectors == ((1, 0, 0, 0, 0, 1),)
    assert isinstance(s.goals.families[0], int)
