"""The "Roles (tape)" legend: each entry's glyph is the look the bodies carrying that label
get, the entries name landmarks by label, a label that says a role gets that role's look and
any other label a look of its own.

Reference: the tape's own role records (``Episode.role_at``, read back by the tape reader)
say which label each agent carries at each step; the legend and the body painter must agree
with them. Expected words are read off scenes/greenhouse.scene.json by hand.
"""

from __future__ import annotations

import pytest

from arena_studio.core.analysis.roles import HEADING, HOLDING, IDLE, OFF_GOAL
from arena_studio.core.tape import open_tape
from arena_studio.render.episode_cache import episode_cache
from arena_studio.render.options import FrameOptions
from arena_studio.render.role_style import (
    DERIVED_STYLE,
    agent_styles,
    meaning_style,
    role_legend,
    tape_style_table,
)
from tests.conftest import SCENES


@pytest.fixture(scope="module")
def greedy():
    tape = open_tape(SCENES / "greenhouse-greedy.tape")
    return tape.scene, tape.episode(0)


def test_each_legend_glyph_is_the_look_of_the_bodies_with_that_label(greedy):
    scene, ep = greedy
    cache = episode_cache(scene, ep)
    opts = FrameOptions()
    legend = role_legend(cache, opts)
    assert len(legend) >= 3  # the demo episode has three role kinds
    by_name = {name: style for style, name in legend}
    labels = {}  # tape label (as written) -> the legend's words for it
    for raw, (_style, words) in zip(cache.tape_labels, legend, strict=True):
        labels[raw] = words
    checked = set()
    for step in range(0, ep.steps, 5):
        styles = agent_styles(cache, step, opts)
        for a in range(ep.agent_count):
            raw = ep.role_at(a, step)  # the tape's record, not the cache
            if raw is None:
                continue
            assert int(styles[a]) == by_name[labels[raw]], (step, a, raw)
            checked.add(raw)
    assert checked == set(cache.tape_labels)  # every entry was seen on a body


def test_labels_that_say_a_role_get_that_roles_look(greedy):
    # the words are those our own rollout writes (core.sim.controller: "heads to X",
    # "waits at X" once the target is reached, "holds X"; core.sim.rollout: "waits")
    scene, ep = greedy
    legend = role_legend(episode_cache(scene, ep), FrameOptions())
    assert [style for style, _name in legend] == [
        DERIVED_STYLE[HEADING],
        DERIVED_STYLE[HOLDING],
        DERIVED_STYLE[HEADING],  # the line, not the look, says which target
    ]
    assert meaning_style("holds Tool rack") == DERIVED_STYLE[HOLDING]
    assert meaning_style("  Waits ") == DERIVED_STYLE[IDLE]
    assert meaning_style("waits at the door") == DERIVED_STYLE[HOLDING]
    assert meaning_style("headstrong") is None  # whole words only


def test_labels_of_their_own_are_told_apart_and_never_look_idle():
    labels = ("scout", "carrier", "heads to dock", "relay")
    styles = tape_style_table(labels)
    own = [st for st, label in zip(styles, labels, strict=True) if meaning_style(label) is None]
    assert len(set(own)) == len(own) == 3
    assert DERIVED_STYLE[HEADING] not in own  # taken by "heads to dock" in this episode
    assert DERIVED_STYLE[IDLE] not in own and DERIVED_STYLE[OFF_GOAL] not in own


def test_legend_entries_name_landmarks_by_label(greedy):
    scene, ep = greedy
    names = [name for _style, name in role_legend(episode_cache(scene, ep), FrameOptions())]
    assert names == ["heads to West valve", "waits at West valve", "heads to Potting bench"]
    assert not any("valve-west" in n or "potting-bench" in n for n in names)
