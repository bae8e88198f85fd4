"""Joint-torque regressor Y(q, qd, qdd) with Y @ theta == inverse dynamics.

The Newton-Euler body force f_i = I_i a_i + v_i x* I_i v_i is linear in the 10 inertial
parameters pi_i of body i (Atkeson, An and Hollerbach 1986, Estimation of inertial
parameters of manipulator loads and links, from memory). Column k of the 6x10 body
matrix A_i is that force for the unit parameter vector e_k. Joint j carries the force
of every body i outboard of it:  Y[j, body i] = S_j^T (X_{i->j})^T A_i.
Drive columns per joint: qdd_j (armature), qd_j (viscous), clip(qd_j/band, -1, 1) (Coulomb).
Column order per joint j (13j .. 13j+12): m, mcx, mcy, mcz, Ixx, Ixy, Ixz, Iyy, Iyz, Izz,
armature, viscous, coulomb.
"""
import numpy as np

from .kinematics import motion_subspace, vec
from .rnea import kinematic_pass
from .spatial import crf, inertia_from_params

N_PARAMS = 13
UNIT_INERTIAS = [inertia_from_params(e_k) for e_k in np.eye(10)]   # I(e_k), k = 0..9


def body_force_matrix(v, a):
    """6x10 A with A @ pi == I(pi) a + v x* I(pi) v (I is linear in pi)."""
    A = np.zeros((6, 10))
    for k, I_k in enumerate(UNIT_INERTIAS):
        A[:, k] = I_k @ a + crf(v) @ (I_k @ v)
    return A


def regressor(robot, q, qd, qdd):
    """Y, dof x 13*dof: per joint the 10 inertial parameters of its body (about the
    joint-frame origin, in joint-frame axes), then armature, viscous, Coulomb."""
    q, qd, qdd = vec(robot, q, "q"), vec(robot, qd, "qd"), vec(robot, qdd, "qdd")
    n = robot.dof
    a_base = np.zeros(6)
    a_base[3:] = -np.asarray(robot.gravity, dtype=float)
    X, v, a = kinematic_pass(robot, q, qd, qdd, a_base)
    Y = np.zeros((n, N_PARAMS * n))
    for i in range(n):
        F = body_force_matrix(v[i], a[i])  # body i's force in frame i, per parameter
        j = i
        while True:
            Y[j, N_PARAMS * i:N_PARAMS * i + 10] = motion_subspace(robot.joints[j]) @ F
            if robot.joints[j].parent < 0:
                break
            F = X[j].T @ F
            j = robot.joints[j].parent
        drive = robot.joints[i].drive
        Y[i, N_PARAMS * i + 10] = qdd[i]
        Y[i, N_PARAMS * i + 11] = qd[i]
        Y[i, N_PARAMS * i + 12] = np.clip(qd[i] / drive.coulomb_band, -1.0, 1.0)
    return Y
