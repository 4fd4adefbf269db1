"""Qt-free core: what a simulator, a training script or a cluster job imports.

Only numpy, shapely, scipy and msgpack are needed, so this package imports without a display
or a Qt installation. The names below are the supported API; they load lazily, so importing
``arena_studio.core`` costs almost nothing until a name is used::

    from arena_studio.core import load_scene, check_scene, enumerate_goals, plan_goal
    from arena_studio.core import observe, coverage, goal_reached
    from arena_studio.core import TapeWriter, open_tape, episode_metrics

Inside, one sub-package per domain (see docs/architecture.md): ``scene`` (model, parsing,
files, upgrades), ``checks``, ``geometry`` (free space, visibility graph, shortest paths),
``planning`` (goal sets, assignment, par time), ``tape`` (format, reader, writer, importers),
``analysis`` (events, roles, metrics, diagnosis), ``sim`` (observation, kinematics, scripted
rollout) and ``export``.
"""

from __future__ import annotations

from arena_studio.core._lazy import attach

_HOMES = {
    # scene
    "Scene": "arena_studio.core.scene.model",
    "Room": "arena_studio.core.scene.model",
    "Obstacle": "arena_studio.core.scene.model",
    "Circle": "arena_studio.core.scene.model",
    "Landmark": "arena_studio.core.scene.model",
    "Agent": "arena_studio.core.scene.model",
    "Start": "arena_studio.core.scene.model",
    "GoalSpec": "arena_studio.core.scene.model",
    "load_scene": "arena_studio.core.scene.model",
    "save_scene": "arena_studio.core.scene.model",
    "parse_scene": "arena_studio.core.scene.parse",
    # checks
    "check_scene": "arena_studio.core.checks.checker",
    "Finding": "arena_studio.core.checks.checker",
    # planning
    "enumerate_goals": "arena_studio.core.planning.goal_set",
    "GoalTable": "arena_studio.core.planning.goal_set",
    "plan_goal": "arena_studio.core.planning.partime",
    "plan_all": "arena_studio.core.planning.partime",
    "GoalPlan": "arena_studio.core.planning.partime",
    # observation and success tests
    "observe": "arena_studio.core.sim.observe",
    "coverage": "arena_studio.core.sim.observe",
    "goal_reached": "arena_studio.core.sim.observe",
    "wrap_angle": "arena_studio.core.sim.observe",
    "hold_steps": "arena_studio.core.sim.observe",
    # tapes
    "TapeWriter": "arena_studio.core.tape",
    "open_tape": "arena_studio.core.tape",
    "Tape": "arena_studio.core.tape",
    "TapeError": "arena_studio.core.tape",
    "Episode": "arena_studio.core.tape.episode",
    # metrics
    "EpisodeMetrics": "arena_studio.core.analysis.metrics",
    "episode_metrics": "arena_studio.core.analysis.metrics",
    "summarize_metrics": "arena_studio.core.analysis.metrics",
    # errors
    "ArenaError": "arena_studio.core.errors",
    "SceneFormatError": "arena_studio.core.errors",
}

__getattr__, __dir__, __all__ = attach(__name__, _HOMES)
