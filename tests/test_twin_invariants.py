"""Invariants of the twin's dynamics on random robots (hypothesis).

Each property is a fact of rigid-body mechanics that any correct implementation obeys;
they cross-check the RNEA, CRBA, ABA, kinematics and the regressor against each other
and against finite differences. Example counts follow the active hypothesis profile
("ci" runs at least 200).
"""
import numpy as np
from hypothesis import given, settings, strategies as st

import ffwd.twin as twin
from ffwd.twin.kinematics import body_poses
from strategies import drives, links, robots_with_states

SETTINGS = settings(deadline=None)
FD_MAX_DOF = 8   # the finite-difference properties cost O(dof) calls each; 8 joints suffice


def close(a, b, rtol=1e-9):
    """|a - b| <= rtol * (1 + max|b|), elementwise max."""
    a, b = np.asarray(a, float), np.asarray(b, float)
    return np.max(np.abs(a - b), initial=0.0) <= rtol * (1.0 + np.max(np.abs(b), initial=0.0))


@SETTINGS
@given(robots_with_states())
def test_gravity_is_inverse_dynamics_at_rest(rs):
    robot, (q, _, _) = rs
    zero = np.zeros(robot.dof)
    assert close(twin.gravity_torque(robot, q), twin.inverse_dynamics(robot, q, zero, zero))


@SETTINGS
@given(robots_with_states(), st.floats(-3.0, 3.0))
def test_inverse_dynamics_is_affine_in_qdd(rs, s):
    robot, (q, qd, qdd) = rs
    other = np.linspace(-2.0, 2.0, robot.dof)
    mix = s * qdd + (1.0 - s) * other
    lhs = twin.inverse_dynamics(robot, q, qd, mix)
    rhs = (s * twin.inverse_dynamics(robot, q, qd, qdd)
           + (1.0 - s) * twin.inverse_dynamics(robot, q, qd, other))
    assert close(lhs, rhs)


@SETTINGS
@given(robots_with_states())
def test_parts_sum_to_total(rs):
    robot, (q, qd, qdd) = rs
    parts = twin.torque_parts(robot, q, qd, qdd)
    assert close(sum(parts), twin.inverse_dynamics(robot, q, qd, qdd))
    assert close(parts[2], twin.gravity_torque(robot, q))


@SETTINGS
@given(robots_with_states(friction=False), st.floats(0.1, 5.0))
def test_dynamic_time_scaling(rs, k):
    # Hollerbach 1984, Dynamic scaling of manipulator trajectories (from memory): running
    # the same path k times faster (qd -> k qd, qdd -> k^2 qdd) scales the non-gravity
    # torque by k^2.
    robot, (q, qd, qdd) = rs
    g = twin.gravity_torque(robot, q)
    slow = twin.inverse_dynamics(robot, q, qd, qdd) - g
    fast = twin.inverse_dynamics(robot, q, k * qd, k * k * qdd) - g
    assert close(fast, k * k * slow)


@SETTINGS
@given(robots_with_states())
def test_mass_matrix_symmetric_positive_definite(rs):
    robot, (q, _, _) = rs
    M = twin.mass_matrix(robot, q)
    assert close(M, M.T, 1e-12)
    assert np.linalg.eigvalsh(M)[0] > 0.0
    np.linalg.cholesky(M)


@SETTINGS
@given(robots_with_states())
def test_mass_matrix_times_qdd(rs):
    robot, (q, qd, qdd) = rs
    zero = np.zeros(robot.dof)
    lhs = twin.mass_matrix(robot, q) @ qdd + twin.inverse_dynamics(robot, q, qd, zero)
    assert close(lhs, twin.inverse_dynamics(robot, q, qd, qdd))


@SETTINGS
@given(robots_with_states())
def test_forward_dynamics_inverts_inverse_dynamics(rs):
    robot, (q, qd, qdd) = rs
    tau = twin.inverse_dynamics(robot, q, qd, qdd)
    assert close(twin.forward_dynamics(robot, q, qd, tau), qdd)
    assert close(twin.inverse_dynamics(robot, q, qd, twin.forward_dynamics(robot, q, qd, tau)),
                 tau)


@SETTINGS
@given(robots_with_states(max_dof=FD_MAX_DOF))
def test_mdot_minus_2c_is_skew_along_qd(rs):
    # Passivity of Lagrangian mechanics: qd^T (Mdot - 2C) qd = 0 (e.g. Siciliano et al.
    # 2009, Robotics: Modelling, Planning and Control, sec 7.1.3, from memory).
    robot, (q, qd, _) = rs
    h = 1e-5
    Mdot = (twin.mass_matrix(robot, q + h * qd) - twin.mass_matrix(robot, q - h * qd)) / (2 * h)
    _, Cqd, _, _ = twin.torque_parts(robot, q, qd, np.zeros(robot.dof))
    lhs, rhs = qd @ Mdot @ qd, 2.0 * qd @ Cqd
    assert abs(lhs - rhs) <= 1e-6 * (1.0 + abs(rhs) + np.abs(Mdot).max() * (qd @ qd))


def potential(robot, q):
    """-sum m_i g . c_i from the body poses and inertial parameters directly."""
    g = np.asarray(robot.gravity)
    V = 0.0
    for T, p in zip(body_poses(robot, q), robot.body_params()):
        V -= g @ (p[0] * T[:3, 3] + T[:3, :3] @ p[1:4])
    return V


def energy(robot, q, qd):
    """Kinetic (1/2 qd^T M qd, armature included) plus potential energy."""
    return 0.5 * qd @ twin.mass_matrix(robot, q) @ qd + potential(robot, q)


@SETTINGS
@given(robots_with_states(max_dof=FD_MAX_DOF))
def test_power_balance(rs):
    # d/dt (kinetic + potential) = qd . (tau - friction)   (work-energy theorem,
    # common practice, no source). dE/dt = dE/dq . qd + dE/dqd . qdd with dE/dqd = M qd
    # and dE/dq . qd by central differences along qd.
    robot, (q, qd, tau_scale) = rs
    tau = 5.0 * tau_scale
    qdd = twin.forward_dynamics(robot, q, qd, tau)
    h = 1e-6
    dE_dq = (energy(robot, q + h * qd, qd) - energy(robot, q - h * qd, qd)) / (2 * h)
    dEdt = dE_dq + (twin.mass_matrix(robot, q) @ qd) @ qdd
    _, _, _, friction = twin.torque_parts(robot, q, qd, qdd)
    power = qd @ (tau - friction)
    scale = 1.0 + abs(power) + abs(dE_dq) + np.abs(tau).max() * np.abs(qd).max() * robot.dof
    assert abs(dEdt - power) <= 1e-6 * scale


def rotation_log_rate(R_plus, R_minus, R, h):
    """Angular velocity w from dR/dq R^T = w~ (central difference)."""
    W = (R_plus - R_minus) / (2 * h) @ R.T
    return np.array([W[2, 1] - W[1, 2], W[0, 2] - W[2, 0], W[1, 0] - W[0, 1]]) / 2.0


@SETTINGS
@given(robots_with_states(max_dof=FD_MAX_DOF))
def test_jacobian_matches_finite_differences(rs):
    robot, (q, _, _) = rs
    J = twin.tool_jacobian(robot, q)
    T = twin.tool_pose(robot, q)
    h = 1e-6
    J_fd = np.zeros_like(J)
    for j in range(robot.dof):
        e = np.zeros(robot.dof)
        e[j] = h
        Tp, Tm = twin.tool_pose(robot, q + e), twin.tool_pose(robot, q - e)
        J_fd[:3, j] = (Tp[:3, 3] - Tm[:3, 3]) / (2 * h)
        J_fd[3:, j] = rotation_log_rate(Tp[:3, :3], Tm[:3, :3], T[:3, :3], h)
    assert np.max(np.abs(J - J_fd)) <= 1e-7


@SETTINGS
@given(robots_with_states())
def test_tool_pose_is_a_rigid_transform(rs):
    robot, (q, _, _) = rs
    T = twin.tool_pose(robot, q)
    assert close(T[:3, :3].T @ T[:3, :3], np.eye(3), 1e-12)
    assert np.allclose(T[3], [0, 0, 0, 1])


@st.composite
def robots_states_and_parameters(draw):
    """A robot, a state and a random physically valid parameter vector for its joints."""
    robot, state = draw(robots_with_states())
    theta = []
    for _ in range(robot.dof):
        drive = draw(drives())
        theta += list(draw(links()).params10()) + [drive.armature, drive.viscous, drive.coulomb]
    return robot, state, np.array(theta)


@SETTINGS
@given(robots_states_and_parameters())
def test_regressor_is_linear_in_parameters(rsp):
    robot, (q, qd, qdd), theta = rsp
    Y = twin.regressor(robot, q, qd, qdd)
    assert Y.shape == (robot.dof, 13 * robot.dof)
    assert close(Y @ robot.parameter_vector(), twin.inverse_dynamics(robot, q, qd, qdd))
    other = robot.with_parameters(theta)
    assert close(Y @ theta, twin.inverse_dynamics(other, q, qd, qdd))


@SETTINGS
@given(robots_with_states(max_dof=FD_MAX_DOF))
def test_velocity_torque_from_lagrange_equations(rs):
    # Euler-Lagrange with L = 1/2 qd^T M(q) qd - V(q) (common practice, no source):
    #     C(q, qd) qd = Mdot qd - 1/2 d/dq (qd^T M qd),
    # built here from the CRBA mass matrix alone by central differences, so it checks the
    # Newton-Euler velocity terms (incl. the sign of v x* I v) independently.
    robot, (q, qd, _) = rs
    h = 1e-5
    n = robot.dof
    Mdot = (twin.mass_matrix(robot, q + h * qd) - twin.mass_matrix(robot, q - h * qd)) / (2 * h)
    grad = np.zeros(n)
    for j in range(n):
        e = np.zeros(n)
        e[j] = h
        grad[j] = (qd @ twin.mass_matrix(robot, q + e) @ qd
                   - qd @ twin.mass_matrix(robot, q - e) @ qd) / (2 * h)
    expected = Mdot @ qd - 0.5 * grad
    _, Cqd, _, _ = twin.torque_parts(robot, q, qd, np.zeros(n))
    scale = 1.0 + np.abs(Mdot).max() * np.abs(qd).max() * n
    assert np.max(np.abs(Cqd - expected)) <= 1e-6 * scale


@SETTINGS
@given(robots_with_states(max_dof=FD_MAX_DOF))
def test_gravity_torque_is_gradient_of_potential(rs):
    # g(q) = dV/dq (common practice, no source), V from the body poses directly.
    robot, (q, _, _) = rs
    h = 1e-6
    grad = np.zeros(robot.dof)
    for j in range(robot.dof):
        e = np.zeros(robot.dof)
        e[j] = h
        grad[j] = (potential(robot, q + e) - potential(robot, q - e)) / (2 * h)
    g = twin.gravity_torque(robot, q)
    assert np.max(np.abs(g - grad)) <= 1e-6 * (1.0 + np.abs(g).max())
