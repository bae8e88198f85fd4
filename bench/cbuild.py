"""Compile the ffwd core and ffwd-bench variants for benchmarks, with the DESIGN.md flags.

Every variant (core, harness, exported model, symbolic code) is compiled with the same
`CFLAGS`, so ratios compare code, not compiler options. Objects are rebuilt only when a
source is newer than its object.
"""
from __future__ import annotations

import glob
import os
import shutil
import subprocess

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
CFLAGS = ["-O2", "-Wall", "-Wextra", "-Wpedantic", "-Wshadow", "-Wconversion", "-Werror",
          "-fno-math-errno"]
INCLUDES = ["-I" + os.path.join(ROOT, "csrc", "include"), "-I" + os.path.join(ROOT, "csrc")]
# A build for a CPU level on top of CFLAGS: x86-64-v3 (the x86-64 psABI level with AVX2,
# FMA, BMI1/2; every x86-64 CPU since about 2015) with contraction of a * b + c into one
# fused multiply-add (GCC keeps it off under -std=c99). The portable build above is the
# one the package ships and the tests and audits run on; this one is what a controller
# built for such a CPU gets (csrc/programs/ffwd_bench.c measures either).
CPU_LEVELS = {"x86-64-v3": ["-march=x86-64-v3", "-ffp-contract=fast"]}
# the /proc/cpuinfo flags a CPU needs to run x86-64-v3 code (lzcnt is "abm")
_V3_CPU_FLAGS = {"avx", "avx2", "bmi1", "bmi2", "f16c", "fma", "abm", "movbe", "xsave"}


def compiler():
    cc = os.environ.get("CC") or shutil.which("cc") or shutil.which("gcc")
    if not cc:
        raise OSError("no C compiler found (set CC)")
    return cc


def _std(path):
    with open(path, encoding="utf-8", errors="replace") as fh:
        return "-std=c11" if "stdatomic.h" in fh.read() else "-std=c99"


def _stale(target, sources):
    if not os.path.exists(target):
        return True
    t = os.path.getmtime(target)
    return any(os.path.getmtime(s) > t for s in sources)


def _run(cmd):
    res = subprocess.run(cmd, capture_output=True, text=True)
    if res.returncode != 0:
        raise OSError(f"compile failed: {' '.join(cmd)}\n{res.stdout}{res.stderr}")


def cpu_level_runs(level):
    """'' when this machine can build and run code for CPU level `level` (an x86-64 CPU with
    its flags and a compiler that knows the level), else why not."""
    import platform

    if level != "x86-64-v3":
        return f"unknown CPU level {level}"
    if platform.machine() not in ("x86_64", "AMD64"):
        return f"not an x86-64 machine ({platform.machine()})"
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as fh:
            flags = next((set(line.split(":", 1)[1].split()) for line in fh
                          if line.startswith("flags")), set())
    except OSError:
        return "no /proc/cpuinfo to read the CPU flags from"
    missing = sorted(_V3_CPU_FLAGS - flags)
    if missing:
        return f"the CPU lacks {', '.join(missing)}"
    res = subprocess.run([compiler(), "-march=x86-64-v3", "-x", "c", "-c", "-o", os.devnull, "-"],
                         input="int x;\n", capture_output=True, text=True)
    if res.returncode != 0:
        return f"the compiler does not know -march=x86-64-v3 ({res.stderr.strip()[:200]})"
    return ""


def core_sources():
    return sorted(glob.glob(os.path.join(ROOT, "csrc", "*.c")))


def core_library(build_dir, defines=(), extra=()):
    """Static libffwd.a of csrc/*.c in build_dir; returns its path."""
    os.makedirs(build_dir, exist_ok=True)
    headers = glob.glob(os.path.join(ROOT, "csrc", "*.h")) + \
        glob.glob(os.path.join(ROOT, "csrc", "include", "*.h"))
    objs = []
    for src in core_sources():
        obj = os.path.join(build_dir, os.path.basename(src)[:-2] + ".o")
        if _stale(obj, [src] + headers):
            _run([compiler(), _std(src)] + CFLAGS + list(extra) + INCLUDES
                 + [f"-D{d}" for d in defines] + ["-c", src, "-o", obj])
        objs.append(obj)
    lib = os.path.join(build_dir, "libffwd.a")
    if _stale(lib, objs):
        if os.path.exists(lib):
            os.remove(lib)
        _run(["ar", "rcs", lib] + objs)
    return lib


def program(build_dir, name, sources, defines=(), lib=None):
    """Link csrc/programs/ffwd_bench.c (or other sources) with libffwd into build_dir/name."""
    lib = lib or core_library(os.path.join(build_dir, "core"), defines)
    exe = os.path.join(build_dir, name)
    if _stale(exe, list(sources) + [lib]):
        _run([compiler(), "-std=c99"] + CFLAGS + INCLUDES + [f"-D{d}" for d in defines]
             + list(sources) + [lib, "-lm", "-o", exe])
    return exe


BENCH_SOURCE = os.path.join(ROOT, "csrc", "programs", "ffwd_bench.c")


def builtin_bench(build_dir, max_dof=32):
    """ffwd-bench with the built-in random chains, FFWD_MAX_DOF = max_dof."""
    d = os.path.join(build_dir, f"builtin{max_dof}")
    defines = [f"FFWD_MAX_DOF={max_dof}"]
    lib = core_library(os.path.join(d, "core"), defines)
    return program(d, "ffwd-bench", [BENCH_SOURCE], defines, lib)


def model_bench(build_dir, robot, name, symbolic_source=None, max_dof=16, single=False,
                level=None):
    """ffwd-bench with `robot` compiled in (exported as C by ffwd.export) and, when given,
    the generated symbolic inverse dynamics of the same robot. level: a CPU level of
    CPU_LEVELS whose flags every part (core, harness, symbolic code) gets, in folders of
    its own."""
    from ffwd.export import export_c

    extra = CPU_LEVELS[level] if level else []
    d = os.path.join(build_dir, name + (f"-{level}" if level else ""))
    os.makedirs(d, exist_ok=True)
    defines = [f"FFWD_MAX_DOF={max_dof}", "FFWD_BENCH_EXTERNAL"] + (["FFWD_SINGLE"] if single else [])
    core_defines = [f"FFWD_MAX_DOF={max_dof}"] + (["FFWD_SINGLE"] if single else [])
    lib = core_library(os.path.join(build_dir, f"core{max_dof}{'s' if single else ''}"
                                    + (f"-{level}" if level else "")), core_defines, extra)
    _write_if_changed_paths(export_c, robot, d, name)
    glue = os.path.join(d, "glue.c")
    _write_if_changed(glue, f'#include "{name}_model.h"\n'
                            "const ffwd_model *ffwd_bench_external_model(void);\n"
                            "const ffwd_model *ffwd_bench_external_model(void)\n"
                            f"{{\n    return &{name}_model;\n}}\n")
    sources = [BENCH_SOURCE, os.path.join(d, f"{name}_model.c"), glue]
    if symbolic_source is not None:
        sym = os.path.join(d, "symbolic.c")
        _write_if_changed(sym, symbolic_source)
        sources.append(sym)
        defines.append("FFWD_BENCH_SYMBOLIC")
    return _program_with_dir(d, sources, defines, lib, extra)


def _program_with_dir(d, sources, defines, lib, extra=()):
    exe = os.path.join(d, "ffwd-bench")
    if _stale(exe, list(sources) + [lib, BENCH_SOURCE]):
        _run([compiler(), "-std=c99"] + CFLAGS + list(extra) + INCLUDES + ["-I" + d]
             + [f"-D{x}" for x in defines] + list(sources) + [lib, "-lm", "-o", exe])
    return exe


def _write_if_changed(path, text):
    if os.path.exists(path):
        with open(path, encoding="utf-8") as fh:
            if fh.read() == text:
                return
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(text)


def _write_if_changed_paths(export_c, robot, d, name):
    """Export into a scratch folder and copy only the files whose text changed (keeps
    mtimes, so unchanged models are not recompiled)."""
    tmp = os.path.join(d, ".export")
    for path in export_c(robot, tmp, name):
        with open(path, encoding="utf-8") as fh:
            _write_if_changed(os.path.join(d, os.path.basename(path)), fh.read())
