"""Quaternion heading, planar composition and resampling against scipy and numpy."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.spatial.transform import Rotation, Slerp

from arena_studio.core.robot.errors import RobotImportError
from arena_studio.core.robot.pose_math import (
    compose,
    interp_poses,
    parse_transform,
    quat_yaw,
    wrap,
)


def test_yaw_agrees_with_scipy_euler() -> None:
    rots = Rotation.random(500, random_state=7)
    q = rots.as_quat()  # scipy: (x, y, z, w)
    # scipy.spatial.transform.Rotation.as_euler: "ZYX" intrinsic = yaw, pitch, roll
    want = rots.as_euler("ZYX")[:, 0]
    got = quat_yaw(q[:, 0], q[:, 1], q[:, 2], q[:, 3])
    assert np.allclose(np.cos(got - want), 1.0, atol=1e-9)


def test_yaw_of_an_unnormalised_quaternion_and_of_zero() -> None:
    q = 3.0 * Rotation.from_euler("z", 1.2).as_quat()
    assert quat_yaw(*q) == pytest.approx(1.2)
    assert math.isnan(float(quat_yaw(0, 0, 0, 0)))


def test_resampling_of_positions_agrees_with_numpy_interp() -> None:
    rng = np.random.default_rng(3)
    t = np.sort(rng.uniform(0, 10, 40))
    p = np.column_stack([rng.normal(size=40), rng.normal(size=40), np.zeros(40)])
    grid = np.linspace(-1, 11, 97)
    got = interp_poses(t, p, grid)
    # numpy.interp (holds the end values outside the samples)
    assert np.array_equal(got[:, 0], np.interp(grid, t, p[:, 0]))
    assert np.array_equal(got[:, 1], np.interp(grid, t, p[:, 1]))


def test_headings_are_interpolated_on_the_circle_like_slerp() -> None:
    t = np.array([0.0, 1.0, 2.0, 3.0])
    yaw = np.array([3.0, -3.0, 2.9, -0.5])  # crosses +-pi, then turns back the short way
    grid = np.linspace(0, 3, 31)
    got = interp_poses(t, np.column_stack([t, t, yaw]), grid)[:, 2]
    # scipy Slerp between yaw-only rotations follows the shorter arc, as a robot turns
    want = Slerp(t, Rotation.from_euler("z", yaw[:, None]))(grid).as_euler("ZYX")[:, 0]
    assert np.allclose(np.cos(got - want), 1.0, atol=1e-9)
    assert np.all((got > -math.pi) & (got <= math.pi))


def test_compose_agrees_with_homogeneous_matrices() -> None:
    rng = np.random.default_rng(1)
    a, b = rng.uniform(-3, 3, (20, 3)), rng.uniform(-3, 3, (20, 3))

    def mat(p):  # 2-D rigid transform as a 3 x 3 matrix (textbook homogeneous form)
        c, s = math.cos(p[2]), math.sin(p[2])
        return np.array([[c, -s, p[0]], [s, c, p[1]], [0, 0, 1]])

    got = compose(a, b)
    for i in range(20):
        m = mat(a[i]) @ mat(b[i])
        assert np.allclose(got[i, :2], m[:2, 2])
        assert math.isclose(math.cos(got[i, 2] - math.atan2(m[1, 0], m[0, 0])), 1.0)


def test_wrap_and_transform_text() -> None:
    assert wrap(np.array([math.pi, -math.pi, 3 * math.pi]))[0] == pytest.approx(math.pi)
    assert parse_transform("1, -2.5, 0.3") == (1.0, -2.5, 0.3)
    assert parse_transform(None) == (0.0, 0.0, 0.0)
    for bad in ("1,2", "a,b,c", "1,2,nan"):
        with pytest.raises(RobotImportError, match="--transform"):
            parse_transform(bad)
