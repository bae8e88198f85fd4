"""URDF import: an invented robot written as URDF equals the same robot in TOML."""
import math

import numpy as np
import pytest

from ffwd import ModelError
from ffwd.errors import ModelWarning
from ffwd.formats.toml import loads_toml
from ffwd.formats.urdf import loads_urdf

# An invented 3-axis bench arm ("Wren B3"): turret, continuous elbow, a slide, fixed flange.
URDF = """<?xml version="1.0"?>
<robot name="wren_b3">
  <link name="base_link">
    <inertial><mass value="20"/><inertia ixx="1" iyy="1" izz="1" ixy="0" ixz="0" iyz="0"/></inertial>
  </link>
  <link name="upper">
    <inertial>
      <origin xyz="0.2 0 0.05" rpy="0 0.4 0"/>
      <mass value="4.0"/>
      <inertia ixx="0.01" iyy="0.05" izz="0.05" ixy="0.001" ixz="0" iyz="0"/>
    </inertial>
  </link>
  <link name="fore">
    <inertial>
      <origin xyz="0.15 0.01 0" rpy="0.1 0.2 0.3"/>
      <mass value="2.5"/>
      <inertia ixx="0.004" iyy="0.02" izz="0.021" ixy="0" ixz="0.0005" iyz="0"/>
    </inertial>
  </link>
  <link name="carriage">
    <inertial>
      <origin xyz="0 0 0.02"/>
      <mass value="1.2"/>
      <inertia ixx="0.002" iyy="0.002" izz="0.001"/>
    </inertial>
  </link>
  <link name="flange">
    <inertial>
      <origin xyz="0 0 0.01"/>
      <mass value="0.3"/>
      <inertia ixx="0.0002" iyy="0.0002" izz="0.0003"/>
    </inertial>
  </link>
  <joint name="j1" type="revolute">
    <parent link="base_link"/><child link="upper"/>
    <origin xyz="0 0 0.4" rpy="0 0 0.3"/>
    <axis xyz="0 0 1"/>
    <limit lower="-2.5" upper="2.5" effort="120" velocity="2.0"/>
    <dynamics damping="2.0" friction="4.0"/>
  </joint>
  <joint name="j2" type="continuous">
    <parent link="upper"/><child link="fore"/>
    <origin xyz="0.4 0 0" rpy="0.2 0 0"/>
    <axis xyz="0 1 0"/>
    <limit effort="50" velocity="3"/>
    <dynamics damping="0.5" friction="1.2"/>
  </joint>
  <joint name="slide" type="prismatic">
    <parent link="fore"/><child link="carriage"/>
    <origin xyz="0.3 0 0"/>
    <axis xyz="1 0 0"/>
    <limit lower="-0.1" upper="0.2" effort="200" velocity="0.5"/>
  </joint>
  <joint name="flange_fix" type="fixed">
    <parent link="carriage"/><child link="flange"/>
    <origin xyz="0 0 0.05" rpy="3.141592653589793 0 0"/>
  </joint>
</robot>
"""


def rpy(r, p, y):
    """Rz(y) Ry(p) Rx(r): URDF's fixed-axis roll-pitch-yaw (URDF specification, from memory)."""
    c, s = math.cos, math.sin
    Rx = np.array([[1, 0, 0], [0, c(r), -s(r)], [0, s(r), c(r)]])
    Ry = np.array([[c(p), 0, s(p)], [0, 1, 0], [-s(p), 0, c(p)]])
    Rz = np.array([[c(y), -s(y), 0], [s(y), c(y), 0], [0, 0, 1]])
    return Rz @ Ry @ Rx


def inertia_toml(I):
    return (f"{{ xx = {float(I[0, 0])!r}, yy = {float(I[1, 1])!r}, zz = {float(I[2, 2])!r}, "
            f"xy = {float(I[0, 1])!r}, xz = {float(I[0, 2])!r}, yz = {float(I[1, 2])!r} }}")


def native_text():
    # the inertial origin's rotation turns the inertia into link axes: R I R^T
    I_up = rpy(0, 0.4, 0) @ np.array([[0.01, 0.001, 0], [0.001, 0.05, 0], [0, 0, 0.05]]) \
        @ rpy(0, 0.4, 0).T
    I_fore = rpy(0.1, 0.2, 0.3) @ np.array([[0.004, 0, 0.0005], [0, 0.02, 0], [0.0005, 0, 0.021]]) \
        @ rpy(0.1, 0.2, 0.3).T
    return f"""format = 1
[robot]
name = "wren_b3"

[[joint]]
name = "j1"
type = "revolute"
origin = {{ xyz = [0.0, 0.0, 0.4], rpy = [0.0, 0.0, 0.3] }}
axis = [0.0, 0.0, 1.0]
link = {{ mass = 4.0, com = [0.2, 0.0, 0.05], inertia = {inertia_toml(I_up)} }}
drive = {{ viscous = 2.0, coulomb = 4.0 }}
limits = {{ position = [-2.5, 2.5], torque = 120.0, velocity = 2.0 }}

[[joint]]
name = "j2"
type = "revolute"
origin = {{ xyz = [0.4, 0.0, 0.0], rpy = [0.2, 0.0, 0.0] }}
axis = [0.0, 1.0, 0.0]
link = {{ mass = 2.5, com = [0.15, 0.01, 0.0], inertia = {inertia_toml(I_fore)} }}
drive = {{ viscous = 0.5, coulomb = 1.2 }}
limits = {{ torque = 50.0, velocity = 3.0 }}

[[joint]]
name = "slide"
type = "prismatic"
origin = {{ xyz = [0.3, 0.0, 0.0] }}
axis = [1.0, 0.0, 0.0]
link = {{ mass = 1.2, com = [0.0, 0.0, 0.02], inertia = {{ xx = 0.002, yy = 0.002, zz = 0.001 }} }}
limits = {{ position = [-0.1, 0.2], torque = 200.0, velocity = 0.5 }}

[[joint]]
name = "flange_fix"
type = "fixed"
origin = {{ xyz = [0.0, 0.0, 0.05], rpy = [3.141592653589793, 0.0, 0.0] }}
link = {{ mass = 0.3, com = [0.0, 0.0, 0.01], inertia = {{ xx = 0.0002, yy = 0.0002, zz = 0.0003 }} }}
"""


def load_urdf_quiet(text, **kw):
    with pytest.warns(ModelWarning, match="root link 'base_link'"):
        return loads_urdf(text, file="wren.urdf", **kw)


def test_urdf_equals_native():
    u = load_urdf_quiet(URDF)
    n = loads_toml(native_text())
    assert u.name == "wren_b3" and u.joint_names == ("j1", "j2", "slide")
    assert np.allclose(u.parameter_vector(), n.parameter_vector(), rtol=1e-13, atol=1e-15)
    for a, b in zip(u.joints, n.joints):
        assert a.type == b.type and a.parent == b.parent
        assert np.allclose(a.rotation, b.rotation, atol=1e-15)
        assert np.allclose(a.translation, b.translation, atol=1e-15)
        assert np.allclose(a.axis, b.axis)
        for key in ("position", "velocity", "acceleration", "jerk", "torque"):
            assert getattr(a.limits, key) == getattr(b.limits, key)
    # tool: the flange link's frame, merged into the slide's body
    assert u.tool.parent == n.tool.parent == 2
    assert np.allclose(u.tool.rotation, n.tool.rotation, atol=1e-15)
    assert np.allclose(u.tool.translation, [0, 0, 0.05])
    assert u.joints[1].limits.position is None        # continuous
    assert u.joints[0].link.mass == 4.0 and u.joints[2].link.mass == pytest.approx(1.5)


def test_urdf_inverse_dynamics_matches_native():
    twin = pytest.importorskip("ffwd.twin")
    u = load_urdf_quiet(URDF)
    n = loads_toml(native_text())
    rng = np.random.default_rng(5)
    for _ in range(10):
        q, qd, qdd = (rng.uniform(-1, 1, 3) for _ in range(3))
        assert np.allclose(twin.inverse_dynamics(u, q, qd, qdd),
                           twin.inverse_dynamics(n, q, qd, qdd), rtol=1e-12, atol=1e-12)


def test_inertial_rotation_applied():
    # without the rotation the inertia would differ: the check above is not vacuous
    u = load_urdf_quiet(URDF)
    assert abs(u.joints[0].link.inertia[0, 2]) > 1e-3


def test_tool_option_and_gravity():
    u = load_urdf_quiet(URDF, tool="fore", gravity=[0, 0, -9.8])
    assert u.tool.parent == 1 and np.allclose(u.tool.translation, 0)
    assert np.allclose(u.gravity, [0, 0, -9.8])
    with pytest.raises(ModelError) as info:
        load_urdf_quiet(URDF, tool="nowhere")
    assert info.value.field == "tool"


def test_root_without_inertia_is_quiet():
    text = URDF.replace('<inertial><mass value="20"/><inertia ixx="1" iyy="1" izz="1" ixy="0" ixz="0" iyz="0"/></inertial>', "")
    import warnings
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        loads_urdf(text)


def err(text):
    with pytest.raises(ModelError) as info:
        with pytest.warns(ModelWarning):
            loads_urdf(text, file="wren.urdf")
    return info.value


def err_quiet(text):
    with pytest.raises(ModelError) as info:
        loads_urdf(text, file="wren.urdf")
    return info.value


def test_mimic_refused():
    e = err_quiet(URDF.replace('<dynamics damping="0.5" friction="1.2"/>',
                               '<mimic joint="j1" multiplier="1"/>'))
    assert (e.file, e.joint, e.field, e.value) == ("wren.urdf", "j2", "mimic", "j1")
    assert "mimic" in str(e)


def test_closed_loop_refused():
    loop = URDF.replace("</robot>", """  <joint name="tie" type="revolute">
    <parent link="upper"/><child link="carriage"/><axis xyz="0 0 1"/>
  </joint>
</robot>""")
    e = err_quiet(loop)
    assert (e.joint, e.field, e.value) == ("tie", "child.link", "carriage")
    assert "closed loop" in str(e)


def test_bad_inputs_located():
    e = err(URDF.replace('<axis xyz="0 1 0"/>', '<axis xyz="0 1"/>'))
    assert (e.joint, e.field) == ("j2", "axis.xyz")
    e = err_quiet(URDF.replace('type="continuous"', 'type="floating"'))
    assert (e.joint, e.field, e.value) == ("j2", "type", "floating")
    e = err_quiet(URDF.replace('<child link="fore"/>', '<child link="for"/>'))
    assert (e.joint, e.field, e.value) == ("j2", "child.link", "for")
    e = err(URDF.replace('<mass value="2.5"/>', '<mass value="-2.5"/>'))
    assert (e.file, e.joint, e.field) == ("wren.urdf", "j2", "link.mass")
    e = err(URDF.replace('velocity="0.5"', 'velocity="fast"'))
    assert (e.joint, e.field, e.value) == ("slide", "limit.velocity", "fast")
    e = err(URDF.replace('lower="-2.5" upper="2.5"', 'lower="2.5" upper="-2.5"'))
    assert (e.joint, e.field) == ("j1", "limits.position")
    e = err_quiet("<robot name='x'><link name='a'/></robot>")
    assert e.field == "joint"
    e = err_quiet("<robot><link name='a'>")
    assert "not valid XML" in str(e)
    e = err_quiet(URDF.replace('<link name="flange">', '<link name="spare"/>\n  <link name="flange">'))
    assert "root" in str(e)
