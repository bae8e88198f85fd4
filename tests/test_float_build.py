"""A single-precision build (-DFFWD_SINGLE) of libffwd, loaded through the cffi loader,
computes the inverse dynamics of the example robots close to the double-precision twin.

Tolerance 1e-4 relative to the size of each torque vector: float has a 2^-24 ~ 6e-8 unit
roundoff, and the recursions over <= 16 joints lose at most a few decades of it
(common practice, no source). The measured maximum is printed.
"""
import glob
import os
import subprocess

import numpy as np
import pytest

import ffwd
from ffwd import Dynamics, native

REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))

ROBOTS = sorted(glob.glob(os.path.join(REPO, "examples", "robots", "*.toml")))
REL_TOL = 1e-4


@pytest.fixture(scope="module")
def float_library(cmake_exe, tmp_path_factory):
    build = tmp_path_factory.mktemp("float-build")
    subprocess.run([cmake_exe, "-S", REPO, "-B", str(build), "-DCMAKE_BUILD_TYPE=Release",
                    "-DFFWD_SINGLE=ON", "-DFFWD_BUILD_PYTHON=OFF", "-DFFWD_BUILD_PROGRAMS=OFF",
                    "-DFFWD_BUILD_TESTS=OFF"], check=True, capture_output=True, text=True)
    subprocess.run([cmake_exe, "--build", str(build), "--target", "ffwd_shared", "-j", "2"],
                   check=True, capture_output=True, text=True)
    return native.load_library(str(build / "libffwd.so"),
                               header=os.path.join(REPO, "csrc", "include", "ffwd.h"))


def test_float_build_is_float(float_library):
    assert float_library.real_size == 4 and float_library.real == "float"
    assert float_library.ffi.sizeof("ffwd_real") == 4


def test_float_inverse_dynamics_close_to_double_twin(float_library):
    assert ROBOTS, "no example robots in examples/robots"
    rng = np.random.default_rng(2024)
    worst = []
    for path in ROBOTS:
        robot = ffwd.load(path)
        n = robot.dof
        q = rng.uniform(-np.pi, np.pi, (50, n))
        qd = rng.uniform(-2.0, 2.0, (50, n))
        qdd = rng.uniform(-5.0, 5.0, (50, n))
        want = Dynamics(robot, "twin").inverse_dynamics(q, qd, qdd)
        got = float_library.model(robot).inverse_dynamics(q, qd, qdd)
        scale = np.max(np.abs(want), axis=1, keepdims=True)
        rel = np.max(np.abs(got - want) / scale)
        worst.append((rel, os.path.basename(path)))
        assert rel <= REL_TOL, f"{os.path.basename(path)}: float build relative error {rel:.3g}"
    rel, name = max(worst)
    print(f"\nfloat build: max relative error of inverse dynamics {rel:.3g} ({name}); "
          + ", ".join(f"{n}: {r:.2g}" for r, n in worst))


def test_float_single_sample_equals_its_batch_row(float_library):
    # one sample at a time (float64 in, converted to float; float64 out) gives the rows of
    # the batch path of the same library exactly, through the model and through Dynamics
    robot = ffwd.load(os.path.join(REPO, "examples", "robots", "six_axis.toml"))
    n = robot.dof
    q, qd, qdd = np.random.default_rng(11).uniform(-1.0, 1.0, (3, 4, n))
    model = float_library.model(robot)
    dyn = Dynamics(robot, float_library.path)
    assert dyn._core.library.real_size == 4
    want = model.inverse_dynamics(q, qd, qdd)
    want_M = model.mass_matrix(q)
    want_parts = model.torque_parts(q, qd, qdd)
    for i in range(4):
        for got in (model.inverse_dynamics(q[i], qd[i], qdd[i]),
                    dyn.inverse_dynamics(q[i], qd[i], qdd[i]),
                    dyn.inverse_dynamics(list(q[i]), qd[i].astype(np.float32), qdd[i])):
            assert got.dtype == np.float64 and np.array_equal(got, want[i]), i
        M = dyn.mass_matrix(q[i])
        assert M.dtype == np.float64 and np.array_equal(M, want_M[i]), i
        parts = dyn.torque_parts(q[i], qd[i], qdd[i])
        assert all(np.array_equal(p, w[i]) for p, w in zip(parts, want_parts)), i
