"""Speed, turn rate and jumps between consecutive steps, against each agent's limits.

Speed is the straight-line distance between two recorded centres over ``dt`` (a lower bound
on the true speed); turn rate is the wrapped heading change over ``dt``. A small tolerance
absorbs integration and float rounding in simulators; a step far beyond the top speed is a
jump (a teleport, a reset inside an episode, a mixed-up agent), reported as such and not
also as over-speed.
"""

from __future__ import annotations

import numpy as np

from arena_studio.core.scene import Scene
from arena_studio.core.tape.episode import Episode
from arena_studio.core.tape_checks.findings import TapeFinding, place, runs, tape_finding

#: relative slack above the top speed and turn rate before a step is reported
LIMIT_TOLERANCE = 0.05
#: a step longer than this many times the top-speed distance of one step is a jump...
JUMP_FACTOR = 5.0
#: ...when it is also longer than the agent's radius (tiny dt must not make jitter a jump)
JUMP_MIN_RADII = 1.0


def wrap_angle(a: np.ndarray) -> np.ndarray:
    """Angles wrapped to [-pi, pi)."""
    return (a + np.pi) % (2 * np.pi) - np.pi


def check_motion(scene: Scene, ep: Episode) -> list[TapeFinding]:
    """Over-speed, over-turn-rate and jump findings of one episode (one per run of steps)."""
    if ep.steps < 2:
        return []
    found: list[TapeFinding] = []
    step = np.diff(ep.poses[:, :, :2], axis=0)
    dist = np.hypot(step[..., 0], step[..., 1])  # (T-1, A)
    turn = np.abs(wrap_angle(np.diff(ep.poses[:, :, 2], axis=0)))
    for a, agent in enumerate(scene.agents):
        top = agent.max_speed * ep.dt
        jump = (dist[:, a] > JUMP_FACTOR * top) & (dist[:, a] > JUMP_MIN_RADII * agent.radius)
        fast = (dist[:, a] > top * (1 + LIMIT_TOLERANCE) + 1e-9) & ~jump
        spin = turn[:, a] > agent.max_turn_rate * ep.dt * (1 + LIMIT_TOLERANCE) + 1e-9
        for first, n in runs(jump):
            t = first + 1  # the step arrived at
            found.append(
                tape_finding(
                    "jump",
                    f"{place(ep.index, t, agent.id)}: moved {dist[first, a]:.2f} m in one step "
                    f"({dist[first, a] / ep.dt:.1f} m/s, top speed {agent.max_speed:g} m/s)"
                    + (f", {n} such steps in a row" if n > 1 else ""),
                    episode=ep.index,
                    step=t,
                    agent=agent.id,
                    point=tuple(ep.poses[t, a, :2]),
                )
            )
        for first, n in runs(fast):
            worst = first + int(np.argmax(dist[first : first + n, a]))
            found.append(
                tape_finding(
                    "over-speed",
                    f"{place(ep.index, first + 1, agent.id)}: {dist[worst, a] / ep.dt:.2f} m/s "
                    f"(top speed {agent.max_speed:g} m/s) for {n} step(s)",
                    episode=ep.index,
                    step=first + 1,
                    agent=agent.id,
                    point=tuple(ep.poses[first + 1, a, :2]),
                )
            )
        for first, n in runs(spin):
            worst = first + int(np.argmax(turn[first : first + n, a]))
            found.append(
                tape_finding(
                    "over-turn-rate",
                    f"{place(ep.index, first + 1, agent.id)}: turned at "
                    f"{turn[worst, a] / ep.dt:.2f} rad/s (top {agent.max_turn_rate:g} rad/s) "
                    f"for {n} step(s)",
                    episode=ep.index,
                    step=first + 1,
                    agent=agent.id,
                    point=tuple(ep.poses[first + 1, a, :2]),
                )
            )
    return found


__all__ = ["JUMP_FACTOR", "LIMIT_TOLERANCE", "check_motion", "wrap_angle"]
