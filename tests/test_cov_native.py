"""ffwd/native.py: the small header preprocessor behind the cffi loader, and its refusals."""
import os
import shutil

import numpy as np
import pytest

import ffwd
from ffwd import native

ROBOT = os.path.join(os.path.dirname(__file__), "..", "examples", "robots", "planar3_vertical.toml")


def test_conditionals_pick_the_right_branch(tmp_path):
    (tmp_path / "inner.h").write_text("typedef struct inner { int x; } inner;\n")
    (tmp_path / "top.h").write_text(
        '#include "inner.h"\n'
        "#include <stdint.h>\n"
        "#define WIDTH (FFWD_MAX_DOF * 2 + 1)\n"
        "#if defined(FFWD_SINGLE) && FFWD_MAX_DOF > 4\n"
        "typedef float real_t;\n"
        "#elif !defined(FFWD_SINGLE) || defined NOPE\n"
        "typedef double real_t;\n"
        "#else\n"
        "typedef char real_t;\n"
        "#endif\n"
        "#ifdef NOPE\n"
        "int hidden;\n"
        "#endif\n"
        "#ifndef NOPE\n"
        "/* a comment */ int shown[WIDTH]; // trailing\n"
        "#endif\n"
        "static inline int helper(int a)\n{\n    return a;\n}\n")
    dbl = native.declarations(str(tmp_path / "top.h"), 6, 8)
    assert "typedef double real_t;" in dbl and "float" not in dbl and "char real_t" not in dbl
    assert "int shown[13];" in dbl          # WIDTH evaluated with FFWD_MAX_DOF 6 and "hidden" not in dbl
    assert "struct inner" in dbl and "comment" not in dbl and "trailing" not in dbl
    assert "helper" not in dbl and "#" not in dbl
    flt = native.declarations(str(tmp_path / "top.h"), 6, 4)
    assert "typedef float real_t;" in flt and "double" not in flt
    small = native.declarations(str(tmp_path / "top.h"), 3, 4)   # FFWD_MAX_DOF > 4 fails
    assert "typedef char real_t;" in small


def test_the_real_header_declares_a_model_of_the_right_size(shipped_library, package_dir):
    from cffi import FFI
    lib = native.load_library(shipped_library)
    ffi = FFI()
    ffi.cdef(native.declarations(os.path.join(package_dir, "include", "ffwd.h"),
                                 lib.max_dof, lib.real_size))
    assert ffi.sizeof("ffwd_model") == lib.ffi.sizeof("ffwd_model")
    assert f"FFWD_MAX_DOF {lib.max_dof}" in repr(lib) and "ffwd_real double" in repr(lib)


@pytest.mark.parametrize("text, match", [
    ("#if sizeof(int) > 2\nint x;\n#endif\n", "cannot evaluate"),
    ("#if FOO = 1\nint x;\n#endif\n", "cannot evaluate"),
    ('#if FOO == "x"\nint x;\n#endif\n', "cannot evaluate"),
    ('#include "absent.h"\n', "cannot read header"),
])
def test_headers_it_cannot_read(tmp_path, text, match):
    (tmp_path / "bad.h").write_text(text)
    with pytest.raises(native.NativeError, match=match):
        native.declarations(str(tmp_path / "bad.h"), 16, 8)


def test_real_size_must_be_float_or_double(tmp_path):
    (tmp_path / "x.h").write_text("")
    with pytest.raises(native.NativeError, match=r"sizeof\(ffwd_real\) = 2"):
        native.declarations(str(tmp_path / "x.h"), 16, 2)


def test_header_cffi_cannot_parse_is_refused(shipped_library, package_dir, tmp_path):
    inc = tmp_path / "include"
    shutil.copytree(os.path.join(package_dir, "include"), inc)
    with open(inc / "ffwd.h", "a") as f:
        f.write("\nthis is not C;\n")
    with pytest.raises(native.NativeError, match="cannot declare for cffi"):
        native.load_library(shipped_library, header=str(inc / "ffwd.h"))


def test_native_model_checks_shapes_itself(shipped_library):
    core = native.load_library(shipped_library).model(ffwd.load(ROBOT))
    with pytest.raises(ValueError, match=r"gravity: inputs must have shape \(n,\) or \(N, n\) "
                                         r"with n = 3"):
        core.gravity(np.zeros(4))
    with pytest.raises(ValueError, match="inverse_dynamics: inputs must have shape"):
        core.inverse_dynamics(np.zeros((2, 3)), np.zeros((3, 3)), np.zeros((2, 3)))
    with pytest.raises(ValueError, match=r"regressor: non-finite input \(NaN or Inf\) \(sample 1\)"):
        bad = np.zeros((2, 3))
        bad[1, 0] = np.nan
        core.regressor(np.zeros((2, 3)), bad, np.zeros((2, 3)))
