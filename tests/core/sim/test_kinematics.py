"""Unicycle kinematics against the closed-form arc and a general ODE solver."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from arena_studio.core.sim.kinematics import arc_pose, clip_controls, unicycle_step


def _integrate(pose: np.ndarray, v: float, w: float, dt: float, steps: int) -> np.ndarray:
    p = np.asarray(pose, dtype=np.float64)
    for _ in range(steps):
        p = unicycle_step(p, v, w, dt)
    return p


def test_quarter_turn_check_values() -> None:
    # (Thrun, Burgard & Fox eq. 5.9 [memory], values [computed]):
    # v = 1, w = pi/2 from the origin facing +x: t = 1 -> (0.636620, 0.636620), t = 4 -> origin
    p1 = _integrate(np.zeros(3), 1.0, math.pi / 2, 0.1, 10)
    assert p1[0] == pytest.approx(0.636620, abs=1e-6)
    assert p1[1] == pytest.approx(0.636620, abs=1e-6)
    p4 = _integrate(np.zeros(3), 1.0, math.pi / 2, 0.1, 40)
    assert np.hypot(p4[0], p4[1]) < 1e-9


@pytest.mark.parametrize("v,w,th0", [(0.8, 1.3, 0.4), (1.5, -0.7, -2.0), (0.3, 2.0, 3.0)])
def test_matches_solve_ivp(v: float, w: float, th0: float) -> None:
    # Reference: scipy.integrate.solve_ivp on x' = v cos th, y' = v sin th, th' = w
    def rhs(_t: float, s: np.ndarray) -> list[float]:
        return [v * math.cos(s[2]), v * math.sin(s[2]), w]

    ref = solve_ivp(rhs, (0.0, 3.0), [1.0, -2.0, th0], rtol=1e-11, atol=1e-12).y[:, -1]
    ours = _integrate(np.array([1.0, -2.0, th0]), v, w, 0.1, 30)
    assert ours[:2] == pytest.approx(ref[:2], abs=1e-7)
    # headings compared on the circle (ours are wrapped into (-pi, pi])
    assert math.cos(ours[2] - ref[2]) == pytest.approx(1.0, abs=1e-12)
    # and the textbook closed form of eq. 5.9 itself
    assert ours[:2] == pytest.approx(arc_pose((1.0, -2.0, th0), v, w, 3.0)[:2], abs=1e-9)


def test_arc_radius_is_v_over_w() -> None:
    # Thrun et al. eq. 5.9 [memory]: the centre is at (x - r sin th, y + r cos th), r = v / w
    v, w = 0.9, 0.6
    r = v / w
    centre = np.array([0.0 - r * math.sin(0.0), 0.0 + r * math.cos(0.0)])
    p = np.zeros(3)
    for _ in range(50):
        p = unicycle_step(p, v, w, 0.05)
        assert np.hypot(*(p[:2] - centre)) == pytest.approx(r, abs=1e-12)


def test_straight_motion_is_exact() -> None:
    # common practice, no source: w = 0 is a straight line, x advances by v t exactly
    p = _integrate(np.array([0.0, 0.0, 0.0]), 0.5, 0.0, 0.25, 8)
    assert p[0] == 1.0 and p[1] == 0.0 and p[2] == 0.0
    tiny = unicycle_step(np.zeros(3), 1.0, 1e-9, 1.0)
    assert tiny[0] == pytest.approx(1.0, abs=1e-12)


def test_vectorised_over_agents_and_clipped() -> None:
    poses = np.zeros((4, 3))
    v, w = clip_controls(np.array([-1, 0.5, 2, 1]), np.array([5, -5, 0, 1]), 1.0, 2.0)
    assert v.tolist() == [0.0, 0.5, 1.0, 1.0]
    assert w.tolist() == [2.0, -2.0, 0.0, 1.0]
    out = unicycle_step(poses, v, w, 0.1)
    for i in range(4):
        assert out[i] == pytest.approx(arc_pose((0, 0, 0), v[i], w[i], 0.1), abs=1e-12)
