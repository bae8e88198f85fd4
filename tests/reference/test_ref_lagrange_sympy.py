"""Random 2- and 3-joint chains (with a prismatic joint) against a Lagrangian derivation
done with sympy (general-purpose CAS as reference).

The chain is the same Robot; sympy builds every body's pose from the same frames
(parent frame, then the joint motion), its centre-of-mass velocity (the time derivative
of its position, by symbolic differentiation) and its angular velocity (the parent's,
rotated into the body, plus axis*qd for a revolute joint), the kinetic and potential
energy, and applies Euler-Lagrange:
    tau_j = d/dt dL/dqd_j - dL/dq_j  (+ drive friction),  L = T - V.
Nothing of the twin's Newton-Euler recursion is used.
"""
import functools

import numpy as np
import pytest
import sympy as sp

from ref_backend import dyn
from robots_ref import random_chain

CHAINS = [("prismatic", "revolute"), ("revolute", "prismatic"),
          ("revolute", "prismatic", "revolute"), ("prismatic", "revolute", "revolute")]


def rodrigues(axis, angle):
    K = sp.Matrix([[0, -axis[2], axis[1]], [axis[2], 0, -axis[0]], [-axis[1], axis[0], 0]])
    return sp.eye(3) + sp.sin(angle) * K + (1 - sp.cos(angle)) * K * K


def lagrangian_model(robot):
    """(tau(q, qd, qdd), M(q), g(q)) as numpy functions from sympy's Euler-Lagrange."""
    n = robot.dof
    q = sp.symbols(f"q0:{n}")
    qd = sp.symbols(f"qd0:{n}")
    qdd = sp.symbols(f"qdd0:{n}")
    R_prev, o_prev, w_prev = sp.eye(3), sp.zeros(3, 1), sp.zeros(3, 1)
    g = sp.Matrix(robot.gravity)
    T, V = 0, 0
    for i, (joint, p) in enumerate(zip(robot.joints, robot.body_params())):
        R0, p0, axis = sp.Matrix(joint.rotation), sp.Matrix(joint.translation), sp.Matrix(joint.axis)
        if joint.type == "revolute":
            Rj = rodrigues(axis, q[i])
            R, o = R_prev * R0 * Rj, o_prev + R_prev * p0
            w = (R0 * Rj).T * w_prev + axis * qd[i]       # body angular velocity, body axes
        else:
            R, o = R_prev * R0, o_prev + R_prev * (p0 + R0 * axis * q[i])
            w = R0.T * w_prev
        m, c = p[0], np.asarray(p[1:4]) / p[0]
        I_O = np.array([[p[4], p[5], p[6]], [p[5], p[7], p[8]], [p[6], p[8], p[9]]])
        I_c = sp.Matrix(I_O - m * (c @ c * np.eye(3) - np.outer(c, c)))   # parallel axis
        com = o + R * sp.Matrix(c)
        v_com = com.jacobian(q) * sp.Matrix(qd)
        T += sp.Rational(1, 2) * (m * v_com.dot(v_com) + (w.T * I_c * w)[0])
        T += sp.Rational(1, 2) * joint.drive.armature * qd[i] ** 2
        V += -m * g.dot(com)
        R_prev, o_prev, w_prev = R, o, w
    L = T - V
    tau = []
    for j in range(n):
        dL_dqd = sp.diff(L, qd[j])
        ddt = sum(sp.diff(dL_dqd, q[k]) * qd[k] + sp.diff(dL_dqd, qd[k]) * qdd[k] for k in range(n))
        tau.append(ddt - sp.diff(L, q[j]))
    M = sp.Matrix(n, n, lambda a, b: sp.diff(T, qd[a], qd[b]))
    grav = [sp.diff(V, q[j]) for j in range(n)]
    args = (q, qd, qdd)
    return (sp.lambdify(args, tau, "numpy", cse=True), sp.lambdify([q], M, "numpy", cse=True),
            sp.lambdify([q], grav, "numpy", cse=True))


def friction(robot, qd):
    return np.array([j.drive.viscous * v + j.drive.coulomb * np.clip(v / j.drive.coulomb_band, -1, 1)
                     for j, v in zip(robot.joints, qd)])


@functools.lru_cache(maxsize=None)
def derived(seed):
    """The random chain number `seed`, its derivation and the rng for its states."""
    rng = np.random.default_rng(100 + seed)
    robot = random_chain(rng, CHAINS[seed])
    return robot, lagrangian_model(robot), rng.integers(1 << 30)


@pytest.mark.parametrize("seed", range(len(CHAINS)))
def test_chain_against_sympy_lagrangian(backend, seed):
    robot, (tau_f, M_f, g_f), state_seed = derived(seed)
    rng = np.random.default_rng(state_seed)
    d = dyn(robot, backend)
    for _ in range(5):
        q, qd, qdd = rng.uniform(-2, 2, robot.dof), rng.uniform(-2, 2, robot.dof), \
            rng.uniform(-5, 5, robot.dof)
        expected = np.array(tau_f(q, qd, qdd), float) + friction(robot, qd)
        tau = d.inverse_dynamics(q, qd, qdd)
        assert np.max(np.abs(tau - expected)) <= 1e-10 * (1 + np.abs(expected).max())
        M = np.array(M_f(q), float)
        assert np.max(np.abs(d.mass_matrix(q) - M)) <= 1e-10 * (1 + np.abs(M).max())
        g = np.array(g_f(q), float)
        assert np.max(np.abs(d.gravity(q) - g)) <= 1e-10 * (1 + np.abs(g).max())
