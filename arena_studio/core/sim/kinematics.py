"""Unicycle kinematics with bounded speed and turn rate, integrated exactly over one step.

For constant forward speed ``v`` and turn rate ``w`` over a step ``dt`` the unicycle moves on
a circular arc of radius ``v / w`` (straight when ``w`` is 0), so the closed form is exact and
no integration error accumulates (Thrun, Burgard & Fox, Probabilistic Robotics, eq. 5.9)::

    x' = x + (v / w) (sin(th + w dt) - sin th)
    y' = y - (v / w) (cos(th + w dt) - cos th)
    th' = th + w dt

Near ``w = 0`` the ratio is evaluated with a series so small turn rates stay accurate.
Everything is vectorised over agents (any leading axes).
"""

from __future__ import annotations

import numpy as np

from arena_studio.core.sim.observe import wrap_angle

#: below this |w * dt| the arc uses its Taylor series instead of the (v / w) ratio
SMALL_TURN = 1e-6


def clip_controls(
    v: np.ndarray, w: np.ndarray, max_speed: np.ndarray, max_turn_rate: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Bound speed to [0, max_speed] (no reversing) and turn rate to +-max_turn_rate."""
    v = np.clip(np.asarray(v, dtype=np.float64), 0.0, max_speed)
    w = np.clip(np.asarray(w, dtype=np.float64), -max_turn_rate, max_turn_rate)
    return v, w


def unicycle_step(poses: np.ndarray, v: np.ndarray, w: np.ndarray, dt: float) -> np.ndarray:
    """Poses (..., 3) after holding speed ``v`` and turn rate ``w`` for ``dt`` seconds.

    Headings of the result are wrapped into (-pi, pi].
    """
    p = np.asarray(poses, dtype=np.float64)
    x, y, th = p[..., 0], p[..., 1], p[..., 2]
    v = np.asarray(v, dtype=np.float64)
    w = np.asarray(w, dtype=np.float64)
    dth = w * dt
    # sin(th + dth) - sin(th) = 2 cos(th + dth/2) sin(dth/2); divided by w this is
    # dt * cos(th + dth/2) * sinc(dth/2), which is smooth at w = 0 (numerically stable form).
    half = 0.5 * dth
    small = np.abs(half) < SMALL_TURN
    safe = np.where(small, 1.0, half)
    ratio = np.where(small, 1.0 - half * half / 6.0, np.sin(safe) / safe)  # sin(h)/h
    chord = v * dt * ratio
    mid = th + half
    out = np.empty((*np.broadcast(x, v, w).shape, 3), dtype=np.float64)
    out[..., 0] = x + chord * np.cos(mid)
    out[..., 1] = y + chord * np.sin(mid)
    out[..., 2] = wrap_angle(th + dth)
    return out


def arc_pose(pose: tuple[float, float, float], v: float, w: float, t: float) -> np.ndarray:
    """Closed-form pose after time ``t`` at constant (v, w): the textbook form, for checks."""
    x, y, th = pose
    if abs(w) < 1e-12:
        return np.array([x + v * t * np.cos(th), y + v * t * np.sin(th), th])
    r = v / w
    return np.array(
        [
            x + r * (np.sin(th + w * t) - np.sin(th)),
            y - r * (np.cos(th + w * t) - np.cos(th)),
            float(wrap_angle(th + w * t)),
        ]
    )


__all__ = ["arc_pose", "clip_controls", "unicycle_step"]
