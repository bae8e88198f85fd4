"""ffwd.native: the cffi loader finds the shipped libffwd, loads one at a user path, and
refuses a library whose header does not match its build."""
import os
import re
import shutil

import numpy as np
import pytest

import ffwd
from ffwd import Dynamics, native

SIX_AXIS = os.path.join(os.path.dirname(__file__), "..", "examples", "robots", "six_axis.toml")


def test_finds_the_shipped_library(shipped_library, package_dir):
    assert os.path.isfile(shipped_library)
    assert os.path.dirname(shipped_library) == os.path.join(package_dir, "lib")
    lib = native.load_library()
    assert lib.path == os.path.abspath(shipped_library)
    assert lib.max_dof >= 16 and lib.real_size == 8
    assert os.path.isfile(os.path.join(package_dir, "include", "ffwd.h"))


def test_build_info_matches_the_extension(shipped_library, core):
    lib = native.load_library()
    assert (lib.max_dof, lib.real_size) == (core.MAX_DOF, core.REAL_SIZE)
    assert lib.ffi.sizeof("ffwd_model") == core.MODEL_SIZE
    assert lib.ffi.sizeof("ffwd_work") == core.WORK_SIZE


def test_loads_a_library_at_a_user_path(shipped_library, package_dir, tmp_path):
    # a copy elsewhere, with the header beside it in the usual prefix layout
    (tmp_path / "lib").mkdir()
    copy = tmp_path / "lib" / "libffwd.so"
    shutil.copy(shipped_library, copy)
    shutil.copytree(os.path.join(package_dir, "include"), tmp_path / "include")
    robot = ffwd.load(SIX_AXIS)
    dyn = Dynamics(robot, str(copy))
    assert dyn._core.library.path == str(copy)
    assert dyn._core.library.header == str(tmp_path / "include" / "ffwd.h")
    q = np.linspace(-1, 1, robot.dof)
    np.testing.assert_allclose(dyn.gravity(q), Dynamics(robot, "twin").gravity(q),
                               rtol=1e-9, atol=1e-9)


def test_header_that_does_not_match_is_refused(shipped_library, package_dir, tmp_path):
    inc = tmp_path / "include"
    shutil.copytree(os.path.join(package_dir, "include"), inc)
    text = (inc / "ffwd.h").read_text()
    # one more field in ffwd_model: the struct no longer has the library's size
    text2 = re.sub(r"(typedef struct ffwd_model \{)", r"\1\n    double extra_field;", text, count=1)
    assert text2 != text
    (inc / "ffwd.h").write_text(text2)
    with pytest.raises(native.NativeError,
                       match=r"build info does not match the header .*sizeof\(ffwd_model\) = \d+"):
        native.load_library(shipped_library, header=str(inc / "ffwd.h"))


def test_not_a_library_and_missing_library(tmp_path):
    bogus = tmp_path / "libffwd.so"
    bogus.write_text("not a shared library")
    (tmp_path / "ffwd.h").write_text("")
    with pytest.raises(native.NativeError, match="cannot load"):
        native.load_library(str(bogus), header=str(tmp_path / "ffwd.h"))
    with pytest.raises(native.NativeError, match="no such library"):
        native.load_library(str(tmp_path / "missing.so"))
    with pytest.raises(native.NativeError, match="no such header"):
        native.load_library(str(bogus), header=str(tmp_path / "missing.h"))


def test_library_without_build_info_is_refused(tmp_path):
    # any shared library without the ffwd_build_info symbol: the C runtime's libm
    import ctypes.util
    libm = ctypes.util.find_library("m")
    if libm is None:
        pytest.skip("no libm to stand in for a foreign library")
    path = None
    for d in ("/lib/x86_64-linux-gnu", "/usr/lib/x86_64-linux-gnu", "/lib64", "/usr/lib64",
              "/lib/aarch64-linux-gnu", "/usr/lib"):
        if os.path.exists(os.path.join(d, libm)):
            path = os.path.join(d, libm)
            break
    if path is None:
        pytest.skip("libm not found on disk")
    (tmp_path / "ffwd.h").write_text("")
    with pytest.raises(native.NativeError, match="no ffwd_build_info symbol"):
        native.load_library(path, header=str(tmp_path / "ffwd.h"))


def test_declarations_follow_the_header(package_dir):
    """The cdef comes from the header text: every ffwd_ function declared there is in it,
    and FFWD_MAX_DOF / ffwd_real follow the requested build."""
    header = os.path.join(package_dir, "include", "ffwd.h")
    decl = native.declarations(header, 7, 4)
    assert "typedef float ffwd_real;" in decl
    assert "joint[7]" in decl and "FFWD_MAX_DOF" not in decl
    text = open(header).read()
    for name in re.findall(r"\b(ffwd_\w+)\s*\(", re.sub(r"/\*.*?\*/", "", text, flags=re.S)):
        assert re.search(rf"\b{name}\s*\(", decl), name
    decl8 = native.declarations(header, 16, 8)
    assert "typedef double ffwd_real;" in decl8 and "joint[16]" in decl8
    with pytest.raises(native.NativeError, match="sizeof\\(ffwd_real\\) = 2"):
        native.declarations(header, 16, 2)
