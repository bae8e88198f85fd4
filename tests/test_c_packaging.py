"""A C program builds against the installed package three ways - CMake find_package(ffwd),
pkg-config, and the `ffwd flags` verb - and runs.

The program builds a one-joint pendulum (point mass m at distance l on a horizontal
revolute axis) by hand and prints its gravity torque at q; the expected value is
m g l cos(q) (common practice, no source).
"""
import os
import shutil
import subprocess
import sys

import numpy as np
import pytest

PROGRAM = r"""
#include <stdio.h>
#include <stdlib.h>
#include "ffwd.h"

static ffwd_model model;
static ffwd_work work;

int main(int argc, char **argv)
{
    const ffwd_real m = 2.0, l = 0.5;
    ffwd_real q[1], tau[1];
    ffwd_status s;
    if (argc != 2) return 2;
    q[0] = (ffwd_real)strtod(argv[1], NULL);
    model.dof = 1u;
    model.gravity[2] = -9.81;
    model.joint[0].type = FFWD_REVOLUTE;
    model.joint[0].parent = -1;
    model.joint[0].rot[0] = model.joint[0].rot[4] = model.joint[0].rot[8] = 1.0;
    model.joint[0].axis[1] = -1.0;                     /* q > 0 lifts the arm (+x towards +z) */
    model.joint[0].inertia[0] = m;                     /* point mass at (l, 0, 0) */
    model.joint[0].inertia[1] = m * l;
    model.joint[0].inertia[4] = 1e-6;                  /* Ixx: a thin rod, not exactly a point */
    model.joint[0].inertia[7] = m * l * l + 1e-6;      /* Iyy */
    model.joint[0].inertia[9] = m * l * l + 1e-6;      /* Izz */
    model.joint[0].coulomb_band = 0.01;
    model.tool_parent = 0;
    model.tool_rot[0] = model.tool_rot[4] = model.tool_rot[8] = 1.0;
    s = ffwd_work_init(&work, &model);
    if (s == FFWD_OK) s = ffwd_gravity_torque(&model, &work, q, tau);
    if (s != FFWD_OK) { fprintf(stderr, "%s\n", ffwd_status_str(s)); return 1; }
    printf("%.17g\n", (double)tau[0]);
    return 0;
}
"""

CMAKELISTS = """cmake_minimum_required(VERSION 3.18)
project(pendulum C)
find_package(ffwd 0.1 REQUIRED CONFIG)
add_executable(pendulum pendulum.c)
target_link_libraries(pendulum PRIVATE ffwd::ffwd)
target_compile_options(pendulum PRIVATE -std=c99 -Wall -Wextra -Wpedantic -Wconversion -Werror)
"""
C_FLAGS = ["-std=c99", "-Wall", "-Wextra", "-Wpedantic", "-Wconversion", "-Werror"]


def expected(q):
    return 2.0 * 9.81 * 0.5 * np.cos(q)


def run_and_check(exe):
    for q in (0.0, 0.7, -2.0):
        out = subprocess.run([str(exe), repr(q)], check=True, capture_output=True, text=True)
        assert float(out.stdout) == pytest.approx(expected(q), rel=1e-12, abs=1e-12)


@pytest.fixture()
def source(tmp_path):
    (tmp_path / "pendulum.c").write_text(PROGRAM)
    return tmp_path


def test_cmake_find_package(source, cmake_exe, package_dir):
    (source / "CMakeLists.txt").write_text(CMAKELISTS)
    build = source / "build"
    r = subprocess.run([cmake_exe, "-S", str(source), "-B", str(build),
                        f"-DCMAKE_PREFIX_PATH={package_dir}"], capture_output=True, text=True)
    assert r.returncode == 0, r.stdout + r.stderr
    r = subprocess.run([cmake_exe, "--build", str(build)], capture_output=True, text=True)
    assert r.returncode == 0, r.stdout + r.stderr
    run_and_check(build / "pendulum")


def test_pkg_config(source, cc_exe, package_dir):
    pkg_config = shutil.which("pkg-config")
    if pkg_config is None:
        pytest.skip("pkg-config not installed (.ci/run installs it)")
    env = dict(os.environ, PKG_CONFIG_PATH=os.path.join(package_dir, "lib", "pkgconfig"))
    flags = subprocess.run([pkg_config, "--cflags", "--libs", "ffwd"], env=env, check=True,
                           capture_output=True, text=True).stdout.split()
    assert any(f.endswith("libffwd.a") for f in flags)
    exe = source / "pendulum"
    subprocess.run([cc_exe, *C_FLAGS, str(source / "pendulum.c"), *flags, "-o", str(exe)],
                   check=True, capture_output=True, text=True)
    run_and_check(exe)


def test_flags_verb(source, cc_exe, package_dir):
    def flags(option):
        r = subprocess.run([sys.executable, "-m", "ffwd.cli", "flags", option],
                           check=True, capture_output=True, text=True)
        return r.stdout.split()
    cflags, libs = flags("--cflags"), flags("--libs")
    assert f"-I{os.path.join(package_dir, 'include')}" in cflags
    assert os.path.samefile(flags("--cmake-dir")[0], os.path.join(package_dir, "lib", "cmake", "ffwd"))
    exe = source / "pendulum"
    subprocess.run([cc_exe, *C_FLAGS, *cflags, str(source / "pendulum.c"), *libs, "-o", str(exe)],
                   check=True, capture_output=True, text=True)
    run_and_check(exe)
    # and the shared library, found through the rpath the flags carry
    exe2 = source / "pendulum_shared"
    subprocess.run([cc_exe, *C_FLAGS, *cflags, str(source / "pendulum.c"), *flags("--libs-shared"),
                    "-o", str(exe2)], check=True, capture_output=True, text=True)
    run_and_check(exe2)
