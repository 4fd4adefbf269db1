"""The "Roles (tape)" legend: each entry's glyph is the look the bodies carrying that label
get, the entries name landmarks by label, and no tape label borrows the idle look.

Reference: the tape's own role records (``Episode.role_at``, read back by the tape reader)
say which label each agent carries at each step; the legend and the body painter must agree
with them. Expected words are read off scenes/greenhouse.scene.json by hand.
"""

from __future__ import annotations

import pytest

from arena_studio.core.analysis.roles import IDLE, OFF_GOAL
from arena_studio.core.tape import open_tape
from arena_studio.render.episode_cache import episode_cache
from arena_studio.render.options import FrameOptions
from arena_studio.render.role_style import DERIVED_STYLE, agent_styles, role_legend
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


def test_tape_labels_do_not_take_the_idle_or_off_goal_look(greedy):
    scene, ep = greedy
    legend = role_legend(episode_cache(scene, ep), FrameOptions())
    styles = [style for style, _name in legend]
    assert len(set(styles)) == len(styles)  # told apart
    for style in styles[:4]:
        assert style not in (DERIVED_STYLE[IDLE], DERIVED_STYLE[OFF_GOAL])


def test_legend_entries_name_landmarks_by_label(greedy):
    scene, ep = greedy
    names = [name for _style, name in role_legend(episode_cache(scene, ep), FrameOptions())]
    assert names == ["heads to West valve", "waits at West valve", "heads to Potting bench"]
    assert not any("valve-west" in n or "potting-bench" in n for n in names)
