"""Forward dynamics by the articulated body algorithm.

Featherstone 2008, Rigid Body Dynamics Algorithms, sec 7.3 (from memory), with the
armature added to each joint's D_i = S_i^T U_i + armature_i and the drive friction
moved to the torque side: u_i = tau_i - friction_i - S_i^T p_i^A.
"""
import numpy as np

from .kinematics import motion_subspace, vec
from .rnea import armature, body_inertias, friction_torque, kinematic_pass
from .spatial import crf, crm


def forward_dynamics(robot, q, qd, tau):
    """qdd from the joint torques tau at q, qd (friction included)."""
    q, qd, tau = vec(robot, q, "q"), vec(robot, qd, "qd"), vec(robot, tau, "tau")
    n = robot.dof
    zero = np.zeros(n)
    a_base = np.zeros(6)
    a_base[3:] = -np.asarray(robot.gravity, dtype=float)
    S = [motion_subspace(joint) for joint in robot.joints]
    # pass 1: velocities v_i and velocity-product accelerations c_i = v_i x S_i qd_i
    X, v, _ = kinematic_pass(robot, q, qd, zero, np.zeros(6))
    c = [crm(vi) @ (Si * qdi) for vi, Si, qdi in zip(v, S, qd)]
    IA = body_inertias(robot)
    pA = [crf(vi) @ (I @ vi) for I, vi in zip(IA, v)]
    u_drive = tau - friction_torque(robot, qd)
    arm = armature(robot)
    # pass 2: articulated inertias from the tips inwards
    U, D, u = [None] * n, np.zeros(n), np.zeros(n)
    for i in reversed(range(n)):
        U[i] = IA[i] @ S[i]
        D[i] = S[i] @ U[i] + arm[i]
        u[i] = u_drive[i] - S[i] @ pA[i]
        p = robot.joints[i].parent
        if p >= 0:
            Ia = IA[i] - np.outer(U[i], U[i]) / D[i]
            pa = pA[i] + Ia @ c[i] + U[i] * (u[i] / D[i])
            IA[p] = IA[p] + X[i].T @ Ia @ X[i]
            pA[p] = pA[p] + X[i].T @ pa
    # pass 3: accelerations from the base outwards
    qdd = np.zeros(n)
    a = [None] * n
    for i in range(n):
        p = robot.joints[i].parent
        ap = a_base if p < 0 else a[p]
        a_prime = X[i] @ ap + c[i]
        qdd[i] = (u[i] - U[i] @ a_prime) / D[i]
        a[i] = a_prime + S[i] * qdd[i]
    return qdd

