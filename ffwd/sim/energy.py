"""Mechanical energy of an arm, for integrator checks (twin kinematics)."""
__all__ = ["energy"]
import numpy as np


def energy(robot, q, qd):
    """(kinetic, potential): 1/2 qd^T M(q) qd with M from the twin (armature included),
    and -sum_i m_i g . c_i with c_i body i's centre of mass in the base frame."""
    from ..twin import mass_matrix
    from ..twin.kinematics import body_poses
    q = np.asarray(q, dtype=float)
    qd = np.asarray(qd, dtype=float)
    kinetic = 0.5 * qd @ mass_matrix(robot, q) @ qd
    g = np.asarray(robot.gravity, dtype=float)
    params = robot.body_params()
    potential = 0.0
    for T, p in zip(body_poses(robot, q), params):
        m = p[0]
        com_world = T[:3, :3] @ (p[1:4] / m) + T[:3, 3]
        potential -= m * g @ com_world
    return float(kinetic), float(potential)
