"""The native TOML format: schema errors, defaults, rpy, fixed joints, trees."""
import math

import numpy as np
import pytest

import ffwd
from ffwd import ModelError
from ffwd.formats.toml import loads_toml

HEAD = 'format = 1\n[robot]\nname = "rig"\n'
J1 = """
[[joint]]
name = "j1"
type = "revolute"
origin = { xyz = [0.0, 0.0, 0.3] }
axis = [0.0, 0.0, 1.0]
[joint.link]
mass = 3.0
com = [0.1, 0.0, 0.05]
inertia = { xx = 0.02, yy = 0.03, zz = 0.025, xy = 0.001 }
"""


def err_of(text):
    with pytest.raises(ModelError) as info:
        loads_toml(text, file="rig.toml")
    return info.value


def test_unknown_key_suggests_nearest():
    e = err_of(HEAD + J1.replace("mass = 3.0", "mas = 3.0"))
    assert (e.joint, e.field) == ("j1", "link.mas")
    assert "did you mean 'mass'?" in str(e)
    e = err_of(HEAD + J1 + "[joint.limits]\nvelocty = 2.0\n")
    assert "did you mean 'velocity'?" in str(e) and e.field == "limits.velocty"
    e = err_of(HEAD.replace("[robot]", "[robt]"))
    assert "did you mean 'robot'?" in str(e)
    e = err_of(HEAD + J1.replace("origin = { xyz", "origin = { xzy"))
    assert "did you mean 'xyz'?" in str(e) and e.field == "origin.xzy"


def test_missing_field_named():
    e = err_of(HEAD + J1.replace("mass = 3.0\n", ""))
    assert (e.file, e.joint, e.field) == ("rig.toml", "j1", "link.mass")
    assert "missing" in str(e)
    e = err_of(HEAD + J1.replace('axis = [0.0, 0.0, 1.0]\n', ""))
    assert e.field == "axis" and "missing" in str(e)
    e = err_of(HEAD.replace('name = "rig"\n', "") + J1)
    assert e.field == "robot.name"
    e = err_of(HEAD.replace("format = 1\n", "") + J1)
    assert e.field == "format"
    e = err_of(HEAD)
    assert e.field == "joint"


def test_wrong_types_named():
    e = err_of(HEAD + J1.replace("mass = 3.0", 'mass = "3.0"'))
    assert e.field == "link.mass" and "must be a number, got str" in str(e)
    e = err_of(HEAD + J1.replace("axis = [0.0, 0.0, 1.0]", "axis = [0.0, 1.0]"))
    assert e.field == "axis" and "3 numbers" in str(e)
    e = err_of(HEAD + J1.replace("mass = 3.0", "mass = true"))
    assert e.field == "link.mass"
    e = err_of(HEAD + J1 + "[joint.limits]\nposition = 1.0\n")
    assert e.field == "limits.position" and "2 numbers" in str(e)


def test_format_version_and_bad_toml():
    e = err_of(HEAD.replace("format = 1", "format = 2") + J1)
    assert e.field == "format" and e.value == 2
    e = err_of(HEAD + "[[joint]\n")
    assert "not valid TOML" in str(e) and e.file == "rig.toml"


def test_defaults():
    r = loads_toml(HEAD + J1)
    assert np.allclose(r.gravity, [0, 0, -9.81])
    assert r.tool.parent == 0 and np.allclose(r.tool.rotation, np.eye(3))
    assert r.payload.mass == 0.0
    d = r.joints[0].drive
    assert (d.gear_ratio, d.rotor_inertia, d.viscous, d.coulomb) == (1.0, 0.0, 0.0, 0.0)
    assert r.joints[0].limits.given() == []
    with pytest.raises(Exception):          # frozen dataclass, read-only arrays
        r.joints[0].link.com[0] = 1.0
    with pytest.raises(Exception):
        r.joints[0].link.mass = 1.0


def test_rpy_is_fixed_axis_roll_pitch_yaw():
    roll, pitch, yaw = 0.3, -0.7, 1.1
    r = loads_toml(HEAD + J1.replace("origin = { xyz = [0.0, 0.0, 0.3] }",
                                     f"origin = {{ xyz = [1, 2, 3], rpy = [{roll}, {pitch}, {yaw}] }}"))
    # R = Rz(yaw) Ry(pitch) Rx(roll), elementary rotations written out here (common
    # practice, from memory)
    c, s = math.cos, math.sin
    Rx = np.array([[1, 0, 0], [0, c(roll), -s(roll)], [0, s(roll), c(roll)]])
    Ry = np.array([[c(pitch), 0, s(pitch)], [0, 1, 0], [-s(pitch), 0, c(pitch)]])
    Rz = np.array([[c(yaw), -s(yaw), 0], [s(yaw), c(yaw), 0], [0, 0, 1]])
    assert np.allclose(r.joints[0].rotation, Rz @ Ry @ Rx, atol=1e-15)
    assert np.allclose(r.joints[0].translation, [1, 2, 3])


def test_inertia_entries_are_matrix_entries():
    r = loads_toml(HEAD + J1)
    I = r.joints[0].link.inertia
    assert I[0, 1] == I[1, 0] == 0.001 and I[0, 2] == 0.0
    p = r.body_params()[0]
    # about the origin: I_o = I_c + m (c.c E - c c^T) (parallel-axis theorem, from memory)
    assert p[5] == pytest.approx(0.001 - 3.0 * 0.1 * 0.0)           # xy: c_y = 0
    assert p[6] == pytest.approx(0.0 - 3.0 * 0.1 * 0.05)            # xz
    assert p[4] == pytest.approx(0.02 + 3.0 * 0.05 ** 2)            # xx


FIXED = HEAD + J1 + """
[[joint]]
name = "bracket"
type = "fixed"
origin = { xyz = [0.1, 0.0, 0.2], rpy = [0.0, 0.0, 1.5707963267948966] }
[joint.link]
mass = 1.0
com = [0.05, 0.0, 0.0]
inertia = { xx = 0.001, yy = 0.002, zz = 0.0025 }

[[joint]]
name = "j2"
type = "revolute"
origin = { xyz = [0.0, 0.1, 0.0] }
axis = [1.0, 0.0, 0.0]
[joint.link]
mass = 2.0
com = [0.2, 0.0, 0.0]
inertia = { xx = 0.002, yy = 0.02, zz = 0.02 }

[tool]
parent = "bracket"
origin = { xyz = [0.0, 0.0, 0.05] }
"""


def test_fixed_joint_merged_equals_hand_merged():
    r = loads_toml(FIXED, file="rig.toml")
    assert r.joint_names == ("j1", "j2")
    # Hand merge (parallel-axis theorem, any rigid-body dynamics textbook, from memory):
    # bracket frame in j1's frame: yaw 90 deg, at (0.1, 0, 0.2).
    R = np.array([[0.0, -1, 0], [1, 0, 0], [0, 0, 1]])
    p = np.array([0.1, 0.0, 0.2])
    m1, c1, I1 = 3.0, np.array([0.1, 0.0, 0.05]), np.array([[0.02, 0.001, 0], [0.001, 0.03, 0], [0, 0, 0.025]])
    m2, c2 = 1.0, R @ [0.05, 0.0, 0.0] + p          # = (0.1, 0.05, 0.2)
    I2 = R @ np.diag([0.001, 0.002, 0.0025]) @ R.T
    m = m1 + m2
    c = (m1 * c1 + m2 * c2) / m

    def shift(I, mass, d):
        return I + mass * (d @ d * np.eye(3) - np.outer(d, d))
    I = shift(I1, m1, c1 - c) + shift(I2, m2, c2 - c)
    link = f"""mass = {float(m)!r}
com = [{float(c[0])!r}, {float(c[1])!r}, {float(c[2])!r}]
inertia = {{ xx = {float(I[0, 0])!r}, yy = {float(I[1, 1])!r}, zz = {float(I[2, 2])!r}, xy = {float(I[0, 1])!r}, xz = {float(I[0, 2])!r}, yz = {float(I[1, 2])!r} }}
"""
    merged = HEAD + J1.split("[joint.link]")[0] + "[joint.link]\n" + link + """
[[joint]]
name = "j2"
type = "revolute"
origin = { xyz = [0.0, 0.0, 0.2], rpy = [0.0, 0.0, 1.5707963267948966] }
axis = [1.0, 0.0, 0.0]
[joint.link]
mass = 2.0
com = [0.2, 0.0, 0.0]
inertia = { xx = 0.002, yy = 0.02, zz = 0.02 }
[tool]
parent = "j1"
origin = { xyz = [0.1, 0.0, 0.25], rpy = [0.0, 0.0, 1.5707963267948966] }
"""
    h = loads_toml(merged)
    assert np.allclose(r.body_params(), h.body_params(), rtol=0, atol=1e-14)
    for a, b in zip(r.joints, h.joints):
        assert a.parent == b.parent
        assert np.allclose(a.rotation, b.rotation, atol=1e-15)
        assert np.allclose(a.translation, b.translation, atol=1e-15)
        assert np.allclose(a.axis, b.axis)
    assert r.tool.parent == h.tool.parent == 0
    assert np.allclose(r.tool.rotation, h.tool.rotation, atol=1e-15)
    assert np.allclose(r.tool.translation, h.tool.translation, atol=1e-15)


def test_fixed_joint_rules():
    e = err_of(FIXED.replace('type = "fixed"', 'type = "fixed"\naxis = [0.0, 0.0, 1.0]'))
    assert (e.joint, e.field) == ("bracket", "axis")
    # a fixed joint on the base is allowed; its mass is ignored with a warning
    text = HEAD + """
[[joint]]
name = "pedestal"
type = "fixed"
origin = { xyz = [0.0, 0.0, 0.5] }
[joint.link]
mass = 50.0
inertia = { xx = 1.0, yy = 1.0, zz = 1.0 }
""" + J1
    with pytest.warns(ffwd.errors.ModelWarning, match="pedestal"):
        r = loads_toml(text)
    assert r.dof == 1 and np.allclose(r.joints[0].translation, [0, 0, 0.8])
    e = err_of(HEAD + """
[[joint]]
name = "pedestal"
type = "fixed"
""")
    assert "revolute or prismatic" in str(e)


def test_tree_parents():
    arm = """
[[joint]]
name = "{n}"
type = "revolute"
parent = "{p}"
origin = {{ xyz = [0.0, {y}, 0.4] }}
axis = [1.0, 0.0, 0.0]
[joint.link]
mass = 1.0
com = [0.0, 0.1, 0.0]
inertia = {{ xx = 0.01, yy = 0.002, zz = 0.01 }}
"""
    text = HEAD + J1 + arm.format(n="l1", p="j1", y=0.2) + arm.format(n="l2", p="l1", y=0.3) \
        + arm.format(n="r1", p="j1", y=-0.2) + arm.format(n="r2", p="r1", y=-0.3) \
        + '[tool]\nparent = "l2"\n'
    r = loads_toml(text)
    assert [j.parent for j in r.joints] == [-1, 0, 1, 0, 3]
    assert r.tool.parent == 2
    # default parent is the previous joint; "base" starts another chain from the base
    r = loads_toml(HEAD + J1 + arm.format(n="b1", p="base", y=1.0).replace('parent = "base"\n', "")
                   + arm.format(n="b2", p="base", y=1.0))
    assert [j.parent for j in r.joints] == [-1, 0, -1]


def test_load_by_extension(tmp_path):
    p = tmp_path / "rig.toml"
    p.write_text(HEAD + J1.replace("mass = 3.0", "mass = -3.0"))
    with pytest.raises(ModelError) as info:
        ffwd.load(p)
    assert info.value.file == str(p) and info.value.joint == "j1"
    with pytest.raises(ModelError, match="unknown model file type"):
        ffwd.load(tmp_path / "rig.yaml")
    with pytest.raises(OSError):
        ffwd.load(tmp_path / "missing.toml")
