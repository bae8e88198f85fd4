"""`ffwd export`: the model as C source compiles against the installed package (header and
libffwd.a), and the example program prints the torques Python computes, to 1e-12."""
import glob
import os
import subprocess
import sys

import numpy as np
import pytest

import ffwd
from ffwd import Dynamics
from ffwd.export import c_name, export_c
from ffwd.model import Drive, Joint, Limits, Link, Robot, Tool

REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
ROBOTS = sorted(glob.glob(os.path.join(REPO, "examples", "robots", "*.toml")))
C_FLAGS = ["-std=c99", "-O2", "-Wall", "-Wextra", "-Wpedantic", "-Wshadow", "-Wconversion", "-Werror"]


def tree_robot():
    """A small tree with a prismatic joint, friction, limits, a tool and a payload."""
    def rot(a):
        c, s = np.cos(a), np.sin(a)
        return np.array([[c, -s, 0], [s, c, 0], [0, 0, 1.0]])
    link = Link(1.3, [0.1, -0.02, 0.05], np.diag([0.02, 0.03, 0.04]))
    joints = (
        Joint("base_turn", "revolute", -1, rot(0.3), [0, 0, 0.2], [0, 0, 1], link,
              Drive(50.0, 2e-4, 0.5, 1.5, 0.02), Limits((-3.0, 3.0), 2.0, 10.0, 100.0, 80.0)),
        Joint("lift", "prismatic", 0, rot(-1.1), [0.1, 0.0, 0.3], [0, 0.6, 0.8], link,
              Drive(coulomb=3.0), Limits(velocity=0.5, torque=400.0)),
        Joint("left_arm", "revolute", 1, rot(0.7), [0.3, 0.1, 0.0], [1, 0, 0], link),
        Joint("right_arm", "revolute", 1, rot(2.0), [-0.3, 0.1, 0.0], [0, 1, 0], link,
              Drive(viscous=0.25)),
    )
    return Robot("test tree-4", [0.5, -0.2, -9.7], joints, Tool(2, rot(0.4), [0.0, 0.05, 0.12]),
                 ffwd.Payload(0.8, [0.01, 0.0, 0.03], np.diag([1e-3, 2e-3, 1.5e-3])))


def robots():
    out = [("tree4", tree_robot())]
    out += [(os.path.basename(p)[:-5], ffwd.load(p)) for p in ROBOTS]
    return out


def test_c_name():
    assert c_name("Six-Axis Arm 2") == "six_axis_arm_2"
    assert c_name("3dof") == "robot_3dof"
    with pytest.raises(ValueError, match="not a C identifier"):
        export_c(tree_robot(), "/tmp", name="1bad")


@pytest.mark.parametrize("label, robot", robots(), ids=lambda x: x if isinstance(x, str) else "")
def test_exported_model_gives_python_torques(label, robot, package_dir, cc_exe, tmp_path):
    name = c_name(label)
    paths = export_c(robot, tmp_path, name)
    assert [os.path.basename(p) for p in paths] == [f"{name}_model.h", f"{name}_model.c", "main.c"]
    exe = tmp_path / name
    subprocess.run([cc_exe, *C_FLAGS, "-I", os.path.join(package_dir, "include"),
                    str(tmp_path / "main.c"), str(tmp_path / f"{name}_model.c"),
                    os.path.join(package_dir, "lib", "libffwd.a"), "-lm", "-o", str(exe)],
                   check=True, capture_output=True, text=True)
    rng = np.random.default_rng(11)
    dyn = Dynamics(robot, "twin")
    for _ in range(3):
        q, qd, qdd = rng.uniform(-2, 2, (3, robot.dof))
        argv = [f"{v:.17g}" for v in np.concatenate([q, qd, qdd])]
        out = subprocess.run([str(exe), *argv], check=True, capture_output=True, text=True).stdout
        tau_c = np.array([float(x) for x in out.split()])
        want = dyn.inverse_dynamics(q, qd, qdd)
        np.testing.assert_allclose(tau_c, want, rtol=1e-12, atol=1e-12 * (1 + np.abs(want).max()))
    bad = subprocess.run([str(exe), "1"], capture_output=True, text=True)
    assert bad.returncode == 2 and "usage" in bad.stderr


def test_exported_struct_equals_packed_fields(package_dir, cc_exe, tmp_path, shipped_library):
    """The exported const struct and the cffi-filled struct are the same bytes."""
    from ffwd import native
    robot = tree_robot()
    export_c(robot, tmp_path, "tree")
    so = tmp_path / "libtree.so"
    subprocess.run([cc_exe, *C_FLAGS, "-shared", "-fPIC", "-I", os.path.join(package_dir, "include"),
                    str(tmp_path / "tree_model.c"), "-o", str(so)], check=True, capture_output=True,
                   text=True)
    from cffi import FFI
    lib = native.load_library()
    ffi = FFI()
    ffi.cdef(native.declarations(lib.header, lib.max_dof, lib.real_size)
             + "\nextern ffwd_model tree_model;")   # const: cffi would take it for a constant
    handle = ffi.dlopen(str(so))
    exported = bytes(ffi.buffer(ffi.addressof(handle, "tree_model")))
    packed = bytes(lib.ffi.buffer(lib.model(robot)._m))
    assert exported == packed


def test_cli_export(tmp_path):
    path = ROBOTS[0] if ROBOTS else None
    if path is None:
        pytest.skip("no example robots")
    r = subprocess.run([sys.executable, "-m", "ffwd.cli", "export", path, "--out", str(tmp_path),
                        "--name", "arm"], capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    assert (tmp_path / "arm_model.c").exists() and (tmp_path / "main.c").exists()
    assert "arm_model.c" in r.stdout
    r = subprocess.run([sys.executable, "-m", "ffwd.cli", "export", path, "--out", str(tmp_path),
                        "--name", "9x"], capture_output=True, text=True)
    assert r.returncode == 2 and "not a C identifier" in r.stderr
