"""Inertial parameters: parameter_vector layout and round trip, payload lumping."""
import os

import numpy as np
import pytest

import ffwd
from ffwd import ModelError
from ffwd.errors import ModelWarning

ROBOTS = os.path.join(os.path.dirname(__file__), "..", "examples", "robots")


def six():
    return ffwd.load(os.path.join(ROBOTS, "six_axis.toml"))


def test_parameter_vector_layout():
    r = six()
    theta = r.parameter_vector()
    assert theta.shape == (13 * r.dof,)
    bp = r.body_params()
    for k, j in enumerate(r.joints):
        t = theta[13 * k:13 * k + 13]
        assert np.array_equal(t[:10], bp[k])
        assert t[10] == pytest.approx(j.drive.gear_ratio ** 2 * j.drive.rotor_inertia)
        assert (t[11], t[12]) == (j.drive.viscous, j.drive.coulomb)


def test_params10_definition():
    # m, m c, inertia about the joint origin: I_o = I_c + m (|c|^2 E - c c^T)
    # (parallel-axis theorem, any rigid-body dynamics textbook, from memory)
    r = six()
    for j, p in zip(r.joints[:-1], r.body_params()[:-1]):
        m, c, Ic = j.link.mass, j.link.com, j.link.inertia
        Io = Ic + m * (c @ c * np.eye(3) - np.outer(c, c))
        want = [m, m * c[0], m * c[1], m * c[2], Io[0, 0], Io[0, 1], Io[0, 2], Io[1, 1],
                Io[1, 2], Io[2, 2]]
        assert np.allclose(p, want, rtol=1e-14, atol=1e-15)


def test_round_trip():
    r = six()
    theta = r.parameter_vector()
    r2 = r.with_parameters(theta)
    assert r2.payload.mass == 0.0 and r2.payload.rated_mass == r.payload.rated_mass
    assert np.allclose(r2.parameter_vector(), theta, rtol=1e-12, atol=1e-14)
    # the payload moved into the last body: its mass is the link's plus the payload's
    assert r2.joints[-1].link.mass == pytest.approx(0.6 + 5.0)
    # other drives kept, rotor inertia from the armature
    assert r2.joints[1].drive.gear_ratio == 160.0
    assert r2.joints[1].drive.rotor_inertia == pytest.approx(3e-4)
    # changed values come through
    t = theta.copy()
    t[13 * 2 + 11] = 7.5
    t[13 * 3:13 * 3 + 10] *= 2.0
    r3 = r.with_parameters(t)
    assert r3.joints[2].drive.viscous == 7.5
    assert r3.joints[3].link.mass == pytest.approx(12.0)
    assert np.allclose(r3.joints[3].link.com, r.joints[3].link.com)


def test_with_parameters_inconsistent_is_located():
    r = six()
    theta = r.parameter_vector()
    t = theta.copy()
    t[13 * 2] = -1.0                        # j3 mass
    with pytest.raises(ModelError) as info:
        r.with_parameters(t)
    e = info.value
    assert e.joint == "j3" and e.field.startswith("theta[26]") and e.file.endswith("six_axis.toml")
    t = theta.copy()
    # inertia about the origin too small for the first moment: the inertia about the
    # centre of mass is then not positive definite
    t[13 * 1 + 4] = 0.0
    with pytest.raises(ModelError, match="physically consistent") as info:
        r.with_parameters(t)
    assert info.value.joint == "j2"
    t = theta.copy()
    t[13 * 4 + 12] = -2.0                   # j5 coulomb
    with pytest.raises(ModelError) as info:
        r.with_parameters(t)
    assert info.value.joint == "j5" and "coulomb" in info.value.field
    with pytest.raises(ModelError):
        r.with_parameters(theta[:-1])
    t = theta.copy()
    t[5] = np.nan
    with pytest.raises(ModelError, match="finite"):
        r.with_parameters(t)


def test_payload_lumping_parallel_axis():
    # The payload (com and inertia in the tool frame) adds to the tool parent's body.
    # Expected value built here from the parallel-axis theorem and the rotation of an
    # inertia tensor, I' = R I R^T (any rigid-body dynamics textbook, from memory).
    r = six()
    empty = r.with_payload(0.0)
    m, pc = 4.0, np.array([0.01, -0.02, 0.09])
    Ip = np.array([[0.02, 0.001, 0.0], [0.001, 0.03, 0.002], [0.0, 0.002, 0.025]])
    loaded = r.with_payload(m, pc, Ip)
    R, t = r.tool.rotation, r.tool.translation
    c = R @ pc + t                                   # payload com in the j6 frame
    Ic = R @ Ip @ R.T
    Io = Ic + m * (c @ c * np.eye(3) - np.outer(c, c))
    want = np.array([m, *(m * c), Io[0, 0], Io[0, 1], Io[0, 2], Io[1, 1], Io[1, 2], Io[2, 2]])
    diff = loaded.body_params() - empty.body_params()
    assert np.allclose(diff[-1], want, rtol=1e-12, atol=1e-15)
    assert np.all(diff[:-1] == 0)
    # 6-entry form (xx, xy, xz, yy, yz, zz) is the same payload
    six_entries = [Ip[0, 0], Ip[0, 1], Ip[0, 2], Ip[1, 1], Ip[1, 2], Ip[2, 2]]
    assert np.allclose(r.with_payload(m, pc, six_entries).body_params(), loaded.body_params())
    # the tool frame turns the payload: rated example has tool z along j6's x axis
    assert np.allclose(r.payload_params()[1:4], 5.0 * (np.array([0.02 + 0.08, 0, 0])))


def test_with_payload_checks_and_warns():
    r = six()
    with pytest.raises(ModelError) as info:
        r.with_payload(-1.0)
    assert info.value.field == "payload.mass"
    with pytest.warns(ModelWarning, match="exceeds the rated 10 kg"):
        heavy = r.with_payload(12.0, [0, 0, 0.1])
    assert "payload 12 kg exceeds the rated 10 kg" in heavy.describe()


def test_describe_and_warnings():
    r = six()
    text = r.describe()
    assert "6 joints" in text and "j3 revolute on j2" in text and "payload 5 kg" in text
    assert r.warnings() == []
    # a link whose inertia is given in g cm^2 by mistake: far below m*(1 mm)^2
    text = open(os.path.join(ROBOTS, "planar3_vertical.toml")).read()
    text = text.replace("inertia = { xx = 0.0012, yy = 0.011017, zz = 0.011017 }",
                        "inertia = { xx = 1.2e-7, yy = 1.1e-6, zz = 1.1e-6 }")
    odd = ffwd.formats.toml.loads_toml(text)
    assert any("j3" in w and "principal moment" in w for w in odd.warnings())
    assert "warning: joint 'j3'" in odd.describe()


# ---- properties on random robots (tests/strategies.py) ----------------------------
from hypothesis import given  # noqa: E402

from strategies import robots  # noqa: E402


@given(robots(max_dof=8))
def test_round_trip_random_robots(r):
    theta = r.parameter_vector()
    r2 = r.with_parameters(theta)
    scale = max(1.0, float(np.abs(theta).max()))
    assert np.allclose(r2.parameter_vector(), theta, rtol=1e-9, atol=1e-12 * scale)
    assert np.allclose(r2.body_params(), r.body_params(), rtol=1e-9, atol=1e-12 * scale)


@given(robots(max_dof=6))
def test_payload_adds_only_to_tool_parent(r):
    empty = r.with_payload(0.0)
    diff = r.body_params() - empty.body_params()
    others = np.delete(diff, r.tool.parent, axis=0)
    assert np.all(others == 0)
    assert diff[r.tool.parent, 0] == pytest.approx(r.payload.mass)
