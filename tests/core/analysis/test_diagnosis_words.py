"""A diagnosis as a person reads it: landmark slots named by label, nothing else changed.

Reference: the diagnosis module's own sentences (``diagnosis.SENTENCES``) produced by
``episode_metrics`` on hand-made and random episodes; the check is a round trip (putting the
ids back into the reworded sentence gives the stored one exactly), so only landmark names
changed. The demo tape's expected words are read off its scene file by hand.
"""

from __future__ import annotations

import re

import numpy as np

from arena_studio.core.analysis.diagnosis import CODES
from arena_studio.core.analysis.diagnosis_words import diagnosis_words
from arena_studio.core.analysis.events import episode_events
from arena_studio.core.analysis.metrics import episode_metrics
from arena_studio.core.tape import open_tape
from arena_studio.core.wording import LandmarkNames
from tests.conftest import SCENES
from tests.core.analysis.test_metrics import _random_episode
from tests.core.tape_helpers import box_scene

LABELS = {"A": "Alpha tank", "B": "Bravo bench", "C": "Charlie"}


def _back(text: str) -> str:
    """The reworded sentence with the ids put back (the inverse of the naming)."""
    for lid, label in LABELS.items():
        text = text.replace(label, lid)
    return text.replace(" + ", "+")


def test_every_diagnosis_names_its_landmarks_and_keeps_the_rest():
    names = LandmarkNames(LABELS.items())
    seen: set[str] = set()
    rng = np.random.default_rng(5)
    for rule in ("all_at_once", "all_at_end"):
        scene = box_scene(rule, hold_time=0.5, agents=3)
        for i in range(400):
            m = episode_metrics(scene, _random_episode(rng, i, 3))
            if m.diagnosis is None:
                continue
            said = diagnosis_words(m.diagnosis, names, m.diagnosis_code)
            assert _back(said) == m.diagnosis  # only the landmark slots changed
            assert diagnosis_words(m.diagnosis, names) == said  # the code is found alone
            if m.diagnosis_code != "not-together":  # the only one naming no landmark
                assert said != m.diagnosis
                assert not re.search(r"(?<![\w-])[ABC](?![\w-])", said), said
            seen.add(m.diagnosis_code or "")
    assert set(CODES) <= seen


def test_an_id_that_is_an_everyday_word_renames_only_its_slot():
    names = LandmarkNames([("end", "End wall"), ("target", "Target board")])
    text = "targets left empty at the end: end+target"
    assert diagnosis_words(text, names, "uncovered") == (
        "targets left empty at the end: End wall + Target board"
    )
    stuck = "r1 stopped at (1.00, 2.00) away from every target while end stayed empty"
    assert diagnosis_words(stuck, names) == (
        "r1 stopped at (1.00, 2.00) away from every target while End wall stayed empty"
    )
    wanted = "agents pursued different goals (team goal end; r1 target, r2 no target)"
    assert diagnosis_words(wanted, names) == (
        "agents pursued different goals (team goal End wall; r1 Target board, r2 no target)"
    )


def test_text_of_no_known_form_stays_as_it_is():
    names = LandmarkNames([("a", "A")])
    assert diagnosis_words("something else about a", names) == "something else about a"
    assert diagnosis_words(None, names) == ""


def test_greenhouse_demo_failure_reads_with_labels_and_keeps_ids_as_data():
    tape = open_tape(SCENES / "greenhouse-greedy.tape")
    m = episode_metrics(tape.scene, tape.episode(0))
    # the data keep ids (tables, stats, exports key on them)
    assert m.goal_key == "valve-west+potting-bench" and "valve-west" in (m.diagnosis or "")
    names = LandmarkNames.of(tape.scene)
    said = diagnosis_words(m.diagnosis, names, m.diagnosis_code)
    assert "West valve" in said and "Potting bench" in said
    assert "valve-west" not in said and "potting-bench" not in said
    assert names.goal(m.goal_key) == "West valve + Potting bench"


def test_events_name_landmarks_by_label_only_when_asked():
    tape = open_tape(SCENES / "greenhouse-greedy.tape")
    ep = tape.episode(0)
    ids = episode_events(tape.scene, ep)
    named = episode_events(tape.scene, ep, names=LandmarkNames.of(tape.scene))
    assert [(e.step, e.kind) for e in ids] == [(e.step, e.kind) for e in named]
    id_text, named_text = " ".join(e.text for e in ids), " ".join(e.text for e in named)
    assert "reached valve-west" in id_text and "now heads to potting-bench" in id_text
    assert "reached West valve" in named_text and "now heads to Potting bench" in named_text
    for lid in ("valve-west", "potting-bench"):
        assert lid not in named_text
