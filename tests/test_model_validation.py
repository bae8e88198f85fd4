"""One test per validation rule: the error names the file, the joint and the field."""
import warnings

import numpy as np
import pytest

from ffwd import ModelError
from ffwd.errors import ModelWarning
from ffwd.formats.toml import loads_toml
from ffwd.model import MAX_DOF, Drive, Joint, Limits, Link, Payload, Robot, Tool

HEAD = """format = 1
[robot]
name = "rig"
"""


def joint_text(name="j1", mass="2.0", inertia="{ xx = 0.02, yy = 0.02, zz = 0.01 }",
               axis="[0.0, 0.0, 1.0]", drive="", limits="", extra=""):
    return f"""
[[joint]]
name = "{name}"
type = "revolute"
origin = {{ xyz = [0.0, 0.0, 0.3] }}
axis = {axis}
{extra}
[joint.link]
mass = {mass}
com = [0.0, 0.0, 0.1]
inertia = {inertia}
""" + (f"[joint.drive]\n{drive}\n" if drive else "") + (f"[joint.limits]\n{limits}\n" if limits else "")


def load_error(text):
    with pytest.raises(ModelError) as info:
        loads_toml(text, file="rig.toml")
    return info.value


def assert_located(err, joint, field, value=None):
    assert err.file == "rig.toml"
    assert err.joint == joint
    assert err.field == field
    text = str(err)
    assert text.startswith("rig.toml: ")
    assert f"joint {joint!r}" in text and f"field {field!r}" in text
    assert "\n" not in text
    if value is not None:
        assert err.value == value


def test_good_model_loads():
    r = loads_toml(HEAD + joint_text() + joint_text("j2"), file="rig.toml")
    assert r.dof == 2 and r.joint_names == ("j1", "j2") and r.joints[1].parent == 0


def test_message_format():
    err = ModelError("must be > 0", file="six_axis.toml", joint="j3", field="link.mass", value=-1.0)
    assert str(err) == "six_axis.toml: joint 'j3': field 'link.mass' = -1.0: must be > 0"
    assert str(ModelError("bad", field="x")) == "field 'x': bad"
    assert isinstance(err, ValueError)


@pytest.mark.parametrize("mass", ["-1.0", "0.0"])
def test_mass_positive(mass):
    err = load_error(HEAD + joint_text() + joint_text("j2", mass=mass))
    assert_located(err, "j2", "link.mass", float(mass))
    assert "> 0" in str(err)


@pytest.mark.parametrize("bad", ["nan", "inf", "-inf"])
def test_non_finite_rejected(bad):
    err = load_error(HEAD + joint_text("j1", mass=bad))
    assert_located(err, "j1", "link.mass")
    err = load_error(HEAD + joint_text("j1", axis=f"[0.0, {bad}, 1.0]"))
    assert_located(err, "j1", "axis")
    assert "finite" in str(err)


def test_inertia_positive_definite():
    err = load_error(HEAD + joint_text("j1", inertia="{ xx = 0.02, yy = -0.02, zz = 0.01 }"))
    assert_located(err, "j1", "link.inertia")
    assert "positive definite" in str(err)


def test_inertia_triangle_inequality():
    # principal moments 0.01, 0.01, 0.05: 0.01 + 0.01 < 0.05, impossible for a rigid body
    # (common practice, no source: Ixx + Iyy >= Izz follows from the definitions)
    err = load_error(HEAD + joint_text("j1", inertia="{ xx = 0.01, yy = 0.01, zz = 0.05 }"))
    assert_located(err, "j1", "link.inertia")
    assert "triangle" in str(err)


def test_inertia_symmetric():
    # the TOML form is symmetric by construction; the dataclass checks a given matrix
    I = np.array([[0.02, 0.001, 0.0], [0.0, 0.02, 0.0], [0.0, 0.0, 0.01]])
    with pytest.raises(ModelError) as info:
        Link(1.0, [0, 0, 0], I)
    assert info.value.field == "inertia" and "symmetric" in str(info.value)


def test_axis_non_zero():
    err = load_error(HEAD + joint_text("j1", axis="[0.0, 0.0, 0.0]"))
    assert_located(err, "j1", "axis")
    assert "non-zero" in str(err)


def test_axis_normalised_with_warning():
    with pytest.warns(ModelWarning, match="j1.*norm"):
        r = loads_toml(HEAD + joint_text("j1", axis="[0.0, 0.0, 2.0]"), file="rig.toml")
    assert np.allclose(r.joints[0].axis, [0, 0, 1])
    with warnings.catch_warnings():
        warnings.simplefilter("error")     # a norm within 1e-3 of 1: normalised quietly
        r = loads_toml(HEAD + joint_text("j1", axis="[0.0, 0.0, 1.0005]"), file="rig.toml")
    assert np.linalg.norm(r.joints[0].axis) == pytest.approx(1.0, abs=1e-15)


def test_rotation_orthonormal():
    link = Link(1.0, [0, 0, 0], np.diag([0.01, 0.01, 0.01]))
    for R in (np.diag([1.0, 1.0, 1.1]), np.diag([1.0, 1.0, -1.0])):
        with pytest.raises(ModelError) as info:
            Joint("j4", "revolute", -1, R, [0, 0, 0], [0, 0, 1], link)
        assert info.value.joint == "j4" and info.value.field == "rotation"


def test_joint_type():
    err = load_error(HEAD + joint_text("j1").replace('"revolute"', '"spherical"'))
    assert_located(err, "j1", "type", "spherical")


@pytest.mark.parametrize("key", ["velocity", "acceleration", "jerk", "torque"])
@pytest.mark.parametrize("value", ["0.0", "-3.0"])
def test_limits_positive(key, value):
    err = load_error(HEAD + joint_text("j1", limits=f"{key} = {value}"))
    assert_located(err, "j1", f"limits.{key}", float(value))


def test_position_limits_ordered():
    err = load_error(HEAD + joint_text("j1", limits="position = [1.0, -1.0]"))
    assert_located(err, "j1", "limits.position", [1.0, -1.0])
    assert "min must be < max" in str(err)


@pytest.mark.parametrize("key", ["rotor_inertia", "viscous", "coulomb"])
def test_drive_non_negative(key):
    err = load_error(HEAD + joint_text("j1", drive=f"{key} = -0.5"))
    assert_located(err, "j1", f"drive.{key}", -0.5)
    assert ">= 0" in str(err)


@pytest.mark.parametrize("key", ["coulomb_band", "gear_ratio"])
def test_drive_positive(key):
    err = load_error(HEAD + joint_text("j1", drive=f"{key} = 0.0"))
    assert_located(err, "j1", f"drive.{key}", 0.0)


def test_parent_unknown_named():
    err = load_error(HEAD + joint_text() + joint_text("j2", extra='parent = "j_1"'))
    assert_located(err, "j2", "parent", "j_1")
    assert "did you mean 'j1'" in str(err)


def test_parent_must_come_first():
    err = load_error(HEAD + joint_text("j1", extra='parent = "j2"') + joint_text("j2"))
    assert_located(err, "j1", "parent", "j2")
    link = Link(1.0, [0, 0, 0], np.diag([0.01, 0.01, 0.01]))
    js = (Joint("a", "revolute", -1, np.eye(3), [0, 0, 0], [0, 0, 1], link),
          Joint("b", "revolute", 1, np.eye(3), [0, 0, 0], [0, 0, 1], link))
    with pytest.raises(ModelError) as info:
        Robot("r", [0, 0, -9.81], js, source="r.toml")
    assert (info.value.file, info.value.joint, info.value.field) == ("r.toml", "b", "parent")


def test_duplicate_joint_name():
    err = load_error(HEAD + joint_text() + joint_text("j1"))
    assert_located(err, "j1", "name")


def test_too_many_joints():
    text = HEAD + "".join(joint_text(f"j{k}") for k in range(MAX_DOF + 1))
    with pytest.raises(ModelError) as info:
        loads_toml(text, file="rig.toml")
    assert info.value.file == "rig.toml" and str(MAX_DOF) in str(info.value)
    assert loads_toml(HEAD + "".join(joint_text(f"j{k}") for k in range(MAX_DOF))).dof == MAX_DOF


def test_payload_checks():
    base = HEAD + joint_text()
    err = load_error(base + "[payload]\nmass = -2.0\n")
    assert (err.file, err.field, err.value) == ("rig.toml", "payload.mass", -2.0)
    err = load_error(base + "[payload]\nmass = 2.0\nrated_mass = 0.0\n")
    assert err.field == "payload.rated_mass"
    err = load_error(base + "[payload]\nmass = 2.0\ninertia = { xx = 0.01, yy = 0.01, zz = 0.05 }\n")
    assert err.field == "payload.inertia" and "triangle" in str(err)
    r = loads_toml(base + "[payload]\nmass = 0.0\n")        # mass 0 = no payload
    assert np.all(r.payload_params() == 0)
    with pytest.warns(ModelWarning, match="exceeds the rated"):
        r = loads_toml(base + "[payload]\nmass = 12.0\nrated_mass = 10.0\n", file="rig.toml")
    assert any("exceeds the rated" in w for w in r.warnings())


def test_tool_parent_unknown():
    err = load_error(HEAD + joint_text() + '[tool]\nparent = "j9"\n')
    assert (err.file, err.field, err.value) == ("rig.toml", "tool.parent", "j9")


def test_gravity_checked():
    err = load_error(HEAD.replace('name = "rig"', 'name = "rig"\ngravity = [0.0, 0.0]') + joint_text())
    assert err.field == "robot.gravity"


def test_direct_constructors_locate_fields():
    with pytest.raises(ModelError, match="'velocity' = -1.0"):
        Limits(velocity=-1.0)
    with pytest.raises(ModelError, match="'coulomb_band'"):
        Drive(coulomb_band=-0.1)
    with pytest.raises(ModelError, match="'mass'"):
        Payload(-1.0)
    with pytest.raises(ModelError, match="'rotation'"):
        Tool(0, np.zeros((3, 3)))
