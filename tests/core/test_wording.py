"""Landmark names for sentences: labels, ids when unlabelled, duplicates told apart.

The rules are the ones a reader needs (common practice for display names: show the human
label, fall back to the stable key, and qualify a name that two things share with the key);
the expected strings are written out by hand here.
"""

from __future__ import annotations

from arena_studio.core.scene.model import load_scene
from arena_studio.core.wording import LandmarkNames
from tests.conftest import SCENES


def _names() -> LandmarkNames:
    return LandmarkNames(
        [
            ("valve-west", "West valve"),
            ("potting-bench", "Potting bench"),
            ("shelf-1", "Shelf"),
            ("shelf-2", "shelf"),  # the same label up to case
            ("shelf-10", "Tall shelf"),
            ("pump", None),  # no label: its id
            ("p2", "pump"),  # a label equal to another landmark's id
            ("blank", "  "),  # a blank label counts as none
        ]
    )


def test_a_landmark_is_named_by_its_label_or_else_its_id():
    n = _names()
    assert n.name("valve-west") == "West valve"
    assert n.name("blank") == "blank"
    assert n.name("no-such-id") == "no-such-id"  # unknown ids stay as they are


def test_shared_labels_are_told_apart_by_id():
    n = _names()
    assert n.name("shelf-1") == "Shelf (shelf-1)"
    assert n.name("shelf-2") == "shelf (shelf-2)"
    assert n.name("shelf-10") == "Tall shelf"
    # an unlabelled landmark keeps its id; the one whose label repeats it is qualified
    assert n.name("pump") == "pump"
    assert n.name("p2") == "pump (p2)"
    names = [n.name(i) for i in ("shelf-1", "shelf-2", "shelf-10", "pump", "p2", "blank")]
    assert len(set(names)) == len(names)


def test_a_goal_is_its_targets_names_joined():
    n = _names()
    assert n.goal("valve-west+potting-bench") == "West valve + Potting bench"
    assert n.goal(["potting-bench", "shelf-1"]) == "Potting bench + Shelf (shelf-1)"
    assert n.goal(None) == "-" and n.goal("") == "-" and n.goal([], none="no goal") == "no goal"
    assert n.goal("valve-west+unknown") == "valve-west+unknown"  # not a key of ours: as is
    plus = LandmarkNames([("a+b", "Gate"), ("a", "A"), ("b", "B")])
    assert plus.goal("a+b") == "Gate"  # an id holding "+" is one target


def test_free_text_renames_whole_ids_only():
    n = _names()
    assert n.text("heads to valve-west") == "heads to West valve"
    assert n.text("waits at valve-west.") == "waits at West valve."
    assert n.text("valve-west+potting-bench, then shelf-10") == (
        "West valve + Potting bench, then Tall shelf"
    )
    # no id inside a longer word, and the longest id wins at one place
    mixed = "shelf-1x and xvalve-west and shelf-10"
    assert n.text(mixed) == "shelf-1x and xvalve-west and Tall shelf"
    assert n.text("") == "" and LandmarkNames(()).text("pump") == "pump"


def test_the_demo_scene_names_match_its_labels():
    scene = load_scene(SCENES / "greenhouse.scene.json")
    n = LandmarkNames.of(scene)
    for lm in scene.landmarks:  # the demo's labels are all distinct
        assert n.name(lm.id) == (lm.label or lm.id)
