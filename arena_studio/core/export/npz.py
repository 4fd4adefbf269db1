"""npz export: plain numpy arrays a simulator can load without this package.

``numpy.load(path)`` works with the default ``allow_pickle=False``: strings are stored as
fixed-width unicode arrays. Array names and meanings are listed in :data:`ARRAYS` (and in
the README). Par times come from :func:`partime.plan_all` (NaN for infeasible goals).
"""

from __future__ import annotations

import io
from collections.abc import Callable
from pathlib import Path

import numpy as np

from arena_studio.core.export.meta import provenance, write_export_bytes
from arena_studio.core.geometry.regions import wall_segments
from arena_studio.core.planning.goal_set import enumerate_goals
from arena_studio.core.planning.partime import plan_all
from arena_studio.core.scene.model import Scene

#: name -> meaning; every array the export writes.
ARRAYS: dict[str, str] = {
    "wall_segments": "(N, 2, 2) float64: every wall of the open area (rooms and obstacle "
    "outlines) as segments [[x0, y0], [x1, y1]] in metres",
    "landmark_ids": "(L,) str: landmark ids in scene order (goal columns follow it)",
    "landmark_positions": "(L, 2) float64: landmark x, y",
    "landmark_reach": "(L,) float64: reach radius (m); reached when an agent centre is within",
    "landmark_wall_mounted": "(L,) bool: True for wall-mounted landmarks",
    "agent_ids": "(A,) str: agent ids in scene order",
    "agent_radius": "(A,) float64: agent disc radius (m)",
    "agent_max_speed": "(A,) float64: top speed (m/s)",
    "agent_max_turn_rate": "(A,) float64: top turn rate (rad/s)",
    "start_poses": "(A, 3) float64: start x, y, heading; NaN x, y for a start region, NaN "
    "heading when it is drawn at random",
    "start_regions": "(A, M, 2) float64: start region vertices, NaN-padded (all NaN for a "
    "fixed pose)",
    "goal_matrix": "(G, L) uint8: one multi-hot goal per row, in enumeration order",
    "goal_weights": "(G,) float64: sampling weight of each goal (sums to 1)",
    "goal_par_times": "(G,) float64: par time (s) under the scene's rule; NaN if infeasible",
    "success_rule": "() str: all_at_end, all_at_once or all_visited",
    "hold_time": "() float64: seconds the rule's condition must hold",
    "content_hash": "() str: SHA-256 content hash of the scene",
    "caution": "() str: simulation aid, not a safety assessment",
}


def scene_arrays(
    scene: Scene, advance: Callable[[int], None] | None = None
) -> dict[str, np.ndarray]:
    """Every array of :data:`ARRAYS` for ``scene``; ``advance(1)`` after each goal planned."""
    table = enumerate_goals(scene)
    plans = plan_all(scene, table, advance=advance)
    lms, agents = scene.landmarks, scene.agents
    poses = np.full((len(agents), 3), np.nan)
    longest = max((len(a.start.region or ()) for a in agents), default=0)
    regions = np.full((len(agents), longest, 2), np.nan)
    for i, agent in enumerate(agents):
        if agent.start.pose is not None:
            poses[i] = agent.start.pose
        else:
            region = agent.start.region or ()
            regions[i, : len(region)] = region
            if agent.start.heading is not None:
                poses[i, 2] = agent.start.heading
    par = np.array(
        [p.par_time if p.feasible and p.par_time is not None else np.nan for p in plans],
        dtype=np.float64,
    )
    meta = provenance(scene, "npz")
    return {
        "wall_segments": wall_segments(scene).astype(np.float64),
        "landmark_ids": np.array([lm.id for lm in lms], dtype=np.str_),
        "landmark_positions": np.array([lm.position for lm in lms], dtype=np.float64).reshape(
            -1, 2
        ),
        "landmark_reach": np.array([lm.reach_radius for lm in lms], dtype=np.float64),
        "landmark_wall_mounted": np.array([lm.mount == "wall" for lm in lms], dtype=bool),
        "agent_ids": np.array([a.id for a in agents], dtype=np.str_),
        "agent_radius": np.array([a.radius for a in agents], dtype=np.float64),
        "agent_max_speed": np.array([a.max_speed for a in agents], dtype=np.float64),
        "agent_max_turn_rate": np.array([a.max_turn_rate for a in agents], dtype=np.float64),
        "start_poses": poses,
        "start_regions": regions,
        "goal_matrix": table.vectors.astype(np.uint8),
        "goal_weights": table.weights.astype(np.float64),
        "goal_par_times": par,
        "success_rule": np.array(scene.goals.rule, dtype=np.str_),
        "hold_time": np.array(scene.goals.hold_time, dtype=np.float64),
        "content_hash": np.array(meta["content_hash"], dtype=np.str_),
        "caution": np.array(meta["caution"], dtype=np.str_),
    }


def write_npz(scene: Scene, path: Path, advance: Callable[[int], None] | None = None) -> list[Path]:
    buffer = io.BytesIO()
    np.savez_compressed(buffer, **scene_arrays(scene, advance))  # type: ignore[arg-type]
    write_export_bytes(path, buffer.getvalue())
    return [path]


__all__ = ["ARRAYS", "scene_arrays", "write_npz"]
