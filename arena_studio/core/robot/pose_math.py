"""Planar pose arithmetic for recorded runs: quaternion heading, rigid transforms, resampling.

Robots here move on a floor, so a 3-D pose is reduced to (x, y, yaw): yaw is the rotation
about z of the quaternion (the "zyx" Euler convention, heading first). Headings are
resampled on the circle: unwrapped, interpolated linearly, wrapped back to (-pi, pi].
"""

from __future__ import annotations

import math

import numpy as np

from arena_studio.core.robot.errors import RobotImportError


def quat_yaw(
    x: np.ndarray | float, y: np.ndarray | float, z: np.ndarray | float, w: np.ndarray | float
) -> np.ndarray:
    """Yaw (rad) of unit quaternions (x, y, z, w); a zero quaternion gives NaN."""
    qx, qy, qz, qw = (np.asarray(v, dtype=np.float64) for v in (x, y, z, w))
    norm = qx * qx + qy * qy + qz * qz + qw * qw
    with np.errstate(invalid="ignore", divide="ignore"):
        yaw = np.arctan2(2.0 * (qw * qz + qx * qy), norm - 2.0 * (qy * qy + qz * qz))
    return np.where(norm > 0, yaw, np.nan)


def wrap(angle: np.ndarray) -> np.ndarray:
    """Angles to (-pi, pi]."""
    out = np.mod(np.asarray(angle, dtype=np.float64) + math.pi, 2 * math.pi) - math.pi
    return np.where(out == -math.pi, math.pi, out)


def compose(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Pose ``b`` given in frame ``a``, expressed in ``a``'s parent: (..., 3) x, y, yaw."""
    a, b = np.asarray(a, dtype=np.float64), np.asarray(b, dtype=np.float64)
    c, s = np.cos(a[..., 2]), np.sin(a[..., 2])
    x = a[..., 0] + c * b[..., 0] - s * b[..., 1]
    y = a[..., 1] + s * b[..., 0] + c * b[..., 1]
    return np.stack([x, y, wrap(a[..., 2] + b[..., 2])], axis=-1)


def parse_transform(text: str | None) -> tuple[float, float, float]:
    """``"x,y,yaw"`` (metres, radians) -> a pose; None -> identity."""
    if not text:
        return (0.0, 0.0, 0.0)
    parts = text.split(",")
    try:
        values = [float(p) for p in parts]
    except ValueError:
        values = []
    if len(values) != 3 or not all(math.isfinite(v) for v in values):
        raise RobotImportError(f"--transform: expected X,Y,YAW (three numbers), got {text!r}")
    return (values[0], values[1], values[2])


def interp_poses(times: np.ndarray, poses: np.ndarray, grid: np.ndarray) -> np.ndarray:
    """Poses (N, 3) at sorted ``times`` sampled at ``grid``: x, y linear, heading on the circle.

    Before the first and after the last sample the pose is held (as ``numpy.interp`` does).
    """
    t = np.asarray(times, dtype=np.float64)
    p = np.asarray(poses, dtype=np.float64)
    out = np.empty((len(grid), 3))
    out[:, 0] = np.interp(grid, t, p[:, 0])
    out[:, 1] = np.interp(grid, t, p[:, 1])
    out[:, 2] = wrap(np.interp(grid, t, np.unwrap(p[:, 2])))
    return out


def sorted_unique(times: np.ndarray, poses: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sort samples by time; of samples sharing a time the last one recorded wins."""
    order = np.argsort(times, kind="stable")
    t, p = times[order], poses[order]
    keep = np.ones(len(t), dtype=bool)
    keep[:-1] = t[1:] != t[:-1]
    return t[keep], p[keep]


__all__ = ["compose", "interp_poses", "parse_transform", "quat_yaw", "sorted_unique", "wrap"]
