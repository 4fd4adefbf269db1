"""The statement under a still: the outcome line, then who went where.

Reference: the parts are the project's own judges (``episode_metrics``, ``who_went_where``);
what is checked here is that the statement says both, in that order, by label, and that a
success says "succeeded" with the metrics' time. Demo tape: the bundled greenhouse scene.
"""

from __future__ import annotations

from arena_studio.core.analysis.metrics import episode_metrics
from arena_studio.core.analysis.statement import episode_statement, outcome_statement
from arena_studio.core.analysis.who_went_where import who_went_where
from arena_studio.core.resources import demo_path
from arena_studio.core.tape import open_tape


def test_failure_then_who_went_where_by_label():
    tape = open_tape(demo_path("greenhouse-greedy.tape"))
    ep = tape.episode(0)
    m = episode_metrics(tape.scene, ep)
    assert not m.success
    text = episode_statement(tape.scene, ep)
    where = who_went_where(tape.scene, ep, None).text()
    assert text.startswith("Episode 0 failed goal West valve + Potting bench")
    assert text.endswith(f"Who went where: {where}.")
    assert f"at {m.diagnosis_step * ep.dt:.1f} s" in text
    assert "valve-west" not in text and "potting-bench" not in text


def test_success_says_its_time():
    tape = open_tape(demo_path("greenhouse-greedy.tape"))
    ep = tape.episode(3)
    m = episode_metrics(tape.scene, ep)
    assert m.success
    assert episode_statement(tape.scene, ep).startswith(
        f"Episode 3 succeeded at goal West valve + Potting bench in {m.time_to_success:.1f} s."
    )


def test_no_metrics_no_outcome():
    assert outcome_statement(None, 0, 0.1) == ""
