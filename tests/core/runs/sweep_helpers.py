"""Hand-built sweeps: tapes whose success rate is chosen by the test."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from arena_studio.core.tape import TapeWriter
from tests.core.tape_helpers import box_scene

EPISODES = 4


def write_scored_tape(
    path: Path,
    successes: int,
    episodes: int = EPISODES,
    metadata: dict[str, Any] | None = None,
    scene_name: str = "box",
) -> Path:
    """``successes`` of ``episodes`` episodes reach landmark A (team goal A); the rest idle."""
    scene = box_scene()
    if scene_name != "box":
        d = scene.to_dict()
        d["name"] = scene_name
        scene = type(scene).from_dict(d)
    path.parent.mkdir(parents=True, exist_ok=True)
    with TapeWriter(path, scene, dt=0.5, metadata=metadata or {}) as w:
        for e in range(episodes):
            w.begin_episode(team_goal=[1, 0, 0], pursued_goals=[[1, 0, 0], [1, 0, 0]])
            poses = np.zeros((6, 2, 3))
            poses[:, 0, :2] = (2.0, 8.0) if e < successes else (5.0, 5.0)
            poses[:, 1, :2] = (8.0, 2.0)
            w.steps(poses)
            w.end_episode({})
    return path


def write_sweep(root: Path, scores: dict[tuple[str, int, int], int], **kw: Any) -> list[Path]:
    """One tape per (condition, seed, step) -> successes, placed by header metadata."""
    out = []
    for (condition, seed, step), wins in scores.items():
        meta = {"condition": condition, "seed": seed, "step": step}
        out.append(
            write_scored_tape(
                root / condition / f"seed{seed}" / f"step{step}.tape", wins, metadata=meta, **kw
            )
        )
    return out
