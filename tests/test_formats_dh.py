"""Denavit-Hartenberg rows (standard and modified) and the standalone DH table."""
import math
import os

import numpy as np
import pytest

import ffwd
from ffwd import ModelError
from ffwd.formats.dh import table_to_dict
from ffwd.formats.toml import build_robot, loads_toml

ROBOTS = os.path.join(os.path.dirname(__file__), "..", "examples", "robots")
PI2 = math.pi / 2

# An invented 4-axis arm as standard DH rows (a, alpha, d, theta), and its links in the
# standard DH frames {i}: mass, com, inertia diagonal and off-diagonal entries.
STD = [(0.10, PI2, 0.40, 0.0), (0.50, 0.0, 0.0, PI2), (0.05, PI2, 0.0, 0.3),
       (0.02, -PI2, 0.45, -0.2)]
LINKS = [(9.0, [-0.05, 0.1, 0.0], [0.1, 0.12, 0.09], [0.003, 0.0, -0.002]),
         (6.0, [-0.25, 0.0, 0.02], [0.02, 0.15, 0.14], [0.0, 0.004, 0.0]),
         (3.0, [0.0, -0.03, 0.1], [0.03, 0.028, 0.006], [0.0, 0.0, 0.001]),
         (1.0, [0.0, 0.0, -0.02], [0.002, 0.002, 0.001], [0.0, 0.0, 0.0])]


# --- the definitions, written out with plain numpy (common practice, from memory) ---
def Rx(a):
    c, s = math.cos(a), math.sin(a)
    return np.array([[1, 0, 0, 0], [0, c, -s, 0], [0, s, c, 0], [0, 0, 0, 1.0]])


def Rz(a):
    c, s = math.cos(a), math.sin(a)
    return np.array([[c, -s, 0, 0], [s, c, 0, 0], [0, 0, 1, 0], [0, 0, 0, 1.0]])


def Tx(x):
    T = np.eye(4)
    T[0, 3] = x
    return T


def Tz(z):
    T = np.eye(4)
    T[2, 3] = z
    return T


def std_pose(q):
    """Tool = DH frame {n}: product of Rz(theta+q) Tz(d) Tx(a) Rx(alpha)."""
    T = np.eye(4)
    for (a, al, d, th), qi in zip(STD, q):
        T = T @ Rz(th + qi) @ Tz(d) @ Tx(a) @ Rx(al)
    return T


def model_pose(robot, q):
    """Tool pose from the model's frames (DEVELOPERS.md): parent @ (R, p) @ Rot(axis, q)."""
    poses = []
    for j, qi in zip(robot.joints, q):
        F = np.eye(4)
        F[:3, :3], F[:3, 3] = j.rotation, j.translation
        a = j.axis
        K = np.array([[0, -a[2], a[1]], [a[2], 0, -a[0]], [-a[1], a[0], 0]])
        M = np.eye(4)   # Rodrigues' rotation formula (from memory)
        M[:3, :3] = np.eye(3) + math.sin(qi) * K + (1 - math.cos(qi)) * K @ K
        base = np.eye(4) if j.parent < 0 else poses[j.parent]
        poses.append(base @ F @ M)
    T = np.eye(4)
    T[:3, :3], T[:3, 3] = robot.tool.rotation, robot.tool.translation
    return poses[robot.tool.parent] @ T


def inertia_matrix(d, o):
    return np.array([[d[0], o[0], o[1]], [o[0], d[1], o[2]], [o[1], o[2], d[2]]])


def link_toml(m, c, I):
    c = [float(v) for v in c]
    return (f"[joint.link]\nmass = {m!r}\ncom = {c!r}\ninertia = {{ xx = {float(I[0, 0])!r}, "
            f"yy = {float(I[1, 1])!r}, zz = {float(I[2, 2])!r}, xy = {float(I[0, 1])!r}, "
            f"xz = {float(I[0, 2])!r}, yz = {float(I[1, 2])!r} }}\n")


def joint_toml(name, placement, link):
    return f'\n[[joint]]\nname = "{name}"\ntype = "revolute"\n{placement}\n{link}'


HEAD = 'format = 1\n[robot]\nname = "dh4"\n'


def standard_text():
    text = HEAD
    for k, ((a, al, d, th), (m, c, dg, off)) in enumerate(zip(STD, LINKS)):
        dh = f'dh = {{ a = {a!r}, alpha = {al!r}, d = {d!r}, theta = {th!r}, convention = "standard" }}'
        text += joint_toml(f"j{k + 1}", dh, link_toml(m, c, inertia_matrix(dg, off)))
    return text


def modified_links():
    """Links moved from standard frame {i} to the modified frame {i}: the standard frame
    {i} is the modified frame {i} followed by Tx(a_i) Rx(alpha_i) (DH definitions)."""
    out = []
    for (a, al, d, th), (m, c, dg, off) in zip(STD, LINKS):
        T = Tx(a) @ Rx(al)
        R, p = T[:3, :3], T[:3, 3]
        out.append((m, R @ np.array(c) + p, R @ inertia_matrix(dg, off) @ R.T))
    return out


def modified_text():
    # modified row i = (alpha_{i-1}, a_{i-1}, theta_i, d_i); the last standard
    # Tx(a_n) Rx(alpha_n) becomes the tool origin
    text = HEAD
    prev_a, prev_al = 0.0, 0.0
    for k, ((a, al, d, th), L) in enumerate(zip(STD, modified_links())):
        dh = (f"dh = {{ a = {prev_a!r}, alpha = {prev_al!r}, d = {d!r}, theta = {th!r}, "
              'convention = "modified" }')
        text += joint_toml(f"j{k + 1}", dh, link_toml(*L))
        prev_a, prev_al = a, al
    return text + (f'\n[tool]\norigin = {{ xyz = [{prev_a!r}, 0.0, 0.0], '
                   f'rpy = [{prev_al!r}, 0.0, 0.0] }}\n')


def rpy_of(R):
    """Roll, pitch, yaw with R = Rz(yaw) Ry(pitch) Rx(roll) (common practice, from memory)."""
    return [math.atan2(R[2, 1], R[2, 2]), math.asin(-R[2, 0]), math.atan2(R[1, 0], R[0, 0])]


def explicit_text():
    text = HEAD
    prev_a, prev_al = 0.0, 0.0
    for k, ((a, al, d, th), L) in enumerate(zip(STD, modified_links())):
        T = Rx(prev_al) @ Tx(prev_a) @ Rz(th) @ Tz(d)
        xyz = [float(v) for v in T[:3, 3]]
        rpy = rpy_of(T[:3, :3])
        place = f"origin = {{ xyz = {xyz!r}, rpy = {rpy!r} }}\naxis = [0.0, 0.0, 1.0]"
        text += joint_toml(f"j{k + 1}", place, link_toml(*L))
        prev_a, prev_al = a, al
    return text + (f'\n[tool]\norigin = {{ xyz = [{prev_a!r}, 0.0, 0.0], '
                   f'rpy = [{prev_al!r}, 0.0, 0.0] }}\n')


def test_rpy_helper_reconstructs():
    for T in (Rx(0.4) @ Rz(-1.2), Rx(PI2) @ Rz(PI2), Rx(-PI2) @ Rz(0.3)):
        r, p, y = rpy_of(T[:3, :3])
        assert np.allclose(Rz(y) @ Rz(0) @ _ry(p) @ Rx(r), T, atol=1e-12)


def _ry(a):
    c, s = math.cos(a), math.sin(a)
    return np.array([[c, 0, s, 0], [0, 1, 0, 0], [-s, 0, c, 0], [0, 0, 0, 1.0]])


def test_three_ways_same_tool_pose_and_parameters():
    std, mod, exp = (loads_toml(t) for t in (standard_text(), modified_text(), explicit_text()))
    rng = np.random.default_rng(7)
    for _ in range(20):
        q = rng.uniform(-math.pi, math.pi, 4)
        want = std_pose(q)
        for robot in (std, mod, exp):
            assert np.allclose(model_pose(robot, q), want, atol=1e-12)
    assert np.allclose(std.body_params(), mod.body_params(), atol=1e-13)
    assert np.allclose(std.body_params(), exp.body_params(), atol=1e-13)
    assert np.allclose(std.parameter_vector(), exp.parameter_vector(), atol=1e-13)
    for a, b in zip(std.joints, exp.joints):
        assert np.allclose(a.rotation, b.rotation, atol=1e-12)
        assert np.allclose(a.translation, b.translation, atol=1e-12)


def test_standard_link_frame_is_dh_frame_i():
    # a point mass at the origin of standard DH frame {2} (the end of row 2) must sit,
    # at any q, where the DH product puts that frame
    text = standard_text()
    std = loads_toml(text)
    rng = np.random.default_rng(3)
    q = rng.uniform(-2, 2, 4)
    T2 = np.eye(4)
    for (a, al, d, th), qi in list(zip(STD, q))[:2]:
        T2 = T2 @ Rz(th + qi) @ Tz(d) @ Tx(a) @ Rx(al)
    # body 2's com from the model: joint-2 frame pose times com
    poses = []
    for j, qi in zip(std.joints, q):
        F = np.eye(4)
        F[:3, :3], F[:3, 3] = j.rotation, j.translation
        base = np.eye(4) if j.parent < 0 else poses[j.parent]
        poses.append(base @ F @ Rz(qi))
    com_model = poses[1][:3, :3] @ std.joints[1].link.com + poses[1][:3, 3]
    com_dh = T2[:3, :3] @ np.array(LINKS[1][1]) + T2[:3, 3]
    assert np.allclose(com_model, com_dh, atol=1e-12)


def test_prismatic_dh_row():
    text = HEAD + """
[[joint]]
name = "lift"
type = "prismatic"
dh = { a = 0.2, alpha = 0.5, d = 0.3, theta = 0.1, convention = "standard" }
[joint.link]
mass = 5.0
inertia = { xx = 0.1, yy = 0.1, zz = 0.1 }
"""
    r = loads_toml(text)
    q = 0.37
    want = Rz(0.1) @ Tz(0.3 + q) @ Tx(0.2) @ Rx(0.5)
    j = r.joints[0]
    F = np.eye(4)
    F[:3, :3], F[:3, 3] = j.rotation, j.translation
    T = np.eye(4)
    T[:3, :3], T[:3, 3] = r.tool.rotation, r.tool.translation
    assert np.allclose(F @ Tz(q) @ T, want, atol=1e-14)


def test_dh_errors():
    e = None
    with pytest.raises(ModelError) as info:
        loads_toml(standard_text().replace('"standard"', '"distal"', 1), file="a.toml")
    e = info.value
    assert (e.joint, e.field, e.value) == ("j1", "dh.convention", "distal")
    with pytest.raises(ModelError) as info:
        loads_toml(standard_text().replace("convention = \"standard\" }",
                                           "convention = \"standard\" }\naxis = [0.0, 0.0, 1.0]", 1))
    assert info.value.field == "axis"
    with pytest.raises(ModelError) as info:
        loads_toml(standard_text().replace("theta = 0.0, ", "", 1))
    assert (info.value.joint, info.value.field) == ("j1", "dh.theta")


def test_six_axis_dh_example():
    r = ffwd.load(os.path.join(ROBOTS, "six_axis_dh.toml"))
    assert r.dof == 6 and r.warnings() == []
    T = model_pose(r, np.zeros(6))
    # home pose: upper arm up, forearm along +x, flange facing +x (see the file's comment)
    assert np.allclose(T[:3, 3], [0.15 + 0.65 + 0.11, 0.0, 0.65 + 0.70 + 0.12], atol=1e-12)
    assert np.allclose(T[:3, 2], [1, 0, 0], atol=1e-12)


def test_standalone_table_equals_toml():
    csv_robot = ffwd.load(os.path.join(ROBOTS, "planar3_vertical.dh.csv"))
    toml_robot = ffwd.load(os.path.join(ROBOTS, "planar3_vertical.toml"))
    # the same rig (the table leaves out the pedestal and the payload's own inertia)
    a = csv_robot.with_payload(0.0)
    b = toml_robot.with_payload(0.0)
    assert np.allclose(a.parameter_vector(), b.parameter_vector(), atol=1e-15)
    rng = np.random.default_rng(11)
    for _ in range(10):
        q = rng.uniform(-2.5, 2.5, 3)
        Ta, Tb = model_pose(csv_robot, q), model_pose(toml_robot, q)
        assert np.allclose(Ta[:3, 3] + [0, 0, 0.3], Tb[:3, 3], atol=1e-12)
        # planar: the tool x axis agrees; frames differ by a fixed turn about x
        assert np.allclose(Ta[:3, 0], Tb[:3, 0], atol=1e-12)
    for ja, jb in zip(csv_robot.joints, toml_robot.joints):
        assert ja.limits.position == jb.limits.position and ja.limits.torque == jb.limits.torque
        assert ja.drive.armature == pytest.approx(jb.drive.armature)
    assert csv_robot.payload.mass == 1.0 and csv_robot.payload.rated_mass == 2.0


def test_standalone_table_errors():
    good = open(os.path.join(ROBOTS, "planar3_vertical.dh.csv")).read()
    with pytest.raises(ModelError, match="did you mean 'q_max'"):
        table_to_dict(good.replace(",q_max,", ",qmax,"), file="t.dh.csv")
    with pytest.raises(ModelError) as info:
        table_to_dict(good.replace("j2,revolute,0.5,", "j2,revolute,x5,"), file="t.dh.csv")
    assert (info.value.joint, info.value.field, info.value.value) == ("j2", "a", "x5")
    with pytest.raises(ModelError, match="convention"):
        table_to_dict(good.replace("convention,modified\n", ""), file="t.dh.csv")
    with pytest.raises(ModelError) as info:
        build_robot(table_to_dict(good.replace("j3,revolute,0.4,0,0,0,2.0", "j3,revolute,0.4,0,0,0,-2.0"),
                                  file="t.dh.csv"), file="t.dh.csv")
    assert (info.value.file, info.value.joint, info.value.field) == ("t.dh.csv", "j3", "link.mass")
