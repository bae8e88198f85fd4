"""Joint-space mass matrix by the composite rigid body algorithm.

Featherstone 2008, Rigid Body Dynamics Algorithms, sec 6.2 (from memory):
    Ic_i = I_i + sum over children c of  X_c^T Ic_c X_c
    M_ii = S_i^T Ic_i S_i
    M_ij = M_ji = S_j^T (X_{j..i})^T Ic_i S_i   for every ancestor j of i
plus the armature on the diagonal (ffwd.h).
"""
import numpy as np

from .kinematics import motion_subspace, parent_to_body, vec
from .rnea import armature, body_inertias


def mass_matrix(robot, q):
    """M(q), dof x dof, symmetric positive definite, armature on the diagonal."""
    q = vec(robot, q, "q")
    X = [parent_to_body(joint, q[i]) for i, joint in enumerate(robot.joints)]
    S = [motion_subspace(joint) for joint in robot.joints]
    Ic = body_inertias(robot)
    for i in reversed(range(robot.dof)):
        p = robot.joints[i].parent
        if p >= 0:
            Ic[p] = Ic[p] + X[i].T @ Ic[i] @ X[i]
    M = np.diag(armature(robot))
    for i in range(robot.dof):
        F = Ic[i] @ S[i]
        M[i, i] += S[i] @ F
        j = i
        while robot.joints[j].parent >= 0:
            F = X[j].T @ F
            j = robot.joints[j].parent
            M[i, j] = M[j, i] = S[j] @ F
    return M
