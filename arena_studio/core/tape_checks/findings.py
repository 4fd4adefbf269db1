"""Findings about a recording: the scene checker's format plus the episode, step and agent.

Codes are stable (README.md lists them); tools match codes, never messages.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from arena_studio.core.checks.checker import Finding, Severity

#: code -> (severity, what it means)
TAPE_CODES: dict[str, tuple[Severity, str]] = {
    "pose-outside-rooms": ("error", "an agent's centre is outside every room (inside a wall)"),
    "pose-in-obstacle": ("error", "an agent's centre is inside an obstacle"),
    "wall-crossing": ("error", "an agent passed through a wall or obstacle between two steps"),
    "over-speed": ("warning", "an agent moved faster than its top speed"),
    "over-turn-rate": ("warning", "an agent turned faster than its top turn rate"),
    "jump": ("error", "an agent jumped between two steps (far beyond its top speed)"),
    "start-mismatch": ("warning", "an episode starts away from the agent's start pose or region"),
    "goal-vector-length": ("error", "a recorded goal's length differs from the landmark count"),
    "scene-differs": ("error", "the tape's scene hash differs from the given scene file"),
    "scene-hash-broken": ("warning", "the embedded scene no longer matches its recorded hash"),
    "units-mismatch": ("error", "poses fit the scene only after scaling (cm or mm recorded)"),
    "axes-mismatch": ("error", "poses fit the scene only after flipping y or swapping x and y"),
    "episode-unreadable": ("error", "an episode cannot be decoded (damaged or malformed)"),
    "more-findings": ("info", "more findings of one code than are listed"),
}


@dataclass(frozen=True)
class TapeFinding(Finding):
    """A finding at a place in a recording; ``step`` and ``agent`` may be None."""

    episode: int | None = None
    step: int | None = None
    agent: str | None = None

    def to_dict(self) -> dict[str, Any]:
        out = super().to_dict()
        out["where"].update(episode=self.episode, step=self.step, agent=self.agent)
        return out


def tape_finding(
    code: str,
    message: str,
    *,
    episode: int | None = None,
    step: int | None = None,
    agent: str | None = None,
    point: tuple[float, float] | None = None,
    object_id: str | None = None,
) -> TapeFinding:
    """A finding with the code's usual severity; ``object_id`` defaults to the agent."""
    pt = None if point is None else (float(point[0]), float(point[1]))
    return TapeFinding(
        TAPE_CODES[code][0], code, message, object_id or agent, pt, None, episode, step, agent
    )


def place(episode: int, step: int | None = None, agent: str | None = None) -> str:
    """``episode 3 step 17 agent r1``: how messages name a place in a tape."""
    parts = [f"episode {episode}"]
    if step is not None:
        parts.append(f"step {step}")
    if agent is not None:
        parts.append(f"agent {agent}")
    return " ".join(parts)


def runs(mask: Any) -> list[tuple[int, int]]:
    """``(first, length)`` of each run of True values in a 1-D boolean array."""
    import numpy as np

    m = np.asarray(mask, dtype=bool)
    if not m.any():
        return []
    edges = np.diff(np.concatenate([[False], m, [False]]).astype(np.int8))
    starts = np.flatnonzero(edges == 1)
    ends = np.flatnonzero(edges == -1)
    return [(int(s), int(e - s)) for s, e in zip(starts, ends, strict=True)]


__all__ = ["TAPE_CODES", "TapeFinding", "place", "runs", "tape_finding"]
