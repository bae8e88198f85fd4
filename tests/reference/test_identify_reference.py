"""Base parameters of the two-link planar arm against closed-form results.

Sources:
- Grouping rules for revolute joints with parallel axes: W. Khalil and E. Dombre,
  Modeling, Identification and Control of Robots (2002), chapter on the base inertial
  parameters; and M. Gautier and W. Khalil, Direct calculation of minimum set of
  inertial parameters of serial robots, IEEE Trans. Robotics and Automation 6(3), 1990
  (from memory). For two parallel z axes a distance l1 apart along x of frame 1, with
  inertias about the frame origins: ZZ1R = ZZ1 + Ia1 + l1^2 M2, MX1R = MX1 + l1 M2,
  and MY1, ZZ2, MX2, MY2, Ia2 unchanged; the rest of body 1 and body 2 do not appear.
- Closed-form dynamics of the planar elbow arm: M. W. Spong, S. Hutchinson and
  M. Vidyasagar, Robot Modeling and Control (2006), the two-link planar example of the
  Euler-Lagrange chapter (from memory), with its five-parameter linear form
  Theta = [m1 lc1^2 + m2 (l1^2 + lc2^2) + I1 + I2, m2 l1 lc2, m2 lc2^2 + I2,
           m1 lc1 + m2 l1, m2 lc2].
"""
import numpy as np
import pytest

from ffwd.identify import base_parameters, standard_names, two_link_arm
from ffwd.identify.backend import regressor_batch

L1 = 0.5
G = 9.81


def _index(name):
    return standard_names(("j1", "j2")).index(name)


def _textbook_grouping(gravity_in_plane):
    """Rows of the closed-form base parameters in the 26 standard parameters."""
    rows = []

    def row(**coef):
        r = np.zeros(26)
        for k, v in coef.items():
            r[_index(k)] = v
        rows.append(r)

    row(Izz_j1=1, armature_j1=1, m_j2=L1 ** 2)          # ZZ1R
    if gravity_in_plane:
        row(mcx_j1=1, m_j2=L1)                           # MX1R
        row(mcy_j1=1)                                    # MY1
    for name in ("mcx_j2", "mcy_j2", "Izz_j2", "armature_j2",
                 "viscous_j1", "coulomb_j1", "viscous_j2", "coulomb_j2"):
        row(**{name: 1})
    return np.array(rows)


@pytest.mark.parametrize("gravity,count", [((0.0, -G, 0.0), 11), ((0.0, 0.0, -G), 9)])
def test_two_link_grouping_matches_the_closed_form(gravity, count):
    robot = two_link_arm(l1=L1, gravity=gravity)
    base = base_parameters(robot, seed=3)
    T = _textbook_grouping(gravity_in_plane=gravity[1] != 0)
    assert base.count == count == len(T)
    # the same set of identifiable combinations: the row spaces of K and T coincide
    assert np.linalg.matrix_rank(base.K) == count
    assert np.linalg.matrix_rank(np.vstack([base.K, T]), tol=1e-9) == count


def _spong_torque(m1, lc1, I1, m2, lc2, I2, q, qd, qdd):
    """Closed-form torques of the planar elbow arm (Spong, Hutchinson, Vidyasagar 2006)."""
    c2, s2 = np.cos(q[1]), np.sin(q[1])
    d11 = m1 * lc1 ** 2 + m2 * (L1 ** 2 + lc2 ** 2 + 2 * L1 * lc2 * c2) + I1 + I2
    d12 = m2 * (lc2 ** 2 + L1 * lc2 * c2) + I2
    d22 = m2 * lc2 ** 2 + I2
    h = -m2 * L1 * lc2 * s2
    phi1 = (m1 * lc1 + m2 * L1) * G * np.cos(q[0]) + m2 * lc2 * G * np.cos(q[0] + q[1])
    phi2 = m2 * lc2 * G * np.cos(q[0] + q[1])
    tau1 = d11 * qdd[0] + d12 * qdd[1] + 2 * h * qd[0] * qd[1] + h * qd[1] ** 2 + phi1
    tau2 = d12 * qdd[0] + d22 * qdd[1] - h * qd[0] ** 2 + phi2
    return np.array([tau1, tau2])


def test_base_regressor_reproduces_the_closed_form_torque():
    # centres of mass on the link lines, no drives: the case of the closed form
    import dataclasses
    from ffwd.model import Drive, Link
    robot = two_link_arm(l1=L1, friction=False)
    m1, lc1, I1, m2, lc2, I2 = 3.0, 0.2, 0.05, 2.0, 0.15, 0.03
    links = [Link(m1, [lc1, 0, 0], np.diag([0.01, I1, I1])), Link(m2, [lc2, 0, 0],
                                                                  np.diag([0.008, I2, I2]))]
    robot = dataclasses.replace(robot, joints=tuple(
        dataclasses.replace(j, link=lk, drive=Drive(1.0)) for j, lk in zip(robot.joints, links)))
    base = base_parameters(robot)
    theta_b = base.project(robot.parameter_vector())
    # Spong's five parameters are linear in ours: check them through the expressions
    vals = dict(zip(base.labels(), theta_b))
    zz1r, mx1r, zz2, mx2 = vals["Izz_j1R"], vals["mcx_j1R"], vals["Izz_j2"], vals["mcx_j2"]
    spong = [m1 * lc1 ** 2 + m2 * (L1 ** 2 + lc2 ** 2) + I1 + I2, m2 * L1 * lc2,
             m2 * lc2 ** 2 + I2, m1 * lc1 + m2 * L1, m2 * lc2]
    ours = [zz1r + zz2, L1 * mx2, zz2, mx1r, mx2]
    np.testing.assert_allclose(ours, spong, rtol=1e-12)
    rng = np.random.default_rng(7)
    q, qd, qdd = rng.uniform(-2, 2, size=(3, 20, 2))
    Y = regressor_batch(robot, q, qd, qdd)
    tau = base.base_regressor(Y) @ theta_b
    expect = np.array([_spong_torque(m1, lc1, I1, m2, lc2, I2, *s) for s in zip(q, qd, qdd)])
    np.testing.assert_allclose(tau, expect, rtol=1e-10, atol=1e-10)
