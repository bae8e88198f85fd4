"""Two-link planar arm against its closed-form dynamics.

Source: Siciliano, Sciavicco, Villani, Oriolo 2009, Robotics: Modelling, Planning and
Control, sec 7.3.2 "Two-link planar arm" (from memory; motor terms left out). With
c2 = cos q2, s2 = sin q2, c1 = cos q1, c12 = cos(q1 + q2):
    M11 = I1 + m1 l1^2 + I2 + m2 (a1^2 + l2^2 + 2 a1 l2 c2)
    M12 = I2 + m2 (l2^2 + a1 l2 c2)
    M22 = I2 + m2 l2^2
    C qd = h [2 qd1 qd2 + qd2^2, -qd1^2],  h = -m2 a1 l2 s2
    g1 = (m1 l1 + m2 a1) g c1 + m2 l2 g c12,  g2 = m2 l2 g c12
"""
import numpy as np
import pytest

from ref_backend import dyn
from robots_ref import two_link_planar

# invented arm
P = dict(m1=3.0, m2=2.0, a1=0.6, a2=0.5, l1=0.3, l2=0.22, I1=0.09, I2=0.05, g=9.81)
RNG = np.random.default_rng(7)
STATES = [RNG.uniform(-np.pi, np.pi, 2) for _ in range(6)], [RNG.uniform(-3, 3, 2) for _ in range(6)]
TOL = 1e-12


def closed_form(q, qd, m1, m2, a1, a2, l1, l2, I1, I2, g):
    c1, c2, s2, c12 = np.cos(q[0]), np.cos(q[1]), np.sin(q[1]), np.cos(q[0] + q[1])
    M = np.array([
        [I1 + m1 * l1**2 + I2 + m2 * (a1**2 + l2**2 + 2 * a1 * l2 * c2),
         I2 + m2 * (l2**2 + a1 * l2 * c2)],
        [I2 + m2 * (l2**2 + a1 * l2 * c2), I2 + m2 * l2**2]])
    h = -m2 * a1 * l2 * s2
    Cqd = np.array([h * (2 * qd[0] * qd[1] + qd[1]**2), -h * qd[0]**2])
    grav = np.array([(m1 * l1 + m2 * a1) * g * c1 + m2 * l2 * g * c12, m2 * l2 * g * c12])
    return M, Cqd, grav


@pytest.mark.parametrize("k", range(6))
def test_two_link_mass_matrix_coriolis_gravity(backend, k):
    q, qd = STATES[0][k], STATES[1][k]
    d = dyn(two_link_planar(**P), backend)
    M, Cqd, grav = closed_form(q, qd, **P)
    qdd = np.array([1.3, -0.7])
    inertial, velocity, gravity, friction = d.torque_parts(q, qd, qdd)
    assert np.max(np.abs(d.mass_matrix(q) - M)) <= TOL
    assert np.max(np.abs(velocity - Cqd)) <= TOL
    assert np.max(np.abs(gravity - grav)) <= TOL
    assert np.max(np.abs(d.gravity(q) - grav)) <= TOL
    assert np.max(np.abs(d.inverse_dynamics(q, qd, qdd) - (M @ qdd + Cqd + grav))) <= TOL


def test_two_link_tool_position(backend):
    # forward kinematics of the planar arm: p = (a1 c1 + a2 c12, a1 s1 + a2 s12)
    # (common practice, no source)
    d = dyn(two_link_planar(**P), backend)
    for q in STATES[0]:
        T = d.tool_pose(q)
        expected = [P["a1"] * np.cos(q[0]) + P["a2"] * np.cos(q[0] + q[1]),
                    P["a1"] * np.sin(q[0]) + P["a2"] * np.sin(q[0] + q[1]), 0.0]
        assert np.max(np.abs(T[:3, 3] - expected)) <= 1e-14
