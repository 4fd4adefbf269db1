"""Scrub-bar glyphs in one lane never cover each other and stay on the bar.

Reference: interval arithmetic (two glyphs of half size r overlap when their centres are
closer than 2r, common practice); the input piles marks at the end of the bar as a failed
episode does.
"""

from __future__ import annotations

import itertools

from arena_studio.app.replay.timeline import GLYPH_GAP, GLYPH_R, spread


def test_a_pile_at_the_end_spreads_leftwards_onto_the_bar():
    xs = [100.0, 400.0, 598.0, 598.0, 599.0, 600.0]
    got = spread(xs, GLYPH_GAP, 10.0, 600.0)
    assert all(10.0 <= x <= 600.0 for x in got)
    for a, b in itertools.pairwise(got):
        assert b - a >= 2 * GLYPH_R  # no overlap
    assert got[:2] == xs[:2]  # marks with room keep their own time
    assert got == sorted(got)  # order in time kept


def test_marks_with_room_are_not_moved():
    xs = [10.0, 50.0, 90.0]
    assert spread(xs, GLYPH_GAP, 0.0, 100.0) == xs
