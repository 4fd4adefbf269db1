"""``Episode._of_fields`` (the tape reader's constructor) builds what ``Episode(...)`` builds.

Reference: the Python standard library's ``dataclasses`` (``fields``, ``FrozenInstanceError``),
the generated constructor being the thing compared against.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from arena_studio.core.tape.episode import Episode


def _values() -> dict[str, object]:
    poses = np.arange(24, dtype=np.float64).reshape(4, 2, 3)
    goal = np.array([1, 0, 1], dtype=np.uint8)
    return {
        "index": 7,
        "dt": 0.05,
        "poses": poses,
        "team_goal": goal,
        "pursued_goals": (goal, None),
        "roles": (((0, "scout"),), ()),
        "rewards": np.ones((4, 2)),
        "actions": np.zeros((4, 2, 1)),
        "done": np.zeros((4, 2), dtype=bool),
        "channels": {"battery": np.linspace(1, 0, 4)},
        "messages": ({"hello": 1},),
        "outcome": {"score": 3},
        "complete": False,
        "assigned_targets": (goal, np.array([0, 0, 1], dtype=np.uint8)),
        "landmark_positions": np.array([[1.0, 2.0], [3.0, 4.0], [5.0, 6.0]]),
    }


def test_fields_in_order_and_same_values() -> None:
    values = _values()
    # the positional order _of_fields takes is the dataclass field order (stdlib dataclasses)
    assert [f.name for f in dataclasses.fields(Episode)] == list(values)
    made = Episode._of_fields(*values.values())
    plain = Episode(**values)  # type: ignore[arg-type]
    for f in dataclasses.fields(Episode):
        assert getattr(made, f.name) is getattr(plain, f.name) is values[f.name]
    assert made.steps == plain.steps == 4
    assert made.agent_count == 2
    assert made.duration == plain.duration
    assert made.role_at(0, 2) == "scout"
    assert type(made) is Episode


def test_still_frozen() -> None:
    made = Episode._of_fields(*_values().values())
    with pytest.raises(dataclasses.FrozenInstanceError):
        made.dt = 1.0  # type: ignore[misc]
    with pytest.raises(dataclasses.FrozenInstanceError):
        del made.poses  # type: ignore[misc]


def test_a_missing_or_extra_value_is_refused() -> None:
    # a field added to Episode but not passed by the reader must fail, not leave it unset
    values = list(_values().values())
    with pytest.raises(ValueError):
        Episode._of_fields(*values[:-1])
    with pytest.raises(ValueError):
        Episode._of_fields(*values, None)

