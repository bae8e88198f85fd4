"""Joint transforms, the tool pose and the tool Jacobian.

Frames (DEVELOPERS.md, ffwd.h): joint frame i at q_i = 0 sits in its parent's joint
frame with rotation R_i (columns = frame i's axes in parent coordinates) and origin p_i.
The joint motion comes after that: a revolute joint rotates by q_i about `axis`, a
prismatic joint translates by q_i along `axis` (axis in frame i). Body i is described in
the moved frame.
"""
import numpy as np

from .spatial import axis_angle, xlt_rot


def vec(robot, x, name):
    """x as a float vector of length robot.dof; a clear ValueError otherwise."""
    a = np.asarray(x, dtype=float)
    if a.shape != (robot.dof,):
        raise ValueError(f"{name}: expected shape ({robot.dof},), got {a.shape}")
    if not np.all(np.isfinite(a)):
        raise ValueError(f"{name}: contains a non-finite value")
    return a


def joint_placement(joint, qi):
    """(R, p): body frame i (after the joint motion) in its parent's joint frame."""
    if joint.type == "revolute":
        return joint.rotation @ axis_angle(joint.axis, qi), np.array(joint.translation, float)
    return np.array(joint.rotation, float), joint.translation + joint.rotation @ (joint.axis * qi)


def parent_to_body(joint, qi):
    """Plücker motion transform  ^iX_{parent(i)}  (Featherstone 2008, sec 2.8, from memory)."""
    R, p = joint_placement(joint, qi)
    return xlt_rot(R.T, p)


def motion_subspace(joint):
    """Joint motion subspace S_i in body frame i: [axis; 0] or [0; axis]."""
    S = np.zeros(6)
    if joint.type == "revolute":
        S[:3] = joint.axis
    else:
        S[3:] = joint.axis
    return S


def body_poses(robot, q):
    """List of 4x4 poses of every body frame in the base frame."""
    q = vec(robot, q, "q")
    poses = []
    for i, joint in enumerate(robot.joints):
        R, p = joint_placement(joint, q[i])
        T = np.eye(4)
        T[:3, :3], T[:3, 3] = R, p
        poses.append(T if joint.parent < 0 else poses[joint.parent] @ T)
    return poses


def tool_pose(robot, q):
    """4x4 homogeneous transform of the tool frame in the base frame."""
    T_tool = np.eye(4)
    T_tool[:3, :3] = robot.tool.rotation
    T_tool[:3, 3] = robot.tool.translation
    return body_poses(robot, q)[robot.tool.parent] @ T_tool


def ancestors(robot, i):
    """Joint i and every joint between it and the base, from i down to the root."""
    chain = []
    while i >= 0:
        chain.append(i)
        i = robot.joints[i].parent
    return chain


def tool_jacobian(robot, q):
    """Geometric Jacobian (6 x dof) of the tool frame, rows vx vy vz wx wy wz: the linear
    velocity of the tool-frame origin and the angular velocity, both in the base frame.
    Column j for a revolute joint: [z_j x (p_tool - o_j); z_j]; prismatic: [z_j; 0]
    (the usual geometric Jacobian, e.g. Siciliano et al. 2009, Robotics: Modelling,
    Planning and Control, sec 3.1.3, from memory)."""
    poses = body_poses(robot, q)
    p_tool = tool_pose(robot, q)[:3, 3]
    J = np.zeros((6, robot.dof))
    for j in ancestors(robot, robot.tool.parent):
        joint = robot.joints[j]
        z = poses[j][:3, :3] @ joint.axis
        if joint.type == "revolute":
            J[:3, j] = np.cross(z, p_tool - poses[j][:3, 3])
            J[3:, j] = z
        else:
            J[:3, j] = z
    return J
