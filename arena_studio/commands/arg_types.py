"""One argparse type for every numeric option: finite, in its documented range, unit named.

``parser.add_argument("--speed", type=number(SPEED))`` makes ``--speed nan`` or
``--speed 1e-9`` a usage error (exit 2, one line) naming the option, the range and the unit,
before any file is opened. The ranges live in :mod:`arena_studio.core.limits`, shared with
the app's dialogs.
"""

from __future__ import annotations

import argparse
from collections.abc import Callable

from arena_studio.core.limits import Range, RangeError


def number(limits: Range) -> Callable[[str], float | int]:
    """An argparse ``type`` that parses and range-checks one value."""

    def parse(text: str) -> float | int:
        try:
            return limits.parse(text)
        except RangeError as exc:
            raise argparse.ArgumentTypeError(str(exc)) from None

    parse.__name__ = limits.what  # argparse names the type in some messages
    return parse


__all__ = ["number"]
