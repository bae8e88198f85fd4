"""A physical pendulum: gravity torque, energy conservation, small-oscillation period."""
import dataclasses

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from ffwd.model import Drive
from ref_backend import dyn
from robots_ref import pendulum, random_chain, two_link_planar

M, L, I_COM, G = 1.7, 0.35, 0.02, 9.81   # invented


@pytest.mark.parametrize("q", np.linspace(-3.0, 3.0, 13))
def test_pendulum_gravity_torque(backend, q):
    # torque holding a pendulum at angle q from hanging: m g l sin q
    # (elementary statics, common practice, no source)
    d = dyn(pendulum(M, L, I_COM, G), backend)
    assert abs(d.gravity(np.array([q]))[0] - M * G * L * np.sin(q)) <= 1e-13


def simulate(d, q0, qd0, t_end, **kw):
    """Integrate qdd = FD(q, qd, 0) with scipy's solve_ivp (DOP853)."""
    n = len(q0)

    def rhs(_, x):
        return np.concatenate([x[n:], d.forward_dynamics(x[:n], x[n:], np.zeros(n))])

    return solve_ivp(rhs, (0.0, t_end), np.concatenate([q0, qd0]), method="DOP853", **kw)


def test_small_oscillation_period(backend):
    # physical pendulum: T = 2 pi sqrt(I_pivot / (m g l)) for small amplitudes
    # (common practice, no source; the amplitude correction ~ theta0^2/16 is 6e-9 here)
    d = dyn(pendulum(M, L, I_COM, G), backend)
    I_pivot = I_COM + M * L**2
    T_expected = 2 * np.pi * np.sqrt(I_pivot / (M * G * L))
    sol = simulate(d, np.array([3e-4]), np.array([0.0]), 5.2 * T_expected,
                   rtol=1e-12, atol=1e-15, dense_output=True)
    t = np.linspace(0.0, sol.t[-1], 200001)
    q = sol.sol(t)[0]
    k = np.nonzero(np.sign(q[:-1]) != np.sign(q[1:]))[0]
    crossings = t[k] - q[k] * (t[k + 1] - t[k]) / (q[k + 1] - q[k])   # linear interpolation
    assert len(crossings) >= 10
    # crossings are half a period apart; fit the spacing over all of them
    period = 2.0 * np.polyfit(np.arange(len(crossings)), crossings, 1)[0]
    assert abs(period - T_expected) / T_expected <= 1e-6


def energy(d, robot, q, qd):
    """1/2 qd^T M qd + potential of every body, the potential from the body poses."""
    from ffwd.twin.kinematics import body_poses
    V = 0.0
    for T, p in zip(body_poses(robot, q), robot.body_params()):
        V -= np.asarray(robot.gravity) @ (p[0] * T[:3, 3] + T[:3, :3] @ p[1:4])
    return 0.5 * qd @ d.mass_matrix(q) @ qd + V


def frictionless(robot):
    """The same robot with friction removed (armature kept)."""
    joints = tuple(dataclasses.replace(j, drive=Drive(j.drive.gear_ratio, j.drive.rotor_inertia))
                   for j in robot.joints)
    return dataclasses.replace(robot, joints=joints)


ARMS = {
    "two_link_planar": lambda: two_link_planar(3.0, 2.0, 0.6, 0.5, 0.3, 0.22, 0.09, 0.05),
    "spatial_rpr": lambda: frictionless(random_chain(np.random.default_rng(5),
                                                     ("revolute", "prismatic", "revolute"))),
}


@pytest.mark.parametrize("arm", sorted(ARMS))
def test_energy_conservation_of_frictionless_arm(backend, arm):
    # energy is conserved without friction or input (common practice, no source);
    # integrated with scipy's solve_ivp (scipy as reference integrator)
    robot = ARMS[arm]()
    d = dyn(robot, backend)
    n = robot.dof
    q0, qd0 = np.linspace(0.4, -1.1, n), np.linspace(1.5, -2.0, n)
    sol = simulate(d, q0, qd0, 2.0, rtol=1e-13, atol=1e-13)
    assert sol.success
    E = np.array([energy(d, robot, x[:n], x[n:]) for x in sol.y.T])
    kinetic = np.array([0.5 * x[n:] @ d.mass_matrix(x[:n]) @ x[n:] for x in sol.y.T])
    # relative drift: change of total energy over the largest kinetic energy seen
    drift = np.max(np.abs(E - E[0])) / np.max(kinetic)
    assert drift <= 1e-8
