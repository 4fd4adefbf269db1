"""Pure-pursuit style following of a collision-free polyline, for scripted preview agents.

The planner's shortest paths bend at corners of free space, so a carrot that runs ahead past a
corner would cut it and clip the obstacle. Here the carrot (the pursued point) slides along the
current segment at ``lookahead`` ahead of the agent but never past the segment's end vertex;
the agent switches to the next segment once it is within ``vertex_tolerance`` of the vertex.
Steering is the pure-pursuit curvature ``2 sin(alpha) / d`` towards the carrot (Coulter,
"Implementation of the Pure Pursuit Path Tracking Algorithm", CMU-RI-TR-92-01 [memory]); when
the carrot lies more than ``turn_in_place`` radians off the heading the agent stops and turns
first. Speed never overshoots a vertex within one step, and the agent stops for good at the
route's end or once it is deep inside the target's reach disc.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class FollowerLimits:
    max_speed: float  # m/s
    max_turn_rate: float  # rad/s
    lookahead: float = 0.4  # m
    turn_in_place: float = 0.5  # rad
    vertex_tolerance: float = 0.04  # m
    end_tolerance: float = 0.03  # m


def _wrap(a: float) -> float:
    return math.pi - ((math.pi - a) % (2 * math.pi))


class PathFollower:
    """Steers one agent along ``route`` (N, 2); :meth:`command` gives (v, w) for one step.

    ``stop_at`` (x, y, radius) ends the route early once the agent is within ``radius`` of the
    point (the target landmark, with a margin inside its reach disc).
    """

    def __init__(
        self,
        route: np.ndarray,
        limits: FollowerLimits,
        stop_at: tuple[float, float, float] | None = None,
    ) -> None:
        pts = np.asarray(route, dtype=np.float64).reshape(-1, 2)
        if len(pts) == 0:
            raise ValueError("a route needs at least one point")
        if len(pts) == 1:
            pts = np.vstack([pts, pts])
        self.route = pts
        self.limits = limits
        self.stop_at = stop_at
        self.target = 1  # index of the vertex the agent is heading for
        self.finished = False

    def _arrived(self, x: float, y: float) -> bool:
        end = self.route[-1]
        if self.target >= len(self.route) - 1 and math.hypot(x - end[0], y - end[1]) <= (
            self.limits.end_tolerance
        ):
            return True
        if self.stop_at is not None:
            sx, sy, sr = self.stop_at
            last_leg = self.target >= len(self.route) - 1
            return last_leg and math.hypot(x - sx, y - sy) <= sr
        return False

    def _advance(self, x: float, y: float) -> None:
        pts, lim = self.route, self.limits
        while self.target < len(pts) - 1:
            a, b = pts[self.target - 1], pts[self.target]
            seg = b - a
            seg2 = float(seg @ seg)
            near = math.hypot(x - b[0], y - b[1]) <= lim.vertex_tolerance
            past = seg2 > 0 and float((np.array([x, y]) - a) @ seg) >= seg2
            if near or past or seg2 == 0.0:
                self.target += 1
            else:
                break

    def carrot(self, x: float, y: float) -> tuple[float, float, bool]:
        """The pursued point on the current segment, and whether it is the segment's end."""
        a, b = self.route[self.target - 1], self.route[self.target]
        seg = b - a
        length = math.hypot(seg[0], seg[1])
        if length == 0.0:
            return float(b[0]), float(b[1]), True
        u = seg / length
        along = float((np.array([x, y]) - a) @ u)
        s = max(along, 0.0) + self.limits.lookahead
        if s >= length:
            return float(b[0]), float(b[1]), True
        return float(a[0] + u[0] * s), float(a[1] + u[1] * s), False

    def command(self, pose: np.ndarray, dt: float) -> tuple[float, float]:
        """Speed (m/s) and turn rate (rad/s) to hold for the next ``dt`` seconds."""
        if self.finished:
            return 0.0, 0.0
        x, y, th = float(pose[0]), float(pose[1]), float(pose[2])
        self._advance(x, y)
        if self._arrived(x, y):
            self.finished = True
            return 0.0, 0.0
        cx, cy, at_vertex = self.carrot(x, y)
        d = math.hypot(cx - x, cy - y)
        lim = self.limits
        if d < 1e-9:
            self.target = min(self.target + 1, len(self.route) - 1)
            return 0.0, 0.0
        alpha = _wrap(math.atan2(cy - y, cx - x) - th)
        if abs(alpha) > lim.turn_in_place:
            return 0.0, max(-lim.max_turn_rate, min(lim.max_turn_rate, alpha / dt))
        kappa = 2.0 * math.sin(alpha) / d
        v = lim.max_speed * math.cos(alpha)
        if at_vertex:
            v = min(v, d / dt)
        if abs(kappa) * v > lim.max_turn_rate:
            v = lim.max_turn_rate / abs(kappa)
        return v, kappa * v

    def turn_towards_carrot(self, pose: np.ndarray, dt: float) -> tuple[float, float]:
        """Turn in place towards the carrot (used when a move would leave free space)."""
        x, y, th = float(pose[0]), float(pose[1]), float(pose[2])
        cx, cy, _ = self.carrot(x, y)
        alpha = _wrap(math.atan2(cy - y, cx - x) - th)
        lim = self.limits.max_turn_rate
        return 0.0, max(-lim, min(lim, alpha / dt))


class LegFollower:
    """Several routes driven one after another, with a wait (in steps) after each but the last.

    Used by the rollout's ``greedy`` mode, where an agent drives to the nearest target, waits
    there for its patience, then moves on. ``label`` says what the agent is doing now (a role
    label for the tape); ``waiting`` is True while it stands still on purpose, so the stuck
    detector leaves it alone.
    """

    def __init__(self, legs: list[tuple[PathFollower, str, int]]) -> None:
        if not legs:
            raise ValueError("a leg follower needs at least one leg")
        self.legs = legs  # (follower, target name, steps to wait after arriving)
        self.leg = 0
        self.waited = 0

    @property
    def _current(self) -> PathFollower:
        return self.legs[self.leg][0]

    @property
    def finished(self) -> bool:
        return self.leg == len(self.legs) - 1 and self._current.finished

    @property
    def waiting(self) -> bool:
        return self._current.finished and not self.finished

    @property
    def label(self) -> str:
        name = self.legs[self.leg][1]
        if self.finished:
            return f"holds {name}"
        return f"waits at {name}" if self._current.finished else f"heads to {name}"

    def command(self, pose: np.ndarray, dt: float) -> tuple[float, float]:
        while True:
            follower, _, wait = self.legs[self.leg]
            if not follower.finished:
                v, w = follower.command(pose, dt)
                if not follower.finished:
                    return v, w
            if self.leg == len(self.legs) - 1:
                return 0.0, 0.0
            if self.waited < wait:
                self.waited += 1
                return 0.0, 0.0
            self.leg += 1
            self.waited = 0

    def turn_towards_carrot(self, pose: np.ndarray, dt: float) -> tuple[float, float]:
        return self._current.turn_towards_carrot(pose, dt)


__all__ = ["FollowerLimits", "LegFollower", "PathFollower"]
