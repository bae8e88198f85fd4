"""Inverse dynamics by the recursive Newton-Euler algorithm, gravity and torque parts.

RNEA as in Featherstone 2008, Rigid Body Dynamics Algorithms, sec 5.3 (from memory),
with gravity entered as a fictitious upward acceleration of the base, a_0 = [0; -g].
The drive adds armature*qdd + viscous*qd + coulomb*clip(qd/band, -1, 1) (ffwd.h).
"""
import numpy as np

from .kinematics import motion_subspace, parent_to_body, vec
from .spatial import crf, crm, inertia_from_params


def body_inertias(robot):
    """Spatial inertia of every body in its own frame (payload lumped via body_params)."""
    return [inertia_from_params(p) for p in robot.body_params()]


def friction_torque(robot, qd):
    """viscous*qd + coulomb*clip(qd/band, -1, 1), joint by joint."""
    tau = np.zeros(robot.dof)
    for i, joint in enumerate(robot.joints):
        d = joint.drive
        tau[i] = d.viscous * qd[i] + d.coulomb * np.clip(qd[i] / d.coulomb_band, -1.0, 1.0)
    return tau


def armature(robot):
    """Reflected rotor inertia of every joint."""
    return np.array([joint.drive.armature for joint in robot.joints], dtype=float)


def kinematic_pass(robot, q, qd, qdd, a_base):
    """Forward pass: body velocities v_i, accelerations a_i and transforms ^iX_{p(i)}.
        v_i = X_i v_p + S_i qd_i
        a_i = X_i a_p + S_i qdd_i + v_i x S_i qd_i
    """
    X, v, a = [], [], []
    for i, joint in enumerate(robot.joints):
        Xi = parent_to_body(joint, q[i])
        S = motion_subspace(joint)
        vp = np.zeros(6) if joint.parent < 0 else v[joint.parent]
        ap = a_base if joint.parent < 0 else a[joint.parent]
        vi = Xi @ vp + S * qd[i]
        ai = Xi @ ap + S * qdd[i] + crm(vi) @ (S * qd[i])
        X.append(Xi)
        v.append(vi)
        a.append(ai)
    return X, v, a


def rnea(robot, q, qd, qdd, gravity=True):
    """Rigid-body joint forces S_i^T f_i (no drive terms).
        f_i = I_i a_i + v_i x* I_i v_i,   then from the tips inwards
        tau_i = S_i^T f_i,   f_p(i) += X_i^T f_i
    """
    a_base = np.zeros(6)
    if gravity:
        a_base[3:] = -np.asarray(robot.gravity, dtype=float)
    X, v, a = kinematic_pass(robot, q, qd, qdd, a_base)
    inertias = body_inertias(robot)
    f = [I @ ai + crf(vi) @ (I @ vi) for I, vi, ai in zip(inertias, v, a)]
    tau = np.zeros(robot.dof)
    for i in reversed(range(robot.dof)):
        joint = robot.joints[i]
        tau[i] = motion_subspace(joint) @ f[i]
        if joint.parent >= 0:
            f[joint.parent] = f[joint.parent] + X[i].T @ f[i]
    return tau


def inverse_dynamics(robot, q, qd, qdd):
    """Joint torques (forces for prismatic joints) for the motion q, qd, qdd:
    RNEA + armature*qdd + friction(qd)."""
    q, qd, qdd = vec(robot, q, "q"), vec(robot, qd, "qd"), vec(robot, qdd, "qdd")
    return rnea(robot, q, qd, qdd) + armature(robot) * qdd + friction_torque(robot, qd)


def gravity_torque(robot, q):
    """g(q): the torques that hold the robot still at q."""
    q = vec(robot, q, "q")
    zero = np.zeros(robot.dof)
    return rnea(robot, q, zero, zero)


def torque_parts(robot, q, qd, qdd):
    """(inertial, velocity, gravity, friction) with
        inertial = M(q) qdd  (armature included)
        velocity = C(q, qd) qd  (RNEA at qdd = 0 without gravity)
        gravity  = g(q)
        friction = viscous*qd + coulomb*clip(qd/band, -1, 1)
    summing to inverse_dynamics(robot, q, qd, qdd)."""
    from .crba import mass_matrix
    q, qd, qdd = vec(robot, q, "q"), vec(robot, qd, "qd"), vec(robot, qdd, "qdd")
    zero = np.zeros(robot.dof)
    inertial = mass_matrix(robot, q) @ qdd
    velocity = rnea(robot, q, qd, zero, gravity=False)
    gravity = rnea(robot, q, zero, zero)
    friction = friction_torque(robot, qd)
    return inertial, velocity, gravity, friction
