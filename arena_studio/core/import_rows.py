"""Checking one imported row (CSV) or one episode's pose array (NPZ), on its own.

The readers call these per row or per array so that a bad one can be named (file, line,
column or array, step, agent) and, with ``--skip-bad``, left out while the rest is imported.
They hold no reader state, so any reader (whole-file or streaming) can use them.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from arena_studio.core.errors import ArenaError
from arena_studio.core.value_limits import COORDINATE_LIMIT, HEADING_LIMIT, pose_problem

_STEP = re.compile(r"\d{1,9}")
_INDEX = re.compile(r"\d+")


class ImportFormatError(ArenaError, ValueError):
    """Bad input to an importer; the message names the file and the line/column or array."""


@dataclass(frozen=True)
class RowLayout:
    """Where a CSV file keeps each of our fields: ``col`` our name -> column index,
    ``names`` our name -> the file's column name (for messages)."""

    src: str
    col: Mapping[str, int]
    names: Mapping[str, str]
    agent_ids: tuple[str, ...]


@dataclass(frozen=True)
class ImportRow:
    """One checked data row."""

    line: int
    episode: str
    step: int
    agent: int
    pose: tuple[float, float, float]
    reward: float | None
    goal: str  # "" when the row names none
    role: str  # "" when the row names none


def parse_row(layout: RowLayout, line: int, row: list[str]) -> ImportRow:
    """Check one CSV row; :class:`ImportFormatError` names the line and the column."""

    def cell(name: str) -> str:
        i = layout.col[name]
        if i >= len(row):
            raise _bad(layout, line, name, "missing value")
        return row[i].strip()

    label = cell("episode")
    step_text = cell("step")
    if not _STEP.fullmatch(step_text):
        raise _bad(layout, line, "step", f"expected a step number >= 0, got {step_text!r}")
    agent_text = cell("agent")
    ids = layout.agent_ids
    if agent_text in ids:
        agent = ids.index(agent_text)
    elif _INDEX.fullmatch(agent_text) and int(agent_text) < len(ids):
        agent = int(agent_text)
    else:
        raise _bad(
            layout, line, "agent", f"unknown agent {agent_text!r} (scene agents: {', '.join(ids)})"
        )
    pose = (
        _number(layout, line, "x", cell("x"), COORDINATE_LIMIT, "m"),
        _number(layout, line, "y", cell("y"), COORDINATE_LIMIT, "m"),
        _number(layout, line, "heading", cell("heading"), HEADING_LIMIT, "rad"),
    )
    reward = None
    if "reward" in layout.col:
        reward = _number(layout, line, "reward", cell("reward"), math.inf, "")
    return ImportRow(
        line,
        label,
        int(step_text),
        agent,
        pose,
        reward,
        cell("goal") if "goal" in layout.col else "",
        cell("role") if "role" in layout.col else "",
    )


def _bad(layout: RowLayout, line: int, name: str, problem: str) -> ImportFormatError:
    return ImportFormatError(f"{layout.src}: line {line}, column '{layout.names[name]}': {problem}")


def _number(layout: RowLayout, line: int, name: str, text: str, limit: float, unit: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise _bad(layout, line, name, f"expected a number, got {text!r}") from None
    if not math.isfinite(value):
        raise _bad(layout, line, name, "expected a finite number")
    if abs(value) > limit:
        raise _bad(layout, line, name, f"expected a value within ±{limit:g} {unit}, got {value:g}")
    return value


def pose_array_problem(poses: np.ndarray) -> str | None:
    """What is wrong with an episode's (T, A, 3) poses (first step and agent), or None."""
    return pose_problem(poses)


__all__ = ["ImportFormatError", "ImportRow", "RowLayout", "parse_row", "pose_array_problem"]
