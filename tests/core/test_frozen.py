"""``_frozen.fast_maker`` (the fast constructor of frozen dataclasses) against the
generated ``__init__``.

Reference: the Python standard library's ``dataclasses`` (``fields``, ``asdict``,
``FrozenInstanceError``): an object the maker builds must be indistinguishable from one the
generated constructor builds.
"""

from __future__ import annotations

import dataclasses

import pytest

from arena_studio.core._frozen import fast_maker


@dataclasses.dataclass(frozen=True)
class _Point:
    x: float
    y: float
    label: str = "p"
    tags: tuple[str, ...] = ()


def test_same_object_as_the_generated_init() -> None:
    make = fast_maker(_Point)
    made, plain = make(1.0, 2.0, "a", ("t",)), _Point(1.0, 2.0, "a", ("t",))
    assert type(made) is _Point
    assert made == plain and hash(made) == hash(plain)
    assert dataclasses.asdict(made) == dataclasses.asdict(plain)
    assert vars(made) == vars(plain)
    with pytest.raises(dataclasses.FrozenInstanceError):
        made.x = 3.0  # type: ignore[misc]


def test_every_field_must_be_given() -> None:
    # defaults are not filled in: a caller that forgets a field must fail, not leave it unset
    make = fast_maker(_Point)
    with pytest.raises(ValueError):
        make(1.0, 2.0, "a")
    with pytest.raises(ValueError):
        make(1.0, 2.0, "a", (), "extra")


def test_refuses_classes_it_cannot_fill() -> None:
    @dataclasses.dataclass(frozen=True, slots=True)
    class Slotted:
        a: int

    @dataclasses.dataclass(frozen=True)
    class Checked:
        a: int

        def __post_init__(self) -> None:
            pass

    for cls in (Slotted, Checked, int):
        with pytest.raises(TypeError):
            fast_maker(cls)
