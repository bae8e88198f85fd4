"""Text encodings of the files ffwd reads: UTF-8, with or without a byte-order mark.

A file saved "as UTF-8 with BOM" (some editors on some systems do so) reads the same as
without it; a URDF may declare another encoding in its XML declaration (XML 1.0, section
4.3.3, from memory). Files that are not UTF-8 are refused in tests/test_bad_input.py.
Expected behaviour: common practice, no source.
"""
import os

import numpy as np
import pytest

import ffwd
from ffwd.trajio import read_trajectory

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
EXAMPLES = os.path.join(ROOT, "examples", "robots")
BOM = b"\xef\xbb\xbf"

URDF = """<robot name="r{e}g">
  <link name="base"/>
  <link name="l1"><inertial><mass value="2.0"/><origin xyz="0 0 0.1"/>
    <inertia ixx="0.02" iyy="0.02" izz="0.01"/></inertial></link>
  <joint name="j{e}1" type="revolute"><parent link="base"/><child link="l1"/>
    <origin xyz="0 0 0.3"/><axis xyz="0 0 1"/>
    <limit lower="-2" upper="2" effort="50" velocity="0"/></joint>
</robot>
"""


def _same(a, b):
    assert a.joint_names == b.joint_names
    assert np.array_equal(a.parameter_vector(), b.parameter_vector())
    assert np.array_equal(a.gravity, b.gravity)


@pytest.mark.parametrize("name", ["planar3_vertical.toml", "planar3_vertical.dh.csv",
                                  "six_axis_dh.toml"])
def test_byte_order_mark_is_ignored(tmp_path, name):
    src = os.path.join(EXAMPLES, name)
    with open(src, "rb") as f:
        data = f.read()
    assert not data.startswith(BOM)
    copy = tmp_path / name
    copy.write_bytes(BOM + data)
    _same(ffwd.load(copy), ffwd.load(src))


def test_urdf_with_bom_and_with_a_declared_encoding(tmp_path):
    plain = tmp_path / "plain.urdf"
    plain.write_bytes(URDF.format(e="\u00e9").encode("utf-8"))
    bom = tmp_path / "bom.urdf"
    bom.write_bytes(BOM + URDF.format(e="\u00e9").encode("utf-8"))
    latin = tmp_path / "latin.urdf"
    latin.write_bytes(b'<?xml version="1.0" encoding="ISO-8859-1"?>\n'
                      + URDF.format(e="\u00e9").encode("latin-1"))
    robots = [ffwd.load(p) for p in (plain, bom, latin)]
    for r in robots:
        assert r.name == "r\u00e9g" and r.joint_names == ("j\u00e91",)
        _same(r, robots[0])


def test_urdf_zero_effort_and_velocity_mean_no_limit(tmp_path):
    p = tmp_path / "zero.urdf"
    p.write_text(URDF.format(e="e").replace('effort="50"', 'effort="0"'), encoding="utf-8")
    lim = ffwd.load(p).joints[0].limits
    assert lim.torque is None and lim.velocity is None and lim.position == (-2.0, 2.0)


def test_trajectory_with_bom(tmp_path):
    text = "t,q_j1,q_j2,q_j3\n0,0,0,0\n0.1,0.01,0.02,0.03\n"
    p = tmp_path / "move.csv"
    p.write_bytes(BOM + text.encode("utf-8"))
    tr = read_trajectory(p, ("j1", "j2", "j3"))
    assert tr.t.tolist() == [0.0, 0.1] and tr.q[1].tolist() == [0.01, 0.02, 0.03]
