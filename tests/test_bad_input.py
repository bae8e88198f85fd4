"""The bad-input table: every way of handing ffwd something wrong, and what it must say.

Each row of TABLE is (id, make, call, error, words[, defect]):
  make(tmp_path) writes the bad file (or builds the bad object) and returns it,
  call(it) is the ffwd call that must refuse it,
  error is the exception class it must raise,
  words are the pieces the one-line message must contain (file, joint, field, value).
C_TABLE holds the C API rows (status codes and zeroed outputs of the shipped libffwd
through cffi) and CLI_TABLE the command-line rows (exit 2, one located line, no
traceback). A row with a `defect` is a known defect, marked xfail(strict=True) with
the file that owns the fix; when it is fixed the row starts passing and strict xfail
turns that into a failure, so the mark must then be removed.
docs/bad-input.md summarises the table. Expected behaviour: "common practice, no
source" (the project's own rules in DESIGN.md and docs/model-format.md).
"""
import functools
import os
from collections import namedtuple

import numpy as np
import pytest

import ffwd
from ffwd import ModelError
from ffwd.formats.urdf import loads_urdf
from ffwd.identify.logs import prepare, read_log
from ffwd.identify.synthetic import two_link_arm
from ffwd.model import Limits
from ffwd.native import NativeError
from ffwd.scaling import InfeasiblePath, Path, time_optimal
from ffwd.trajio import read_trajectory

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
EXAMPLES = os.path.join(ROOT, "examples", "robots")

Row = namedtuple("Row", "id make call error words defect needs", defaults=(None, None))


# ---- inputs ------------------------------------------------------------------------

HEAD = 'format = 1\n[robot]\nname = "rig"\n'


def joint(name="j1", mass="2.0", inertia="{ xx = 0.02, yy = 0.02, zz = 0.01 }",
          placement='origin = { xyz = [0.0, 0.0, 0.3] }\naxis = [0.0, 0.0, 1.0]',
          extra="", limits=""):
    text = (f'[[joint]]\nname = "{name}"\ntype = "revolute"\n{placement}\n{extra}\n'
            f'[joint.link]\nmass = {mass}\ncom = [0.0, 0.0, 0.1]\ninertia = {inertia}\n')
    return text + (f"[joint.limits]\n{limits}\n" if limits else "")


def write(tmp, name, text, mode="w"):
    path = os.path.join(str(tmp), name)
    with open(path, mode) as f:
        f.write(text)
    return path


def toml(name, *joints, head=HEAD, tail=""):
    """make(): a TOML model file of the given joints."""
    return lambda tmp: write(tmp, name, head + "".join(joints) + tail)


def load(path):
    return ffwd.load(path)


DH_GOOD = open(os.path.join(EXAMPLES, "planar3_vertical.dh.csv"), encoding="utf-8").read()


def dh(name, old, new):
    """make(): the example DH table with one text replacement."""
    assert old in DH_GOOD
    return lambda tmp: write(tmp, name, DH_GOOD.replace(old, new, 1))


URDF = """<robot name="rig">
  <link name="base"/>
  <link name="l1"><inertial><mass value="2.0"/><origin xyz="0 0 0.1"/>
    <inertia ixx="0.02" iyy="0.02" izz="0.01"/></inertial></link>
  <link name="l2"><inertial><mass value="1.0"/><origin xyz="0.1 0 0"/>
    <inertia ixx="0.01" iyy="0.01" izz="0.01"/></inertial></link>
  <joint name="shoulder" type="revolute"><parent link="base"/><child link="l1"/>
    <origin xyz="0 0 0.3"/><axis xyz="0 0 1"/>
    <limit lower="-2" upper="2" effort="50" velocity="2"/></joint>
  <joint name="elbow" type="revolute"><parent link="l1"/><child link="l2"/>
    <origin xyz="0.4 0 0"/><axis xyz="0 1 0"/>
    <limit lower="-2" upper="2" effort="20" velocity="3"/></joint>
</robot>
"""


def urdf(name, old, new):
    assert old in URDF
    return lambda tmp: write(tmp, name, URDF.replace(old, new, 1))


THREE = ("j1", "j2", "j3")   # joint names of planar3_vertical
TRAJ_HEAD = "t,q_j1,q_j2,q_j3\n"


def csv_file(name, text):
    return lambda tmp: write(tmp, name, text)


def traj_rows(n=5, bad=None):
    """Trajectory CSV lines; bad = (row index, column index, text) replaces one cell."""
    rows = [[f"{0.1 * k:g}", f"{0.05 * k:g}", "0", f"{-0.02 * k:g}"] for k in range(n)]
    if bad is not None:
        rows[bad[0]][bad[1]] = bad[2]
    return TRAJ_HEAD + "".join(",".join(r) + "\n" for r in rows)


@functools.lru_cache(maxsize=None)
def planar():
    return ffwd.load(os.path.join(EXAMPLES, "planar3_vertical.toml"))


@functools.lru_cache(maxsize=None)
def two_link():
    return two_link_arm()


def log_text(n=60, header="t,q_j1,q_j2,tau_j1,tau_j2", edit=None):
    """An identification log of the two-link arm (100 Hz); edit(rows) may change rows."""
    rows = []
    for k in range(n):
        t = 0.01 * k
        rows.append([f"{t:.4f}", f"{0.3 * np.sin(t):.6f}", f"{0.2 * np.cos(t):.6f}",
                     f"{1.5 + t:.6f}", f"{-0.5 * t:.6f}"])
    if edit is not None:
        edit(rows)
    return header + "\n" + "".join(",".join(r) + "\n" for r in rows)


def log_file(name, **kw):
    return lambda tmp: write(tmp, name, log_text(**kw))


def set_cell(row, col, text):
    def edit(rows):
        rows[row][col] = text
    return edit


def without_limits(robot, index, name):
    """The robot with one limit of one joint removed."""
    import dataclasses
    joints = list(robot.joints)
    lim = {n: getattr(joints[index].limits, n) for n in
           ("position", "velocity", "acceleration", "jerk", "torque")}
    lim[name] = None
    joints[index] = dataclasses.replace(joints[index], limits=Limits(**lim))
    return dataclasses.replace(robot, joints=tuple(joints))


def weak_robot():
    """planar3_vertical with 1 N m on j1: cannot even hold still against gravity."""
    text = open(os.path.join(EXAMPLES, "planar3_vertical.toml"), encoding="utf-8").read()
    from ffwd.formats.toml import loads_toml
    robot = loads_toml(text, file="planar3_vertical.toml")
    import dataclasses
    j1 = robot.joints[0]
    lim = j1.limits
    weak = Limits(lim.position, lim.velocity, lim.acceleration, lim.jerk, 1.0)
    return dataclasses.replace(robot, joints=(dataclasses.replace(j1, limits=weak),)
                               + robot.joints[1:])


def short_path(q_end=(0.5, 0.3, 0.2), q_start=(0.0, 0.0, 0.0)):
    return Path.from_waypoints([0.0, 1.0], [list(q_start), list(q_end)])


def gov(**kw):
    from ffwd.scaling.governor import Governor
    return lambda _: Governor(planar(), short_path(), **kw)


def dyn(backend):
    from ffwd import Dynamics
    return Dynamics(planar(), backend)


NEEDS = {"c": "core", "native": "shipped_library", "twin": None}
Z3 = np.zeros(3)


# ---- the table ---------------------------------------------------------------------

TABLE = [
    # native TOML model files
    Row("toml_unknown_key_suggests", toml("arm.toml", joint().replace("mass = 2.0", "mas = 2.0")),
        load, ModelError, ["arm.toml", "joint 'j1'", "link.mas", "did you mean 'mass'"]),
    Row("toml_missing_field", toml("arm.toml", joint().replace(
        "inertia = { xx = 0.02, yy = 0.02, zz = 0.01 }", "")),
        load, ModelError, ["arm.toml", "joint 'j1'", "link.inertia", "missing required field"]),
    Row("toml_negative_mass", toml("arm.toml", joint(), joint("j2", mass="-1.0")),
        load, ModelError, ["arm.toml", "joint 'j2'", "link.mass", "-1.0", "must be > 0"]),
    Row("toml_inertia_not_pd", toml("arm.toml", joint(inertia="{ xx = -0.02, yy = 0.02, zz = 0.01 }")),
        load, ModelError, ["arm.toml", "joint 'j1'", "link.inertia", "positive definite"]),
    Row("toml_inertia_triangle", toml("arm.toml", joint(inertia="{ xx = 0.01, yy = 0.01, zz = 0.05 }")),
        load, ModelError, ["arm.toml", "joint 'j1'", "link.inertia", "triangle inequality"]),
    Row("toml_zero_axis", toml("arm.toml", joint(placement="axis = [0.0, 0.0, 0.0]")),
        load, ModelError, ["arm.toml", "joint 'j1'", "'axis'", "non-zero"]),
    Row("toml_bad_parent", toml("arm.toml", joint(), joint("j2", extra='parent = "j9"')),
        load, ModelError, ["arm.toml", "joint 'j2'", "'parent'", "'j9'", "no earlier joint"]),
    Row("toml_parent_later", toml("arm.toml", joint(extra='parent = "j2"'), joint("j2")),
        load, ModelError, ["arm.toml", "joint 'j1'", "'parent'", "parents come first"]),
    Row("toml_dof_over_16", toml("arm.toml", *[joint(f"j{k}") for k in range(1, 18)]),
        load, ModelError, ["arm.toml", "1 to 16", "got 17"]),
    Row("toml_nan_mass", toml("arm.toml", joint(mass="nan")),
        load, ModelError, ["arm.toml", "joint 'j1'", "link.mass", "nan", "finite"]),
    Row("toml_inf_gravity", toml("arm.toml", joint(), head=HEAD + "gravity = [0.0, 0.0, -inf]\n"),
        load, ModelError, ["arm.toml", "robot.gravity", "-inf", "finite"]),
    Row("toml_format_version", toml("arm.toml", joint(), head=HEAD.replace("format = 1", "format = 2")),
        load, ModelError, ["arm.toml", "'format' = 2", "unsupported format version"]),
    Row("toml_position_min_ge_max", toml("arm.toml", joint(limits="position = [1.0, -1.0]")),
        load, ModelError, ["arm.toml", "joint 'j1'", "limits.position", "[1.0, -1.0]", "min must be < max"]),
    Row("toml_zero_velocity_limit", toml("arm.toml", joint(limits="velocity = 0.0")),
        load, ModelError, ["arm.toml", "joint 'j1'", "limits.velocity", "must be > 0"]),
    Row("toml_mass_is_text", toml("arm.toml", joint(mass='"heavy"')),
        load, ModelError, ["arm.toml", "joint 'j1'", "link.mass", "'heavy'", "must be a number"]),
    Row("toml_axis_wrong_length", toml("arm.toml", joint(placement="axis = [0.0, 1.0]")),
        load, ModelError, ["arm.toml", "joint 'j1'", "'axis'", "list of 3 numbers"]),
    Row("toml_joint_type", toml("arm.toml", joint().replace('"revolute"', '"spherical"')),
        load, ModelError, ["arm.toml", "joint 'j1'", "'type'", "'spherical'", "must be one of"]),
    Row("toml_duplicate_joint", toml("arm.toml", joint(), joint()),
        load, ModelError, ["arm.toml", "joint 'j1'", "'name'", "used twice"]),
    Row("toml_negative_viscous", toml("arm.toml", joint(extra="drive = { viscous = -0.5 }")),
        load, ModelError, ["arm.toml", "joint 'j1'", "drive.viscous", "-0.5", ">= 0"]),
    Row("toml_dh_and_origin", toml("arm.toml", joint(placement=(
        'origin = { xyz = [0.0, 0.0, 0.3] }\n'
        'dh = { a = 0.1, alpha = 0.0, d = 0.0, theta = 0.0, convention = "standard" }'))),
        load, ModelError, ["arm.toml", "joint 'j1'", "either dh or origin"]),
    Row("toml_tool_parent_unknown", toml("arm.toml", joint(), tail='[tool]\nparent = "j7"\n'),
        load, ModelError, ["arm.toml", "tool.parent", "'j7'"]),
    Row("toml_payload_negative_mass", toml("arm.toml", joint(), tail="[payload]\nmass = -3.0\n"),
        load, ModelError, ["arm.toml", "payload.mass", "-3.0", ">= 0"]),
    Row("toml_syntax_error", csv_file("arm.toml", HEAD + "[[joint]\nname = 'j1'\n"),
        load, ModelError, ["arm.toml", "not valid TOML"]),
    Row("toml_missing_file", lambda tmp: os.path.join(str(tmp), "absent.toml"),
        load, FileNotFoundError, ["absent.toml"]),
    Row("model_unknown_extension", csv_file("arm.yaml", "robot: x\n"),
        load, ModelError, ["arm.yaml", "unknown model file type"]),
    Row("toml_robot_not_a_table", toml("arm.toml", joint(), head='format = 1\nrobot = 3\n'),
        load, ModelError, ["arm.toml", "'robot' = 3", "must be a table"]),
    Row("toml_joint_not_array_of_tables", csv_file("arm.toml", 'format = 1\njoint = 5\n[robot]\nname = "rig"\n'),
        load, ModelError, ["arm.toml", "'joint'", "array of tables"]),
    Row("toml_no_joints", csv_file("arm.toml", 'format = 1\njoint = []\n[robot]\nname = "rig"\n'),
        load, ModelError, ["arm.toml", "'joint'", "at least one [[joint]]"]),
    Row("toml_joint_name_not_string", toml("arm.toml", joint().replace('name = "j1"', "name = 5")),
        load, ModelError, ["arm.toml", "joint '#1'", "'name' = 5", "must be a string"]),
    Row("toml_format_not_integer", toml("arm.toml", joint(), head=HEAD.replace("format = 1", "format = 1.0")),
        load, ModelError, ["arm.toml", "'format' = 1.0", "must be an integer"]),
    Row("toml_moving_joint_without_link", toml("arm.toml", joint().split("[joint.link]")[0]),
        load, ModelError, ["arm.toml", "joint 'j1'", "'link'", "needs a link"]),
    Row("toml_tool_on_the_base", toml("arm.toml", '[[joint]]\nname = "mount"\ntype = "fixed"\n'
                                      'parent = "base"\n', joint(extra='parent = "base"'),
                                      tail='[tool]\nparent = "mount"\n'),
        load, ModelError, ["arm.toml", "tool.parent", "'mount'", "not on the base"]),
    Row("toml_huge_integer_mass", toml("arm.toml", joint(mass="1" + "0" * 400)),
        load, ModelError, ["arm.toml", "joint 'j1'", "link.mass"]),
    Row("toml_not_utf8", lambda tmp: write(tmp, "arm.toml", (HEAD + joint()).replace(
        '"rig"', '"r\xe9g"').encode("latin-1"), "wb"),
        load, ModelError, ["arm.toml"]),
    Row("toml_dh_theta_inf", toml("arm.toml", joint(placement=(
        'dh = { a = 0.1, alpha = 0.0, d = 0.0, theta = inf, convention = "standard" }'))),
        load, ModelError, ["arm.toml", "joint 'j1'", "dh.theta", "inf"]),
    Row("toml_origin_rpy_inf", toml("arm.toml", joint(placement=(
        'origin = { xyz = [0.0, 0.0, 0.3], rpy = [inf, 0.0, 0.0] }\naxis = [0.0, 0.0, 1.0]'))),
        load, ModelError, ["arm.toml", "joint 'j1'", "origin.rpy", "inf"]),
    Row("toml_inertia_overflow", toml("arm.toml", joint(
        inertia="{ xx = 1e308, yy = 1e308, zz = 1e308 }")),
        load, ModelError, ["arm.toml", "joint 'j1'", "link.inertia"]),

    Row("toml_inertia_entry_huge_integer", toml("arm.toml", joint(
        inertia="{ xx = 0.02, yy = 0.02, zz = 0.01, xy = " + "9" * 400 + " }")),
        load, ModelError, ["arm.toml", "joint 'j1'", "link.inertia.xy", "(400 digits)",
                           "too large for a float"]),
    Row("toml_origin_xyz_huge_integer", toml("arm.toml", joint(
        placement="origin = { xyz = [0.0, 0.0, 1" + "0" * 400 + "] }\naxis = [0.0, 0.0, 1.0]")),
        load, ModelError, ["arm.toml", "joint 'j1'", "origin.xyz", "too large for a float"]),
    Row("toml_integer_too_many_digits", toml("arm.toml", joint(mass="1" + "0" * 5000)),
        load, ModelError, ["arm.toml", "not valid TOML", "too many digits"]),
    Row("toml_origin_xyz_huge", toml("arm.toml", joint(
        placement="origin = { xyz = [1e300, 0.0, 0.3] }\naxis = [0.0, 0.0, 1.0]"), joint("j2")),
        load, ModelError, ["arm.toml", "joint 'j1'", "origin.xyz", "1e+300", "below 1e+50"]),
    Row("toml_axis_huge", toml("arm.toml", joint(
        placement="origin = { xyz = [0.0, 0.0, 0.3] }\naxis = [1e308, 1e308, 0.0]")),
        load, ModelError, ["arm.toml", "joint 'j1'", "'axis'", "1e+308", "below 1e+50"]),
    Row("toml_mass_huge", toml("arm.toml", joint(mass="1e60")),
        load, ModelError, ["arm.toml", "joint 'j1'", "link.mass", "1e+60", "below 1e+50"]),
    Row("toml_tool_origin_nan", toml("arm.toml", joint(),
                                     tail="[tool]\norigin = { rpy = [0.0, nan, 0.0] }\n"),
        load, ModelError, ["arm.toml", "tool.origin.rpy", "nan", "finite"]),
    Row("toml_gravity_huge_integer", toml("arm.toml", joint(),
                                          head=HEAD + "gravity = [0, 0, -1" + "0" * 400 + "]\n"),
        load, ModelError, ["arm.toml", "robot.gravity", "too large for a float"]),
    Row("robot_with_payload_huge_integer", lambda _: planar(),
        lambda r: r.with_payload(10 ** 400), ModelError,
        ["planar3_vertical.toml", "payload.mass", "(401 digits)", "too large for a float"]),

    # standalone DH tables (*.dh.csv)
    Row("dh_missing_column", dh("rig.dh.csv", ",ixz,iyz,", ",ixz,"),
        load, ModelError, ["rig.dh.csv", "'iyz'", "missing column"]),
    Row("dh_unknown_column", dh("rig.dh.csv", "joint,type,a,alpha,d,theta,mass,",
                                "joint,type,a,alpha,d,theta,mas,"),
        load, ModelError, ["rig.dh.csv", "'mas'", "unknown column", "did you mean 'mass'"]),
    Row("dh_not_a_number", dh("rig.dh.csv", "j2,revolute,0.5,0,0,0,5.0,", "j2,revolute,0.5,0,0,0,five,"),
        load, ModelError, ["rig.dh.csv", "joint 'j2'", "'mass'", "'five'", "line 13"]),
    Row("dh_negative_mass", dh("rig.dh.csv", "j2,revolute,0.5,0,0,0,5.0,", "j2,revolute,0.5,0,0,0,-5.0,"),
        load, ModelError, ["rig.dh.csv", "joint 'j2'", "link.mass", "-5.0"]),
    Row("dh_bad_convention", dh("rig.dh.csv", "convention,modified", "convention,sideways"),
        load, ModelError, ["rig.dh.csv", "'convention'", "'sideways'", "standard or modified"]),
    Row("dh_only_q_min", dh("rig.dh.csv", ",-2.6,2.6,4.0,", ",-2.6,,4.0,"),
        load, ModelError, ["rig.dh.csv", "joint 'j2'", "q_max", "give both q_min and q_max"]),
    Row("dh_too_many_cells", dh("rig.dh.csv", "500.0,20.0", "500.0,20.0,7"),
        load, ModelError, ["rig.dh.csv", "line 14", "28 cells but 27 columns"]),
    Row("dh_missing_robot_row", dh("rig.dh.csv", "robot,planar3_vertical_dh\n", ""),
        load, ModelError, ["rig.dh.csv", "'robot'", "missing 'robot' row"]),
    Row("dh_unknown_setting", dh("rig.dh.csv", "gravity,0,0,-9.81", "gravit,0,0,-9.81"),
        load, ModelError, ["rig.dh.csv", "'gravit'", "line 8", "unknown setting"]),
    Row("dh_missing_value", dh("rig.dh.csv", "j2,revolute,0.5,0,0,0,5.0,", "j2,revolute,0.5,0,0,0,,"),
        load, ModelError, ["rig.dh.csv", "joint 'j2'", "'mass'", "line 13", "missing value"]),
    Row("dh_nan_a", dh("rig.dh.csv", "j2,revolute,0.5,", "j2,revolute,nan,"),
        load, ModelError, ["rig.dh.csv", "joint 'j2'", "'a'", "nan"]),

    Row("dh_inf_theta", dh("rig.dh.csv", "j2,revolute,0.5,0,0,0,", "j2,revolute,0.5,0,0,-inf,"),
        load, ModelError, ["rig.dh.csv", "joint 'j2'", "'theta'", "-inf", "line 13", "finite"]),
    Row("dh_not_utf8", lambda tmp: write(tmp, "rig.dh.csv", DH_GOOD.replace(
        "j2,revolute", "j\xe92,revolute", 1).encode("latin-1"), "wb"),
        load, ModelError, ["rig.dh.csv", "not UTF-8", "line 13", "column 2"]),
    Row("dh_cell_too_long", dh("rig.dh.csv", "j2,revolute,0.5,", 'j2,revolute,"' + "5" * 200000 + '",'),
        load, ModelError, ["rig.dh.csv", "line 13", "not readable as CSV"]),

    # URDF import
    Row("urdf_mimic_joint", urdf("rig.urdf", '<axis xyz="0 1 0"/>',
                                 '<axis xyz="0 1 0"/><mimic joint="shoulder"/>'),
        load, ModelError, ["rig.urdf", "joint 'elbow'", "'mimic'", "'shoulder'", "not supported"]),
    Row("urdf_closed_loop", urdf("rig.urdf", "</robot>",
                                 '<joint name="strut" type="fixed"><parent link="base"/>'
                                 '<child link="l2"/></joint></robot>'),
        load, ModelError, ["rig.urdf", "joint 'strut'", "child.link", "'l2'", "closed loops"]),
    Row("urdf_missing_mass", urdf("rig.urdf", '<mass value="2.0"/>', ""),
        load, ModelError, ["rig.urdf", "joint 'shoulder'", "link[l1].inertial.mass", "missing <mass>"]),
    Row("urdf_missing_inertia_entry", urdf("rig.urdf", ' izz="0.01"/></inertial></link>\n  <link name="l2">',
                                           '/></inertial></link>\n  <link name="l2">'),
        load, ModelError, ["rig.urdf", "joint 'shoulder'", "inertia.izz", "missing required attribute"]),
    Row("urdf_bad_number", urdf("rig.urdf", '<origin xyz="0.4 0 0"/>', '<origin xyz="0.4 zero 0"/>'),
        load, ModelError, ["rig.urdf", "joint 'elbow'", "origin.xyz", "'0.4 zero 0'", "finite numbers"]),
    Row("urdf_planar_joint", urdf("rig.urdf", 'name="elbow" type="revolute"', 'name="elbow" type="planar"'),
        load, ModelError, ["rig.urdf", "joint 'elbow'", "'type'", "'planar'", "unsupported joint type"]),
    Row("urdf_negative_mass", urdf("rig.urdf", '<mass value="1.0"/>', '<mass value="-1.0"/>'),
        load, ModelError, ["rig.urdf", "joint 'elbow'", "link.mass", "-1.0"]),
    Row("urdf_limits_reversed", urdf("rig.urdf", 'lower="-2" upper="2" effort="20"',
                                     'lower="2" upper="-2" effort="20"'),
        load, ModelError, ["rig.urdf", "joint 'elbow'", "limits.position", "min must be < max"]),
    Row("urdf_not_xml", csv_file("rig.urdf", "<robot name='x'><link></robot>"),
        load, ModelError, ["rig.urdf", "not valid XML"]),
    Row("urdf_unknown_tool_link", lambda tmp: URDF,
        lambda text: loads_urdf(text, file="rig.urdf", tool="gripper"),
        ModelError, ["rig.urdf", "'tool'", "'gripper'", "no link of that name"]),
    Row("urdf_missing_inertia", urdf("rig.urdf", '<inertia ixx="0.01" iyy="0.01" izz="0.01"/>', ""),
        load, ModelError, ["rig.urdf", "joint 'elbow'", "link[l2].inertial.inertia", "missing <inertia>"]),
    Row("urdf_link_without_inertial", urdf("rig.urdf", '<inertial><mass value="1.0"/><origin xyz="0.1 0 0"/>\n'
                                           '    <inertia ixx="0.01" iyy="0.01" izz="0.01"/></inertial>', ""),
        load, ModelError, ["rig.urdf", "joint 'elbow'", "link.mass", "needs mass"]),
    Row("urdf_root_not_robot", csv_file("rig.urdf", "<model name='x'/>"),
        load, ModelError, ["rig.urdf", "root element must be <robot>"]),
    Row("urdf_link_without_name", urdf("rig.urdf", '<link name="base"/>', '<link name="base"/><link/>'),
        load, ModelError, ["rig.urdf", "'link'", "without a name"]),
    Row("urdf_link_twice", urdf("rig.urdf", '<link name="base"/>', '<link name="base"/><link name="l1"/>'),
        load, ModelError, ["rig.urdf", "'link' = 'l1'", "used twice"]),
    Row("urdf_joint_without_name", urdf("rig.urdf", '<joint name="elbow"', '<joint'),
        load, ModelError, ["rig.urdf", "'joint'", "without a name"]),
    Row("urdf_joint_twice", urdf("rig.urdf", '<joint name="elbow"', '<joint name="shoulder"'),
        load, ModelError, ["rig.urdf", "joint 'shoulder'", "used twice"]),
    Row("urdf_joint_without_parent", urdf("rig.urdf", '<parent link="l1"/>', ""),
        load, ModelError, ["rig.urdf", "joint 'elbow'", "'parent'", "missing <parent link=...>"]),
    Row("urdf_detached_loop", urdf("rig.urdf", "</robot>",
                                   '<link name="a"/><link name="b"/>'
                                   '<joint name="ab" type="fixed"><parent link="a"/><child link="b"/></joint>'
                                   '<joint name="ba" type="fixed"><parent link="b"/><child link="a"/></joint>'
                                   "</robot>"),
        load, ModelError, ["rig.urdf", "joint 'ab'", "not connected to the root link"]),
    Row("urdf_negative_effort", urdf("rig.urdf", 'effort="20"', 'effort="-20"'),
        load, ModelError, ["rig.urdf", "joint 'elbow'", "effort"]),

    Row("urdf_negative_velocity", urdf("rig.urdf", 'velocity="2"', 'velocity="-2"'),
        load, ModelError, ["rig.urdf", "joint 'shoulder'", "limit.velocity", "-2.0", ">= 0"]),
    Row("urdf_not_utf8", lambda tmp: write(tmp, "rig.urdf", URDF.replace(
        'name="rig"', 'name="r\xe9g"').encode("latin-1"), "wb"),
        load, ModelError, ["rig.urdf", "not valid XML", "not UTF-8", "offset 14", "column 15"]),
    Row("urdf_nan_rpy", urdf("rig.urdf", '<origin xyz="0.4 0 0"/>', '<origin xyz="0.4 0 0" rpy="0 nan 0"/>'),
        load, ModelError, ["rig.urdf", "joint 'elbow'", "origin.rpy", "'0 nan 0'", "finite"]),

    # trajectory CSV (ffwd/trajio.py read_trajectory and ffwd.scaling.Path.from_csv)
    Row("traj_missing_column", csv_file("move.csv", "t,q_j1,q_j2\n0,0,0\n1,0.1,0\n"),
        lambda p: read_trajectory(p, THREE), ValueError, ["move.csv", "missing column", "q_j3"]),
    Row("traj_missing_time", csv_file("move.csv", "time,q_j1,q_j2,q_j3\n0,0,0,0\n1,0.1,0,0\n"),
        lambda p: read_trajectory(p, THREE), ValueError, ["move.csv", "missing column 't'"]),
    Row("traj_time_not_increasing", csv_file("move.csv", traj_rows(bad=(3, 0, "0.2"))),
        lambda p: read_trajectory(p, THREE), ValueError, ["move.csv", "row 5", "does not increase"]),
    Row("traj_nan", csv_file("move.csv", traj_rows(bad=(2, 2, "nan"))),
        lambda p: read_trajectory(p, THREE), ValueError, ["move.csv", "row 4", "'q_j2'", "not finite"]),
    Row("traj_not_a_number", csv_file("move.csv", traj_rows(bad=(1, 3, "abc"))),
        lambda p: read_trajectory(p, THREE), ValueError, ["move.csv", "row 3", "'q_j3'", "'abc'"]),
    Row("traj_too_few_rows", csv_file("move.csv", traj_rows(n=1)),
        lambda p: read_trajectory(p, THREE), ValueError, ["move.csv", "at least 2 rows", "found 1"]),
    Row("traj_short_row", csv_file("move.csv", TRAJ_HEAD + "0,0,0,0\n0.1,0,0\n"),
        lambda p: read_trajectory(p, THREE), ValueError, ["move.csv", "row 3", "3 fields", "header has 4"]),
    Row("traj_empty_file", csv_file("move.csv", ""),
        lambda p: read_trajectory(p, THREE), ValueError, ["move.csv", "empty file"]),
    Row("path_csv_missing_column", csv_file("move.csv", "t,q_j1,q_j2\n0,0,0\n1,0.1,0\n"),
        lambda p: Path.from_csv(p, planar()), ValueError, ["move.csv", "q_j3"]),
    Row("path_csv_time_repeats", csv_file("move.csv", traj_rows(bad=(2, 0, "0.1"))),
        lambda p: Path.from_csv(p, planar()), ValueError, ["move.csv", "row 4", "does not increase"]),
    Row("traj_duplicate_column", csv_file("move.csv", "t,q_j1,q_j2,q_j3,q_j1\n0,0,0,0,1\n1,0.1,0,0,2\n"),
        lambda p: read_trajectory(p, THREE), ValueError, ["move.csv", "'q_j1'", "more than once"]),

    Row("traj_not_utf8", lambda tmp: write(tmp, "move.csv", traj_rows().replace(
        "q_j2", "q_j\xe9", 1).encode("latin-1"), "wb"),
        lambda p: read_trajectory(p, THREE), ValueError, ["move.csv", "not UTF-8", "line 1"]),
    Row("traj_cell_too_long", csv_file("move.csv", TRAJ_HEAD + '"' + "1" * 200000 + '",0,0,0\n1,0,0,0\n'),
        lambda p: read_trajectory(p, THREE), ValueError, ["move.csv", "line 2", "not readable as CSV"]),

    # identification logs (ffwd/identify/logs.py read_log)
    Row("log_missing_tau", log_file("run.csv", header="t,q_j1,q_j2,tau_j1,x",),
        lambda p: read_log(p, two_link()), ValueError, ["run.csv", "missing column 'tau_j2'"]),
    Row("log_duplicated_time", log_file("run.csv", edit=set_cell(10, 0, "0.0900")),
        lambda p: read_log(p, two_link()), ValueError, ["run.csv", "line 12", "column 't'", "duplicated"]),
    Row("log_time_backwards", log_file("run.csv", edit=set_cell(10, 0, "0.0500")),
        lambda p: read_log(p, two_link()), ValueError, ["run.csv", "line 12", "goes backwards"]),
    Row("log_gap", log_file("run.csv", edit=lambda rows: [r.__setitem__(0, f"{float(r[0]) + 1:.4f}")
                                                          for r in rows[30:]]),
        lambda p: read_log(p, two_link()), ValueError, ["run.csv", "line 32", "gap of"]),
    Row("log_nan", log_file("run.csv", edit=set_cell(5, 3, "nan")),
        lambda p: read_log(p, two_link()), ValueError, ["run.csv", "line 7", "t = 0.05 s", "'tau_j1'"]),
    Row("log_empty_cell", log_file("run.csv", edit=set_cell(7, 2, "")),
        lambda p: read_log(p, two_link()), ValueError, ["run.csv", "line 9", "'q_j2'", "empty"]),
    Row("log_too_short", log_file("run.csv", n=10),
        lambda p: read_log(p, two_link()), ValueError, ["run.csv", "only 10 samples", "at least 50"]),
    Row("log_duplicate_column", log_file("run.csv", header="t,q_j1,q_j1,tau_j1,tau_j2"),
        lambda p: read_log(p, two_link()), ValueError, ["run.csv", "'q_j1'", "more than once"]),
    Row("log_current_without_kt", log_file("run.csv", header="t,q_j1,q_j2,i_j1,tau_j2"),
        lambda p: read_log(p, two_link()), ValueError, ["run.csv", "'i_j1'", "torque constant", "'j1'"]),
    Row("log_cutoff_above_nyquist", log_file("run.csv"),
        lambda p: prepare(read_log(p, two_link()), cutoff=80.0), ValueError,
        ["run.csv", "cutoff 80 Hz", "Nyquist"]),

    # the model API
    Row("robot_with_parameters_shape", lambda _: planar(),
        lambda r: r.with_parameters(np.zeros(5)), ModelError, ["planar3_vertical.toml", "'theta'", "(39,)"]),
    Row("robot_with_parameters_mass", lambda _: planar(),
        lambda r: r.with_parameters(np.where(np.arange(39) == 13, -1.0, r.parameter_vector())),
        ModelError, ["planar3_vertical.toml", "joint 'j2'", "theta[13]", "mass must be > 0"]),
    Row("robot_with_payload_nan", lambda _: planar(),
        lambda r: r.with_payload(float("nan")), ModelError, ["planar3_vertical.toml", "payload.mass", "finite"]),
    Row("robot_with_parameters_text", lambda _: planar(),
        lambda r: r.with_parameters("x"), ModelError,
        ["planar3_vertical.toml", "'theta' = 'x'", "must be numbers"]),
    Row("robot_with_parameters_huge_integer", lambda _: planar(),
        lambda r: r.with_parameters([10 ** 400] * 39), ModelError,
        ["planar3_vertical.toml", "'theta'", "too large for a float"]),
    Row("robot_with_payload_ragged_inertia", lambda _: planar(),
        lambda r: r.with_payload(1.0, (0.0, 0.0, 0.0), [[1.0, 2.0], [3.0]]), ModelError,
        ["planar3_vertical.toml", "payload.inertia", "must be numbers"]),
    Row("robot_joints_not_a_sequence", lambda _: None,
        lambda _: ffwd.Robot("rig", [0.0, 0.0, -9.81], 5), ModelError,
        ["'joint' = 5", "sequence of Joint"]),
    Row("robot_source_not_a_name", lambda _: planar(),
        lambda r: ffwd.Robot("rig", r.gravity, r.joints, source=np.zeros(3)), ModelError,
        ["'source'", "[0.0, 0.0, 0.0]", "file name or None"]),
    Row("joint_type_not_text", lambda _: planar(),
        lambda r: __import__("dataclasses").replace(r.joints[0], type=np.array(["a", "b"])),
        ModelError, ["joint 'j1'", "'type'", "['a', 'b']", "must be one of"]),
    Row("joint_name_array_one_line", lambda _: planar(),
        lambda r: __import__("dataclasses").replace(r.joints[0], name=np.eye(3)),
        ModelError, ["joint [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]]", "non-empty string"]),
    Row("robot_unknown_joint", lambda _: planar(),
        lambda r: r.index("j9"), ModelError, ["'joint'", "'j9'", "no such joint"]),

    # Speed scaling: Path, Governor, time_optimal
    Row("path_times_not_increasing", lambda _: None,
        lambda _: Path.from_waypoints([0.0, 1.0, 1.0], np.zeros((3, 3))), ValueError,
        ["times[2]", "does not increase"]),
    Row("path_q_nan", lambda _: None,
        lambda _: Path.from_waypoints([0.0, 1.0], [[0, 0, 0], [1, np.nan, 1]]), ValueError,
        ["q[1, 1]", "nan", "not finite"]),
    Row("path_wrong_rows", lambda _: None,
        lambda _: Path.from_waypoints([0.0, 1.0, 2.0], np.zeros((2, 3))), ValueError,
        ["q:", "(3, dof)", "(2, 3)"]),
    Row("governor_horizon_0", lambda _: None, gov(horizon=0), ValueError, ["horizon", "2 to 256", "got 0"]),
    Row("governor_horizon_over_max", lambda _: None, gov(horizon=257), ValueError, ["horizon", "got 257"]),
    Row("governor_dt_zero", lambda _: None, gov(dt=0.0), ValueError, ["dt", "positive", "got 0.0"]),
    Row("governor_dt_negative", lambda _: None, gov(dt=-0.001), ValueError, ["dt", "got -0.001"]),
    Row("governor_margin", lambda _: None, gov(margin=0.7), ValueError, ["margin", "[0, 0.5)", "0.7"]),
    Row("governor_limit_missing", lambda _: without_limits(planar(), 1, "acceleration"),
        lambda r: __import__("ffwd.scaling.governor", fromlist=["Governor"]).Governor(r, short_path()),
        ModelError, ["planar3_vertical.toml", "joint 'j2'", "limits.acceleration", "needed"]),
    Row("governor_path_dof", lambda _: None,
        lambda _: __import__("ffwd.scaling.governor", fromlist=["Governor"]).Governor(
            planar(), Path.from_waypoints([0.0, 1.0], [[0.0, 0.0], [0.5, 0.3]])),
        ValueError, ["path has 2 joints", "'planar3_vertical' has 3"]),
    Row("governor_override_nan", lambda _: gov(backend="twin")(None),
        lambda g: g.run(float("nan")), ValueError, ["override", "non-finite"]),
    Row("governor_start_outside_limits", lambda _: __import__(
        "ffwd.scaling.governor", fromlist=["Governor"]).Governor(
            planar(), short_path(q_start=(3.0, 0.0, 0.0)), backend="twin"),
        lambda g: g.run(1.0), InfeasiblePath, ["joint 'j1'", "position limit", "grid index 0"]),
    Row("governor_override_text", lambda _: gov(backend="twin")(None),
        lambda g: g.run("fast"), ValueError, ["override", "'fast'"]),
    Row("topp_infeasible_torque", lambda _: weak_robot(),
        lambda r: time_optimal(r, short_path(), grid=50), InfeasiblePath,
        ["infeasible path", "grid index 0", "joint 'j1'", "torque limit"]),
    Row("topp_outside_position_limits", lambda _: None,
        lambda _: time_optimal(planar(), short_path(q_end=(5.0, 0.3, 0.2)), grid=50), InfeasiblePath,
        ["joint 'j1'", "position limit", "outside [-2.8, 2.8]"]),
    Row("topp_limit_missing", lambda _: without_limits(planar(), 2, "torque"),
        lambda r: time_optimal(r, short_path(), grid=50), ModelError,
        ["joint 'j3'", "limits.torque", "needed for speed scaling"]),
    Row("topp_negative_start_speed", lambda _: None,
        lambda _: time_optimal(planar(), short_path(), grid=50, start_speed=-1.0), ValueError,
        ["start_speed", "-1"]),
    Row("topp_end_speed_too_high", lambda _: None,
        lambda _: time_optimal(planar(), short_path(), grid=50, end_speed=1e3), InfeasiblePath,
        ["end speed 1000", "exceeds"]),
    Row("topp_grid_too_small", lambda _: None,
        lambda _: time_optimal(planar(), short_path(), grid=1), ValueError, ["grid", "at least 2", "got 1"]),
    Row("path_waypoints_text", lambda _: None,
        lambda _: Path.from_waypoints(["a", "b"], np.zeros((2, 3))), ValueError, ["times", "'a'"]),
    Row("topp_negative_margin", lambda _: None,
        lambda _: time_optimal(planar(), short_path(), grid=50, margin=-1.0), ValueError,
        ["margin", "-1"]),
    Row("topp_rate_max_zero", lambda _: None,
        lambda _: time_optimal(planar(), short_path(), grid=50, rate_max=0.0), ValueError,
        ["rate_max", "0"]),
    Row("topp_grid_text", lambda _: None,
        lambda _: time_optimal(planar(), short_path(), grid="fine"), ValueError, ["grid", "'fine'"]),

    # ffwd.Dynamics arguments
    Row("dynamics_not_a_robot", lambda _: None, lambda _: ffwd.Dynamics("planar3_vertical.toml"),
        ValueError, ["robot", "ffwd.Robot", "str"]),
    Row("dynamics_unknown_library", lambda _: None, lambda _: ffwd.Dynamics(planar(), "/nowhere/libx.so"),
        NativeError, ["/nowhere/libx.so", "no such library"]),
    Row("dynamics_backend_none", lambda _: None, lambda _: ffwd.Dynamics(planar(), None),
        ValueError, ["backend", "None"]),
]

for backend in ("c", "native", "twin"):
    b = backend
    TABLE += [
        Row(f"dynamics_{b}_wrong_dof", lambda _, b=b: dyn(b), lambda d: d.gravity(np.zeros(4)),
            ValueError, ["q:", "(3,) or (N, 3)", "(4,)"], needs=NEEDS[b]),
        Row(f"dynamics_{b}_batch_wrong_dof", lambda _, b=b: dyn(b),
            lambda d: d.mass_matrix(np.zeros((5, 2))), ValueError, ["q:", "(5, 2)"], needs=NEEDS[b]),
        Row(f"dynamics_{b}_3d_array", lambda _, b=b: dyn(b),
            lambda d: d.tool_pose(np.zeros((2, 2, 3))), ValueError, ["q:", "(2, 2, 3)"], needs=NEEDS[b]),
        Row(f"dynamics_{b}_scalar", lambda _, b=b: dyn(b),
            lambda d: d.tool_jacobian(0.0), ValueError, ["q:", "got ()"], needs=NEEDS[b]),
        Row(f"dynamics_{b}_object_dtype", lambda _, b=b: dyn(b),
            lambda d: d.gravity([0.0, None, 0.0]), ValueError, ["q:", "dtype object"], needs=NEEDS[b]),
        Row(f"dynamics_{b}_str_dtype", lambda _, b=b: dyn(b),
            lambda d: d.inverse_dynamics(Z3, np.array(["0", "1", "2"]), Z3), ValueError,
            ["qd:", "dtype <U1"], needs=NEEDS[b]),
        Row(f"dynamics_{b}_nan", lambda _, b=b: dyn(b),
            lambda d: d.inverse_dynamics(np.array([0.0, np.nan, 0.0]), Z3, Z3), ValueError,
            ["q[1]", "nan"], needs=NEEDS[b]),
        Row(f"dynamics_{b}_inf_batch", lambda _, b=b: dyn(b),
            lambda d: d.forward_dynamics(np.zeros((4, 3)), np.zeros((4, 3)),
                                         np.where(np.arange(12).reshape(4, 3) == 7, np.inf, 0.0)),
            ValueError, ["tau[2, 1]", "inf"], needs=NEEDS[b]),
        Row(f"dynamics_{b}_batch_mismatch", lambda _, b=b: dyn(b),
            lambda d: d.regressor(np.zeros((5, 3)), np.zeros((4, 3)), np.zeros((5, 3))), ValueError,
            ["qd:", "(5, 3) like q", "(4, 3)"], needs=NEEDS[b]),
        Row(f"dynamics_{b}_single_with_batch", lambda _, b=b: dyn(b),
            lambda d: d.torque_parts(np.zeros((5, 3)), Z3, np.zeros((5, 3))), ValueError,
            ["qd:", "(5, 3) like q", "(3,)"], needs=NEEDS[b]),
        Row(f"dynamics_{b}_payload_negative", lambda _, b=b: dyn(b),
            lambda d: d.set_payload(-1.0), ModelError, ["payload.mass", "-1.0", ">= 0"], needs=NEEDS[b]),
        Row(f"dynamics_{b}_payload_com_shape", lambda _, b=b: dyn(b),
            lambda d: d.set_payload(1.0, [0.0, 0.1]), ModelError, ["payload.com", "shape (3,)"],
            needs=NEEDS[b]),
    ]
for backend in ("c", "native", "twin"):
    TABLE.append(Row(
        f"dynamics_{backend}_q_1e300", lambda _, b=backend: dyn(b),
        lambda d: d.gravity(np.full(3, 1e300)), ValueError, ["q[0]", "1e+300", "out of range"],
        needs=NEEDS[backend]))


def _param(row):
    marks = []
    if row.defect:
        marks.append(pytest.mark.xfail(strict=True, reason=row.defect))
    return pytest.param(row, id=row.id, marks=marks)


@pytest.mark.parametrize("row", [_param(r) for r in TABLE])
def test_bad_input(row, tmp_path, request):
    if row.needs:
        request.getfixturevalue(row.needs)
    given = row.make(tmp_path)
    with pytest.raises(row.error) as info:
        row.call(given)
    text = str(info.value)
    assert text.strip(), "empty message"
    assert "\n" not in text.strip(), f"message is not one line: {text!r}"
    missing = [w for w in row.words if w not in text]
    assert not missing, f"message {text!r} lacks {missing}"


def test_table_ids_unique_and_large():
    ids = [r.id for r in TABLE]
    assert len(ids) == len(set(ids))
    assert len(ids) >= 40


# ---- the C API through the shipped libffwd (cffi) -------------------------------------

FFWD_OK, FFWD_E_ARG, FFWD_E_NONFINITE, FFWD_E_MODEL = 0, 1, 2, 3   # csrc/include/ffwd.h


@pytest.fixture(scope="module")
def clib(request):
    request.getfixturevalue("shipped_library")
    from ffwd import native
    return native.load_library()


class CCase:
    """A checked, bound model of planar3_vertical in cffi memory with outputs set to 7."""

    def __init__(self, L):
        self.L, self.ffi, self.lib = L, L.ffi, L.lib
        self.core = L.model(planar())
        self.m, self.w = self.core._m, self.core._w
        self.n = 3
        self.q = self.ffi.new("double[]", [0.1, -0.2, 0.3])
        self.qd = self.ffi.new("double[]", [0.5, 0.1, -0.4])
        self.qdd = self.ffi.new("double[]", [1.0, -1.0, 0.5])
        self.tau = self.ffi.new("double[]", [7.0] * 3)
        self.M = self.ffi.new("double[]", [7.0] * 9)
        self.Y = self.ffi.new("double[]", [7.0] * 3 * 39)

    def zeroed(self, *outs):
        return all(all(v == 0.0 for v in o) for o in outs)


def _c_null_q(c):
    return c.lib.ffwd_gravity_torque(c.m, c.w, c.ffi.NULL, c.tau), [c.tau]


def _c_null_work(c):
    return c.lib.ffwd_inverse_dynamics(c.m, c.ffi.NULL, c.q, c.qd, c.qdd, c.tau), [c.tau]


def _c_null_output(c):
    return c.lib.ffwd_mass_matrix(c.m, c.w, c.q, c.ffi.NULL), []


def _c_null_model(c):
    # no model: the output size is unknown, so only the status is promised
    return c.lib.ffwd_inverse_dynamics(c.ffi.NULL, c.w, c.q, c.qd, c.qdd, c.tau), []


def _c_dof(value):
    def case(c):
        m2 = c.ffi.new("ffwd_model *")
        m2[0] = c.m[0]
        m2.dof = value
        w2 = c.ffi.new("ffwd_work *")
        st = c.lib.ffwd_model_check(m2)
        assert c.lib.ffwd_work_init(w2, m2) == st
        return st, []
    return case


def _c_nonfinite(arg, value, fn):
    def case(c):
        getattr(c, arg)[1] = value
        if fn == "inverse_dynamics":
            return c.lib.ffwd_inverse_dynamics(c.m, c.w, c.q, c.qd, c.qdd, c.tau), [c.tau]
        if fn == "mass_matrix":
            return c.lib.ffwd_mass_matrix(c.m, c.w, c.q, c.M), [c.M]
        return c.lib.ffwd_regressor(c.m, c.w, c.q, c.qd, c.qdd, c.Y), [c.Y]
    return case


def _c_unbound_work(c):
    w2 = c.ffi.new("ffwd_work *")           # zero-filled, never passed to ffwd_work_init
    return c.lib.ffwd_gravity_torque(c.m, w2, c.q, c.tau), [c.tau]


def _c_work_of_other_model(c):
    m2 = c.ffi.new("ffwd_model *")
    m2[0] = c.m[0]                           # same numbers, but not the model w was bound to
    return c.lib.ffwd_gravity_torque(m2, c.w, c.q, c.tau), [c.tau]


def _c_dof_changed_after_init(c):
    c.m.dof = 2
    st = c.lib.ffwd_gravity_torque(c.m, c.w, c.q, c.tau)
    outs = [c.tau[0:2]]                     # with dof 2 the first two entries are the output
    return st, outs


def _c_unchecked_bad_model(c):
    m2 = c.ffi.new("ffwd_model *")
    m2[0] = c.m[0]
    m2.joint[1].inertia[0] = -1.0           # negative mass
    w2 = c.ffi.new("ffwd_work *")
    st_init = c.lib.ffwd_work_init(w2, m2)
    assert st_init == FFWD_E_MODEL
    return c.lib.ffwd_inverse_dynamics(m2, w2, c.q, c.qd, c.qdd, c.tau), [c.tau]


def _c_payload(mass, null_com=False):
    def case(c):
        com = c.ffi.NULL if null_com else c.ffi.new("double[3]", [0.0, 0.0, 0.05])
        inertia = c.ffi.new("double[6]", [0.001, 0, 0, 0.001, 0, 0.001])
        return c.lib.ffwd_payload_set(c.core._box, c.m, mass, com, inertia), []
    return case


def _c_model_nan_gravity(c):
    m2 = c.ffi.new("ffwd_model *")
    m2[0] = c.m[0]
    m2.gravity[2] = float("nan")
    return c.lib.ffwd_model_check(m2), []


C_TABLE = [
    ("c_null_q", _c_null_q, FFWD_E_ARG),
    ("c_null_work", _c_null_work, FFWD_E_ARG),
    ("c_null_output", _c_null_output, FFWD_E_ARG),
    ("c_null_model", _c_null_model, FFWD_E_ARG),
    ("c_dof_0", _c_dof(0), FFWD_E_MODEL),
    ("c_dof_over_max", _c_dof(10_000), FFWD_E_MODEL),
    ("c_nan_q_inverse_dynamics", _c_nonfinite("q", float("nan"), "inverse_dynamics"), FFWD_E_NONFINITE),
    ("c_inf_qd_inverse_dynamics", _c_nonfinite("qd", float("inf"), "inverse_dynamics"), FFWD_E_NONFINITE),
    ("c_nan_q_mass_matrix", _c_nonfinite("q", float("nan"), "mass_matrix"), FFWD_E_NONFINITE),
    ("c_neg_inf_qdd_regressor", _c_nonfinite("qdd", float("-inf"), "regressor"), FFWD_E_NONFINITE),
    ("c_unbound_work", _c_unbound_work, FFWD_E_MODEL),
    ("c_work_of_other_model", _c_work_of_other_model, FFWD_E_MODEL),
    ("c_dof_changed_after_init", _c_dof_changed_after_init, FFWD_E_MODEL),
    ("c_unchecked_bad_model", _c_unchecked_bad_model, FFWD_E_MODEL),
    ("c_model_nan_gravity", _c_model_nan_gravity, FFWD_E_MODEL),
    ("c_payload_nan_mass", _c_payload(float("nan")), FFWD_E_NONFINITE),
    ("c_payload_negative_mass", _c_payload(-1.0), FFWD_E_ARG),
    ("c_payload_null_com", _c_payload(1.0, null_com=True), FFWD_E_ARG),
]


@pytest.mark.parametrize("case, expected", [pytest.param(f, s, id=i) for i, f, s in C_TABLE])
def test_c_api_bad_input(clib, case, expected):
    c = CCase(clib)
    status, outs = case(c)
    assert status == expected, (f"status {status} ({clib.status_str(status)}), expected "
                                f"{expected} ({clib.status_str(expected)})")
    assert c.zeroed(*outs), "outputs are not zero after an error"
    assert clib.status_str(status) != "unknown status"


def test_c_dof_over_max_is_just_over(clib):
    """FFWD_MAX_DOF + 1 (not only an absurd value) is refused."""
    c = CCase(clib)
    st, _ = _c_dof(clib.max_dof + 1)(c)
    assert st == FFWD_E_MODEL
    st, _ = _c_dof(clib.max_dof)(c)   # the joints past dof 3 are zero: a bad model, too
    assert st == FFWD_E_MODEL


def test_native_model_nonfinite_names_the_status(clib):
    """ffwd.native's NativeModel turns the status into a one-line ValueError."""
    core = clib.model(planar())
    with pytest.raises(ValueError) as info:
        core.gravity(np.array([0.0, np.inf, 0.0]))
    assert str(info.value) == "gravity: non-finite input (NaN or Inf)"


# ---- the command line -----------------------------------------------------------------

CliRow = namedtuple("CliRow", "id make words defect", defaults=(None,))

GOOD_TOML = os.path.join(EXAMPLES, "planar3_vertical.toml")


def _argv_bad_model(tmp):
    p = write(tmp, "broken.toml", HEAD + joint() + joint("j2", mass="-4.0"))
    return ["check", p]


def _argv_missing_model(tmp):
    return ["check", os.path.join(str(tmp), "nothere.toml")]


def _argv_bad_dh(tmp):
    return ["check", dh("broken.dh.csv", ",ixz,iyz,", ",ixz,")(tmp)]


def _argv_bad_urdf(tmp):
    return ["check", urdf("broken.urdf", '<axis xyz="0 1 0"/>',
                          '<axis xyz="0 1 0"/><mimic joint="shoulder"/>')(tmp)]


def _argv_torques_bad_csv(tmp):
    p = write(tmp, "moves.csv", traj_rows(bad=(2, 2, "oops")))
    return ["torques", GOOD_TOML, p, "--out", os.path.join(str(tmp), "out")]


def _argv_torques_missing_csv(tmp):
    return ["torques", GOOD_TOML, os.path.join(str(tmp), "gone.csv"), "--out",
            os.path.join(str(tmp), "out")]


def _argv_export_bad_model(tmp):
    p = write(tmp, "broken.toml", HEAD + joint(limits="position = [1.0, -1.0]"))
    return ["export", p, "--out", os.path.join(str(tmp), "out")]


def _argv_export_bad_name(tmp):
    return ["export", GOOD_TOML, "--out", os.path.join(str(tmp), "out"), "--name", "9lives"]


def _argv_identify_bad_log(tmp):
    p = write(tmp, "run.csv", traj_rows())
    return ["identify", "fit", GOOD_TOML, p, "--out", os.path.join(str(tmp), "out")]


def _argv_simulate_bad_rate(tmp):
    return ["simulate", "track", GOOD_TOML, "--rate", "0", "--out", os.path.join(str(tmp), "out")]


def _argv_scale_bad_csv(tmp):
    p = write(tmp, "path.csv", traj_rows(bad=(3, 1, "x")))
    return ["scale", GOOD_TOML, p, "--out", os.path.join(str(tmp), "out")]


def _argv_scale_margin(tmp):
    p = write(tmp, "path.csv", traj_rows())
    return ["scale", GOOD_TOML, p, "--margin", "-1", "--out", os.path.join(str(tmp), "out")]


def _argv_govern_horizon(tmp):
    p = write(tmp, "path.csv", traj_rows())
    return ["govern", GOOD_TOML, p, "--step", "0:1", "--horizon", "0",
            "--out", os.path.join(str(tmp), "out")]


def _argv_govern_step(tmp):
    p = write(tmp, "path.csv", traj_rows())
    return ["govern", GOOD_TOML, p, "--step", "0:nan", "--out", os.path.join(str(tmp), "out")]


def _argv_manip_bad_csv(tmp):
    p = write(tmp, "poses.csv", traj_rows(bad=(1, 0, "")))
    return ["manip", GOOD_TOML, p, "--out", os.path.join(str(tmp), "out")]


def _argv_latency_iterations(tmp):
    return ["latency", GOOD_TOML, "--iterations", "0", "--out", os.path.join(str(tmp), "out")]


def _argv_huge_int(tmp):
    return ["check", toml("huge.toml", joint(mass="1" + "0" * 400))(tmp)]


def _argv_not_utf8(tmp):
    return ["check", write(tmp, "latin.toml",
                           (HEAD + joint()).replace('"rig"', '"r\xe9g"').encode("latin-1"), "wb")]


def _argv_kt_text(tmp):
    rows = "".join(f"{0.01 * k:.2f},0.1,0.2,0.3,1.0,0.5,0.2\n" for k in range(60))
    p = write(tmp, "run.csv", "t,q_j1,q_j2,q_j3,i_j1,i_j2,i_j3\n" + rows)
    return ["identify", "fit", GOOD_TOML, p, "--out", os.path.join(str(tmp), "out"), "--kt", "abc"]


CLI_TABLE = [
    CliRow("cli_check_bad_model", _argv_bad_model, ["broken.toml", "joint 'j2'", "link.mass", "-4.0"]),
    CliRow("cli_check_missing_file", _argv_missing_model, ["nothere.toml", "No such file"]),
    CliRow("cli_check_bad_dh", _argv_bad_dh, ["broken.dh.csv", "'iyz'", "missing column"]),
    CliRow("cli_check_bad_urdf", _argv_bad_urdf, ["broken.urdf", "joint 'elbow'", "mimic"]),
    CliRow("cli_torques_bad_csv", _argv_torques_bad_csv, ["moves.csv", "row 4", "'q_j2'", "'oops'"]),
    CliRow("cli_torques_missing_csv", _argv_torques_missing_csv, ["gone.csv", "No such file"]),
    CliRow("cli_export_bad_model", _argv_export_bad_model, ["broken.toml", "joint 'j1'", "limits.position"]),
    CliRow("cli_export_bad_name", _argv_export_bad_name, ["name", "'9lives'", "C identifier"]),
    CliRow("cli_identify_log_without_torques", _argv_identify_bad_log, ["run.csv", "missing column 'tau_j1'"]),
    CliRow("cli_simulate_rate_zero", _argv_simulate_bad_rate, ["rate", "got 0"]),
    CliRow("cli_scale_bad_csv", _argv_scale_bad_csv, ["path.csv", "row 5", "'q_j1'", "'x'"]),
    CliRow("cli_scale_negative_margin", _argv_scale_margin, ["--margin", "-1.0"]),
    CliRow("cli_govern_horizon_0", _argv_govern_horizon, ["horizon", "got 0"]),
    CliRow("cli_govern_step_nan", _argv_govern_step, ["--step", "'0:nan'"]),
    CliRow("cli_manip_bad_csv", _argv_manip_bad_csv, ["poses.csv", "row 3", "'t'"]),
    CliRow("cli_latency_iterations_0", _argv_latency_iterations, ["--iterations", "got 0"]),
    CliRow("cli_check_huge_integer", _argv_huge_int, ["huge.toml", "joint 'j1'", "link.mass"]),
    CliRow("cli_check_not_utf8", _argv_not_utf8, ["latin.toml"]),
    CliRow("cli_identify_kt_text", _argv_kt_text, ["--kt", "'abc'"]),
]


def _cli_param(row):
    marks = [pytest.mark.xfail(strict=True, reason=row.defect)] if row.defect else []
    return pytest.param(row, id=row.id, marks=marks)


@pytest.mark.parametrize("row", [_cli_param(r) for r in CLI_TABLE])
def test_cli_bad_input(row, tmp_path, capsys):
    from ffwd.cli import main
    argv = row.make(tmp_path)
    rc = main(argv)
    err = capsys.readouterr().err
    assert rc == 2, f"exit code {rc}, stderr {err!r}"
    assert "Traceback" not in err
    errors = [line for line in err.splitlines() if ": error: " in line]
    assert len(errors) == 1, f"expected one error line, got {err!r}"
    assert errors[0].startswith(f"ffwd {argv[0]}: error: ")
    assert err.rstrip("\n").splitlines()[-1] == errors[0], "the error line is not the last"
    missing = [w for w in row.words if w not in errors[0]]
    assert not missing, f"{errors[0]!r} lacks {missing}"
