"""Write a Robot as a native model file (TOML, format = 1; docs/model-format.md).

Every joint is written with `origin = {xyz, rpy}` and `axis`; numbers with repr(), so
they read back bit for bit (rpy angles round-trip to the rotation within ~1e-16).
"""
import math
import os

import numpy as np


def rpy_of(R):
    """(roll, pitch, yaw) with R = Rz(yaw) Ry(pitch) Rx(roll)."""
    R = np.asarray(R, dtype=float)
    pitch = math.asin(max(-1.0, min(1.0, -R[2, 0])))
    if abs(R[2, 0]) < 1.0 - 1e-12:
        roll = math.atan2(R[2, 1], R[2, 2])
        yaw = math.atan2(R[1, 0], R[0, 0])
    else:                                   # gimbal lock: put everything into yaw
        roll = 0.0
        yaw = math.atan2(-R[0, 1], R[1, 1])
    return roll, pitch, yaw


def _num(x):
    x = float(x)
    return "0.0" if x == 0 else repr(x)


def _vec(v):
    return "[" + ", ".join(_num(x) for x in np.ravel(v)) + "]"


def _origin(R, p):
    return f"{{ xyz = {_vec(p)}, rpy = {_vec(rpy_of(R))} }}"


def _inertia(I):
    return (f"{{ xx = {_num(I[0, 0])}, yy = {_num(I[1, 1])}, zz = {_num(I[2, 2])}, "
            f"xy = {_num(I[0, 1])}, xz = {_num(I[0, 2])}, yz = {_num(I[1, 2])} }}")


def _string(s):
    return '"' + str(s).replace("\\", "\\\\").replace('"', '\\"') + '"'


def toml_text(robot, comment=None):
    """The native TOML text of `robot`."""
    out = []
    for line in (comment or "").splitlines():
        out.append(f"# {line}".rstrip())
    out += ["format = 1", "", "[robot]", f"name = {_string(robot.name)}",
            f"gravity = {_vec(robot.gravity)}"]
    names = robot.joint_names
    for j in robot.joints:
        L, d, lim = j.link, j.drive, j.limits
        out += ["", "[[joint]]", f"name = {_string(j.name)}", f"type = {_string(j.type)}",
                f"parent = {_string('base' if j.parent < 0 else names[j.parent])}",
                f"origin = {_origin(j.rotation, j.translation)}", f"axis = {_vec(j.axis)}",
                "[joint.link]", f"mass = {_num(L.mass)}", f"com = {_vec(L.com)}",
                f"inertia = {_inertia(L.inertia)}",
                "[joint.drive]", f"gear_ratio = {_num(d.gear_ratio)}",
                f"rotor_inertia = {_num(d.rotor_inertia)}", f"viscous = {_num(d.viscous)}",
                f"coulomb = {_num(d.coulomb)}", f"coulomb_band = {_num(d.coulomb_band)}"]
        given = lim.given()
        if given:
            out.append("[joint.limits]")
            for n in given:
                v = getattr(lim, n)
                out.append(f"{n} = {_vec(v) if n == 'position' else _num(v)}")
    t = robot.tool
    out += ["", "[tool]", f"parent = {_string(names[t.parent])}",
            f"origin = {_origin(t.rotation, t.translation)}"]
    p = robot.payload
    out += ["", "[payload]", f"mass = {_num(p.mass)}"]
    if p.mass > 0:
        out += [f"com = {_vec(p.com)}", f"inertia = {_inertia(p.inertia)}"]
    if p.rated_mass is not None:
        out.append(f"rated_mass = {_num(p.rated_mass)}")
    return "\n".join(out) + "\n"


def dump_toml(robot, path, comment=None):
    """Write `robot` to `path` in the native format; returns the path."""
    path = os.fspath(path)
    with open(path, "w") as fh:
        fh.write(toml_text(robot, comment))
    return path
