"""Landmark names of a sweep, read from its tapes' headers (for goals shown by label).

Reference: the labels in scenes/parking-level.scene.json, the scene the demo sweep was
recorded in, read here with the scene loader.
"""

from __future__ import annotations

import shutil

from arena_studio.core.runs.sweep import landmark_names, scan_sweep
from arena_studio.core.scene.model import load_scene
from tests.conftest import SCENES


def test_sweep_names_are_the_scene_labels():
    scene = load_scene(SCENES / "parking-level.scene.json")
    names = landmark_names(scan_sweep(SCENES / "sweep-demo" / "mixed").ready)
    for lm in scene.landmarks:
        assert names.name(lm.id) == (lm.label or lm.id)
    a, b = scene.landmarks[0], scene.landmarks[1]
    assert names.goal(f"{a.id}+{b.id}") == f"{a.label} + {b.label}"


def test_a_tape_whose_header_cannot_be_read_adds_no_names(tmp_path):
    src = next((SCENES / "sweep-demo" / "mixed").rglob("*.tape"))
    good = tmp_path / "good.tape"
    shutil.copy(src, good)
    bad = tmp_path / "bad.tape"
    bad.write_bytes(good.read_bytes()[:40])  # the header cut short
    sweep = scan_sweep(tmp_path)
    # the cut tape is a problem of the sweep; its neighbour still gives the names
    names = landmark_names(sweep.tapes)
    scene = load_scene(SCENES / "parking-level.scene.json")
    assert names.name(scene.landmarks[0].id) == scene.landmarks[0].label
