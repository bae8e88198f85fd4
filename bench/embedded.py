"""Embedded proof: cross builds of the core, code size, worst-case stack, no heap/stdio,
and the C tests under qemu-aarch64. Writes build/embedded/report.json.

    python bench/embedded.py [--out build/embedded] [--skip-aarch64]

Builds (all with the DESIGN.md warning flags and -Werror):
  m7   Cortex-M7, double precision, hard float: -mcpu=cortex-m7 -mthumb -mfpu=fpv5-d16
  m4f  Cortex-M4F, single precision (-DFFWD_SINGLE): -mcpu=cortex-m4 -mfpu=fpv4-sp-d16
  aarch64  the C tests (tests/c/test_*.c) cross-built statically and run under
       qemu-aarch64; their exit codes must equal the x86-64 build's (and both pass).
Size: text_bytes is what a controller links, every core object except plant.o (the
simulated arm for hardware-in-the-loop tests, which runs on the PC side); the plant and
the total over all objects are listed beside it, with the largest functions
(arm-none-eabi-nm --size-sort) of the M7 build.
Stack: gcc -fstack-usage gives each function's own frame and -fcallgraph-info its calls;
the worst case of a public function is its frame plus the deepest chain below it
(no recursion is allowed, so the graph is a DAG; calls into the C library, e.g.
memset, are listed and counted as 0).
"""
from __future__ import annotations

import argparse
import glob
import json
import os
import re
import shutil
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
WARN = ["-std=c99", "-O2", "-Wall", "-Wextra", "-Wpedantic", "-Wshadow", "-Wconversion",
        "-Werror", "-fno-math-errno"]
TARGETS = {
    "m7": {"cc": "arm-none-eabi-gcc", "size": "arm-none-eabi-size", "nm": "arm-none-eabi-nm",
           "flags": ["-mcpu=cortex-m7", "-mthumb", "-mfpu=fpv5-d16", "-mfloat-abi=hard"],
           "defines": []},
    "m4f": {"cc": "arm-none-eabi-gcc", "size": "arm-none-eabi-size", "nm": "arm-none-eabi-nm",
            "flags": ["-mcpu=cortex-m4", "-mthumb", "-mfpu=fpv4-sp-d16", "-mfloat-abi=hard"],
            "defines": ["-DFFWD_SINGLE"]},
}
# undefined symbols that would mean heap, stdio or process exit inside the core
FORBIDDEN = re.compile(r"^(_?_?(malloc|calloc|realloc|free|aligned_alloc|posix_memalign|"
                       r"memalign|sbrk|_sbrk|brk|printf|fprintf|sprintf|snprintf|vprintf|"
                       r"vfprintf|vsnprintf|puts|fputs|putchar|fputc|putc|fwrite|fread|fopen|"
                       r"fclose|fflush|perror|scanf|sscanf|fscanf|getchar|exit|_exit|_Exit|"
                       r"abort|atexit|assert|__assert_func|__assert_fail|stdout|stderr|"
                       r"_impure_ptr|__errno|errno|_write|_read)(_r)?)$")
GOALS = {"text_bytes": 24 * 1024, "max_stack_bytes": 2048}
# objects a controller does not link: the simulated arm of the hardware-in-the-loop tests
NOT_IN_CONTROLLER = ("plant.o",)


def log(msg):
    print(f"[embedded] {msg}", file=sys.stderr, flush=True)


def _std(path):
    with open(path, encoding="utf-8", errors="replace") as fh:
        return "-std=c11" if "stdatomic.h" in fh.read() else "-std=c99"


def public_functions():
    names = []
    for h in glob.glob(os.path.join(ROOT, "csrc", "include", "*.h")):
        with open(h, encoding="utf-8") as fh:
            text = fh.read()
        names += re.findall(r"\b(ffwd_\w+)\s*\(", text)
    return sorted(set(n for n in names if not n.endswith("_H")))


def compile_core(target, outdir, extra=()):
    t = TARGETS[target]
    os.makedirs(outdir, exist_ok=True)
    for old in glob.glob(os.path.join(outdir, "*")):
        os.remove(old)
    objs, warnings, errors = [], [], []
    for src in sorted(glob.glob(os.path.join(ROOT, "csrc", "*.c"))):
        obj = os.path.join(outdir, os.path.basename(src)[:-2] + ".o")
        cmd = [t["cc"]] + WARN + [_std(src)] + t["flags"] + t["defines"] + list(extra) + [
            "-ffunction-sections", "-fdata-sections", "-fstack-usage", "-fcallgraph-info=su",
            "-I" + os.path.join(ROOT, "csrc", "include"), "-I" + os.path.join(ROOT, "csrc"),
            "-c", src, "-o", obj]
        res = subprocess.run(cmd, capture_output=True, text=True, cwd=outdir)
        if res.stderr.strip():
            (warnings if res.returncode == 0 else errors).append(res.stderr.strip())
        if res.returncode == 0:
            objs.append(obj)
    return objs, warnings, errors


def sizes(target, objs):
    res = subprocess.run([TARGETS[target]["size"], "-t"] + objs, capture_output=True, text=True)
    per = {}
    total = None
    for line in res.stdout.splitlines()[1:]:
        parts = line.split()
        if len(parts) >= 6:
            text, data, bss = int(parts[0]), int(parts[1]), int(parts[2])
            name = os.path.basename(parts[-1])
            if parts[-1] == "(TOTALS)":
                total = {"text_bytes": text, "data_bytes": data, "bss_bytes": bss}
            else:
                per[name] = {"text": text, "data": data, "bss": bss}
    return total, per


def function_sizes(target, objs, top=25):
    """The largest functions and constants of the objects (nm --size-sort), biggest first."""
    res = subprocess.run([TARGETS[target]["nm"], "--size-sort", "-S"] + objs,
                         capture_output=True, text=True)
    rows, obj = [], None
    for line in res.stdout.splitlines():
        if line.endswith(":") and line.strip():
            obj = os.path.basename(line[:-1])
            continue
        parts = line.split()
        if len(parts) == 4 and parts[2] in "tTrR":
            rows.append({"object": obj or os.path.basename(objs[0]), "function": parts[3],
                         "bytes": int(parts[1], 16)})
    rows.sort(key=lambda r: -r["bytes"])
    return rows[:top]


def undefined(target, objs):
    res = subprocess.run([TARGETS[target]["nm"], "-u"] + objs, capture_output=True, text=True)
    syms = set()
    for line in res.stdout.splitlines():
        parts = line.split()
        if len(parts) == 2 and parts[0] == "U":
            syms.add(parts[1])
    return sorted(syms)


_NODE = re.compile(r'node: \{ title: "([^"]+)" label: "([^"]*)"')
_EDGE = re.compile(r'edge: \{ sourcename: "([^"]+)" targetname: "([^"]+)"')


def call_graph(outdir):
    """(frames, edges): own stack bytes per function and its callees, from .ci files."""
    frames, edges, dynamic = {}, {}, set()
    for ci in glob.glob(os.path.join(outdir, "*.ci")):
        with open(ci, encoding="utf-8", errors="replace") as fh:
            text = fh.read()
        for title, label in _NODE.findall(text):
            m = re.search(r"\\n(\d+) bytes \(([^)]*)\)", label)
            if m:
                frames[title] = int(m.group(1))
                if "dynamic" in m.group(2):
                    dynamic.add(title)
            edges.setdefault(title, set())
        for src, dst in _EDGE.findall(text):
            edges.setdefault(src, set()).add(dst)
    return frames, edges, dynamic


def worst_stack(name, frames, edges):
    """Worst-case stack of `name`: own frame + deepest callee chain; no recursion."""
    memo, external, cycle = {}, set(), []

    def visit(fn, path):
        if fn in memo:
            return memo[fn]
        if fn in path:
            cycle.append(" -> ".join(path + [fn]))
            return 0
        own = frames.get(fn)
        if own is None:
            external.add(fn)
            own = 0
        deepest = 0
        for callee in edges.get(fn, ()):
            deepest = max(deepest, visit(callee, path + [fn]))
        memo[fn] = own + deepest
        return memo[fn]

    total = visit(name, [])
    return total, sorted(external), cycle


def stack_report(outdir, publics):
    frames, edges, dynamic = call_graph(outdir)
    out, externals, cycles = {}, set(), []
    for fn in publics:
        if fn not in frames:
            continue
        total, ext, cyc = worst_stack(fn, frames, edges)
        out[fn] = total
        externals.update(ext)
        cycles += cyc
    return out, sorted(externals), cycles, sorted(dynamic)


IMAGES = ("empty", "feedforward", "governor")
# a smaller build configuration a controller may choose: its RAM (work area, governor)
SMALL_CONFIG = ["-DFFWD_MAX_DOF=8", "-DFFWD_GOV_MAX_HORIZON=64"]


def linked_images(target, outdir, objs, extra=()):
    """The firmware images of bench/firmware/image.c (a start-up alone; a feedforward
    loop; the same with the governor) linked with --gc-sections against the core objects a
    controller links, so that each keeps only the functions it calls: .text (less the
    start-up's, the ffwd code the image carries), .data, .bss (the model, work area,
    payload box and governor state as static objects)."""
    t = TARGETS[target]
    src = os.path.join(ROOT, "bench", "firmware", "image.c")
    core = [o for o in objs if os.path.basename(o) not in NOT_IN_CONTROLLER]
    res = {}
    for img in IMAGES:
        obj, elf = (os.path.join(outdir, f"image_{img}{x}") for x in (".o", ".elf"))
        steps = ([t["cc"]] + WARN + ["-std=c99"] + t["flags"] + t["defines"] + list(extra)
                 + ["-ffunction-sections", "-fdata-sections", f"-DIMAGE_{img.upper()}",
                    "-I" + os.path.join(ROOT, "csrc", "include"), "-c", src, "-o", obj],
                 [t["cc"]] + t["flags"] + ["--specs=nano.specs", "--specs=nosys.specs",
                                           "-Wl,--gc-sections", obj] + core + ["-o", elf])
        for cmd in steps:
            r = subprocess.run(cmd, capture_output=True, text=True)
            if r.returncode != 0:
                return {"error": f"{' '.join(cmd[:3])} ...: {(r.stderr or r.stdout).strip()[:400]}"}
        total, _ = sizes(target, [elf])
        res[img] = total
    start = res["empty"]["text_bytes"]
    out = {"startup_text_bytes": start, "flags": " ".join(list(extra))}
    for img in IMAGES[1:]:
        out[img] = {"text_bytes": res[img]["text_bytes"] - start,
                    "data_bytes": res[img]["data_bytes"], "bss_bytes": res[img]["bss_bytes"]}
    return out


def embedded_build(target, outroot, publics):
    outdir = os.path.join(outroot, target)
    t = TARGETS[target]
    if not shutil.which(t["cc"]):
        return {"error": f"{t['cc']} not found (apt-get install gcc-arm-none-eabi)"}
    objs, warnings, errors = compile_core(target, outdir)
    rep = {"compiler": subprocess.run([t["cc"], "--version"], capture_output=True,
                                      text=True).stdout.splitlines()[0],
           "flags": " ".join(WARN + t["flags"] + t["defines"]),
           "warning_free": not warnings and not errors, "warnings": warnings, "errors": errors}
    if errors:
        return rep
    total, per = sizes(target, objs)
    rep.update(total or {})
    rep["per_object"] = per
    if total:
        rep["text_bytes_all_objects"] = total["text_bytes"]
        rep["text_bytes_plant"] = sum(v["text"] for k, v in per.items() if k in NOT_IN_CONTROLLER)
        rep["text_bytes"] = sum(v["text"] for k, v in per.items() if k not in NOT_IN_CONTROLLER)
        rep["text_bytes_note"] = ("text_bytes: the objects a controller links (all but "
                                  + ", ".join(NOT_IN_CONTROLLER) + ")")
    rep["largest_functions"] = function_sizes(target, objs)
    undef = undefined(target, objs)
    rep["undefined_symbols"] = undef
    rep["heap_symbols"] = [s for s in undef if FORBIDDEN.match(s)]
    rep["images"] = linked_images(target, outdir, objs)
    small = os.path.join(outroot, target + "-small")
    sobjs, _, serr = compile_core(target, small, SMALL_CONFIG)
    rep["images_small_config"] = (linked_images(target, small, sobjs, SMALL_CONFIG) if not serr
                                  else {"error": serr[0][:400]})
    stack, ext, cycles, dynamic = stack_report(outdir, publics)
    rep["stack_bytes"] = stack
    rep["max_stack_bytes"] = max(stack.values()) if stack else None
    rep["max_stack_function"] = max(stack, key=stack.get) if stack else None
    rep["stack_external_callees"] = ext
    rep["recursion"] = cycles
    rep["dynamic_stack_functions"] = dynamic
    return rep


# ---- aarch64 under qemu ---------------------------------------------------------------------

def _build_tests(cc, outdir, extra):
    os.makedirs(outdir, exist_ok=True)
    core = []
    inc = ["-I" + os.path.join(ROOT, "csrc", "include"), "-I" + os.path.join(ROOT, "csrc"),
           "-I" + os.path.join(ROOT, "tests", "c")]
    for src in sorted(glob.glob(os.path.join(ROOT, "csrc", "*.c"))):
        obj = os.path.join(outdir, os.path.basename(src)[:-2] + ".o")
        res = subprocess.run([cc] + WARN + [_std(src)] + inc + ["-c", src, "-o", obj],
                             capture_output=True, text=True)
        if res.returncode != 0:
            raise OSError(f"{cc}: {src}: {res.stderr.strip()}")
        core.append(obj)
    # a static archive, as CMake links the tests: a test that compiles a core file in
    # itself (test_payload_single) does not pull that member
    ar = "aarch64-linux-gnu-ar" if cc.startswith("aarch64") else "ar"
    lib = os.path.join(outdir, "libffwd.a")
    if os.path.exists(lib):
        os.remove(lib)
    subprocess.run([ar, "rcs", lib] + core, check=True)
    core = [lib]
    progs = {}
    for src in sorted(glob.glob(os.path.join(ROOT, "tests", "c", "test_*.c"))):
        name = os.path.basename(src)[:-2]
        exe = os.path.join(outdir, name)
        res = subprocess.run([cc] + WARN + [_std(src)] + inc + [src] + core
                             + ["-pthread", "-lm", "-o", exe] + extra,
                             capture_output=True, text=True)
        progs[name] = exe if res.returncode == 0 else f"build failed: {res.stderr.strip()[:400]}"
    return progs


# emulated and instrumented runs are slow: fewer reads for the payload stress test
TEST_ENV = {"FFWD_STRESS_READS": "200000"}


def _run_tests(progs, prefix, timeout=300):
    out = {}
    env = dict(os.environ, **TEST_ENV)
    for name, exe in progs.items():
        if exe.startswith("build failed"):
            out[name] = {"exit": None, "error": exe}
            continue
        try:
            res = subprocess.run(prefix + [exe], capture_output=True, text=True, timeout=timeout,
                                 cwd=ROOT, env=env)
            out[name] = {"exit": res.returncode,
                         "last_line": (res.stdout.strip().splitlines() or [""])[-1][:200],
                         "stdout": res.stdout}
        except subprocess.TimeoutExpired:
            out[name] = {"exit": None, "error": f"ran past {timeout} s"}
    return out


def aarch64(outroot):
    cc, qemu = "aarch64-linux-gnu-gcc", shutil.which("qemu-aarch64") or shutil.which("qemu-aarch64-static")
    if not shutil.which(cc) or not qemu:
        return {"qemu_aarch64_tests": "not run", "error": "needs gcc-aarch64-linux-gnu and qemu-user"}
    native = _run_tests(_build_tests(shutil.which("cc") or "gcc", os.path.join(outroot, "x86_64"), []), [])
    cross = _run_tests(_build_tests(cc, os.path.join(outroot, "aarch64"), ["-static"]), [qemu])
    rows, ok = {}, True
    for name in sorted(set(native) | set(cross)):
        a, b = native.get(name, {}), cross.get(name, {})
        same_exit = a.get("exit") == b.get("exit")
        same_out = a.get("stdout") == b.get("stdout")
        passed = a.get("exit") == 0 and b.get("exit") == 0
        ok = ok and passed and same_exit
        rows[name] = {"x86_64_exit": a.get("exit"), "aarch64_exit": b.get("exit"),
                      "same_exit": same_exit, "same_stdout": same_out,
                      "aarch64_last_line": b.get("last_line") or b.get("error")}
    return {"qemu_aarch64_tests": "pass" if ok and rows else "fail", "tests": rows,
            "qemu": qemu}


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--out", default=os.path.join(ROOT, "build", "embedded"))
    p.add_argument("--skip-aarch64", action="store_true")
    args = p.parse_args(argv)
    args.out = os.path.abspath(args.out)
    publics = public_functions()
    report = {"goals": GOALS}
    for target in TARGETS:
        log(f"building the core for {target}")
        report[target] = embedded_build(target, args.out, publics)
    m7 = report["m7"]
    report["text_bytes"] = m7.get("text_bytes")          # controller: all but plant.o
    report["text_bytes_plant"] = m7.get("text_bytes_plant")
    report["text_bytes_all_objects"] = m7.get("text_bytes_all_objects")
    # the dynamics alone, without the governor and the plant simulation
    report["text_bytes_m7_without_governor_plant"] = sum(
        v["text"] for k, v in m7.get("per_object", {}).items()
        if k not in ("governor.o",) + NOT_IN_CONTROLLER) or None
    # what a controller image carries (linked, --gc-sections), M7
    for img in IMAGES[1:]:
        r = m7.get("images", {}).get(img, {})
        report[f"image_text_bytes_{img}"] = r.get("text_bytes")
        report[f"image_bss_bytes_{img}"] = r.get("bss_bytes")
        report[f"image_bss_bytes_{img}_small_config"] = m7.get("images_small_config", {}).get(img, {}).get("bss_bytes")
    report["max_stack_bytes"] = max(
        [r["max_stack_bytes"] for r in (report["m7"], report["m4f"]) if r.get("max_stack_bytes")],
        default=None)
    report["heap_symbols"] = sorted(set(m7.get("heap_symbols", []) + report["m4f"].get("heap_symbols", [])))
    report["warning_free"] = bool(m7.get("warning_free") and report["m4f"].get("warning_free"))
    if not args.skip_aarch64:
        log("C tests: x86-64 and aarch64 under qemu")
        report["aarch64"] = aarch64(args.out)
        report["qemu_aarch64_tests"] = report["aarch64"]["qemu_aarch64_tests"]
    os.makedirs(args.out, exist_ok=True)
    path = os.path.join(args.out, "report.json")
    with open(path, "w", encoding="utf-8") as fh:
        json.dump(report, fh, indent=1)
        fh.write("\n")
    print(f"embedded report: {path}")
    for key in ("text_bytes", "text_bytes_plant", "text_bytes_all_objects",
                "text_bytes_m7_without_governor_plant", "image_text_bytes_feedforward",
                "image_text_bytes_governor", "image_bss_bytes_feedforward",
                "image_bss_bytes_governor", "image_bss_bytes_governor_small_config",
                "max_stack_bytes", "heap_symbols",
                "warning_free", "qemu_aarch64_tests"):
        print(f"  {key}: {report.get(key)}")
    for t in TARGETS:
        r = report[t]
        if "text_bytes" in r:
            print(f"  {t}: text {r['text_bytes']} (controller) + {r['text_bytes_plant']} (plant) "
                  f"data {r['data_bytes']} bss {r['bss_bytes']} bytes, "
                  f"worst stack {r['max_stack_bytes']} bytes ({r['max_stack_function']})")
            print(f"  {t}: largest: " + ", ".join(
                f"{f['function']} {f['bytes']}" for f in r["largest_functions"][:8]))
        for e in r.get("errors", []) + r.get("warnings", []):
            print(f"  {t}: {e.splitlines()[0]}")
    bad = (report["heap_symbols"] or not report["warning_free"]
           or report.get("qemu_aarch64_tests") == "fail")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
