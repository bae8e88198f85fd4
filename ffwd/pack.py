"""The one place a Python `Robot` becomes the C `ffwd_model` struct.

`model_fields(robot)` returns every field of `ffwd_model` (csrc/include/ffwd.h) as
numbers and numpy arrays, in the struct's layout: per joint type, parent, rot (row-major
3x3), pos, axis, inertia (10 parameters of the body alone, without the payload),
armature, viscous, coulomb, coulomb_band, has_limits (FFWD_LIM_* bits) and the limits;
then the tool frame and the default payload as 10 parameters in the tool_parent joint
frame. The pybind11 binding, the cffi loader and the C export all fill the struct from it.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["ModelFields", "model_fields", "payload_params", "payload_entries",
           "JOINT_TYPE", "LIMIT_BITS", "LIMIT_FIELDS"]

JOINT_TYPE = {"revolute": 0, "prismatic": 1}          # FFWD_REVOLUTE, FFWD_PRISMATIC
# ffwd_joint.has_limits bits and the struct fields they guard
LIMIT_BITS = {"position": 1, "velocity": 2, "acceleration": 4, "jerk": 8, "torque": 16}
LIMIT_FIELDS = ("q_min", "q_max", "v_max", "a_max", "j_max", "tau_max")


@dataclass(frozen=True, eq=False)
class ModelFields:
    """Field values of ffwd_model; per-joint arrays have dof rows."""
    dof: int
    gravity: np.ndarray        # (3,)
    type: np.ndarray           # (dof,) int32
    parent: np.ndarray         # (dof,) int32
    rot: np.ndarray            # (dof, 9) row-major
    pos: np.ndarray            # (dof, 3)
    axis: np.ndarray           # (dof, 3)
    inertia: np.ndarray        # (dof, 10) bodies without the payload
    armature: np.ndarray       # (dof,)
    viscous: np.ndarray        # (dof,)
    coulomb: np.ndarray        # (dof,)
    coulomb_band: np.ndarray   # (dof,)
    has_limits: np.ndarray     # (dof,) uint32
    limits: np.ndarray         # (dof, 6) q_min, q_max, v_max, a_max, j_max, tau_max (0 if unset)
    tool_parent: int
    tool_rot: np.ndarray       # (9,)
    tool_pos: np.ndarray       # (3,)
    payload: np.ndarray        # (10,) in the tool_parent joint frame

    def as_dict(self):
        return {name: getattr(self, name) for name in self.__dataclass_fields__}


def _params10(mass, com, inertia_com):
    """m, m*c, inertia about the frame origin (xx, xy, xz, yy, yz, zz) by the
    parallel-axis theorem (Steiner); inertia entries are matrix entries (Ixy = -sum m x y)."""
    c = np.asarray(com, dtype=float)
    I = np.asarray(inertia_com, dtype=float) + mass * (float(c @ c) * np.eye(3) - np.outer(c, c))
    return np.array([mass, *(mass * c), I[0, 0], I[0, 1], I[0, 2], I[1, 1], I[1, 2], I[2, 2]])


def payload_params(robot, mass=None, com=None, inertia=None):
    """10 inertial parameters of a payload in the tool_parent joint frame. The payload's
    com is given in the tool frame, its inertia about the com in tool-frame axes
    (defaults: the robot's own payload)."""
    p = robot.payload
    mass = p.mass if mass is None else float(mass)
    com = p.com if com is None else np.asarray(com, dtype=float)
    inertia = p.inertia if inertia is None else np.asarray(inertia, dtype=float)
    if mass == 0.0:
        return np.zeros(10)
    R, t = robot.tool.rotation, robot.tool.translation
    return _params10(mass, R @ com + t, R @ inertia @ R.T)


def payload_entries(inertia):
    """A 3x3 inertia (or 6 entries) as the 6 entries xx, xy, xz, yy, yz, zz."""
    a = np.asarray(inertia, dtype=float)
    if a.shape == (6,):
        return a.copy()
    if a.shape != (3, 3):
        raise ValueError(f"inertia: expected shape (3, 3) or (6,), got {a.shape}")
    return np.array([a[0, 0], a[0, 1], a[0, 2], a[1, 1], a[1, 2], a[2, 2]])


def model_fields(robot):
    """Every ffwd_model field of `robot` (see the module doc)."""
    joints = robot.joints
    n = len(joints)
    inertia = np.array([j.link.params10() for j in joints], dtype=float).reshape(n, 10)
    payload = payload_params(robot)
    # the C core adds payload to body tool_parent; that must give the model's body_params()
    total = inertia.copy()
    total[robot.tool.parent] += payload
    expected = robot.body_params()
    if not np.allclose(total, expected, rtol=1e-12, atol=1e-12 * max(1.0, np.abs(expected).max())):
        raise AssertionError("pack: body + payload parameters differ from robot.body_params()")

    has_limits = np.zeros(n, dtype=np.uint32)
    limits = np.zeros((n, 6))
    for i, j in enumerate(joints):
        lim = j.limits
        for name, bit in LIMIT_BITS.items():
            if getattr(lim, name) is not None:
                has_limits[i] |= bit
        if lim.position is not None:
            limits[i, 0], limits[i, 1] = lim.position
        for k, name in enumerate(("velocity", "acceleration", "jerk", "torque")):
            value = getattr(lim, name)
            if value is not None:
                limits[i, 2 + k] = value

    return ModelFields(
        dof=n,
        gravity=np.array(robot.gravity, dtype=float),
        type=np.array([JOINT_TYPE[j.type] for j in joints], dtype=np.int32),
        parent=np.array([j.parent for j in joints], dtype=np.int32),
        rot=np.array([np.asarray(j.rotation, dtype=float).reshape(9) for j in joints]).reshape(n, 9),
        pos=np.array([j.translation for j in joints], dtype=float).reshape(n, 3),
        axis=np.array([j.axis for j in joints], dtype=float).reshape(n, 3),
        inertia=inertia,
        armature=np.array([j.drive.armature for j in joints], dtype=float),
        viscous=np.array([j.drive.viscous for j in joints], dtype=float),
        coulomb=np.array([j.drive.coulomb for j in joints], dtype=float),
        coulomb_band=np.array([j.drive.coulomb_band for j in joints], dtype=float),
        has_limits=has_limits,
        limits=limits,
        tool_parent=int(robot.tool.parent),
        tool_rot=np.asarray(robot.tool.rotation, dtype=float).reshape(9).copy(),
        tool_pos=np.asarray(robot.tool.translation, dtype=float).copy(),
        payload=payload,
    )
