"""`ffwd latency`: per-call latency of the C core on this CPU for a robot model.

Builds ffwd-bench with the model compiled in (exported as C, the way a controller
without a file system links it) using this machine's C compiler and the DESIGN.md flags,
times every core function call by call, prints the percentile summary and writes
latency.json, latency.png (histograms) and latency.md into --out.

Where the ffwd sources are not at hand (an installed wheel without the repository), the
installed ffwd-bench is used on a built-in random chain with the model's number of joints
and the output says so.
"""
from __future__ import annotations

import importlib.util
import json
import os
import shutil
import subprocess
import sys

from ._common import load_model

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
DEFAULT_MODEL = os.path.join(ROOT, "examples", "robots", "six_axis.toml")


def register(subparsers):
    p = subparsers.add_parser(
        "latency", help="measure the C core's per-call latency on this CPU",
        description="Build ffwd-bench for MODEL, time each C core function call by call and "
                    "write latency.json, latency.png and latency.md.")
    p.add_argument("model", nargs="?", default=DEFAULT_MODEL,
                   help="model file (.toml, .dh.csv, .urdf); default: the six-axis example")
    p.add_argument("--iterations", type=int, default=100000, help="timed calls per function")
    p.add_argument("--warmup", type=int, default=None, help="untimed calls first (default N/10)")
    p.add_argument("--functions", default="all",
                   help="comma list of inverse_dynamics, gravity, torque_parts, mass_matrix, "
                        "forward_dynamics, tool_pose, tool_jacobian, regressor (default all)")
    p.add_argument("--out", default="latency-output", help="output folder")
    p.add_argument("--build", default=None, help="build folder (default OUT/build)")
    p.set_defaults(func=run)


def _cbuild():
    """bench/cbuild.py of the source tree, or None when the sources are not here."""
    path = os.path.join(ROOT, "bench", "cbuild.py")
    if not (os.path.exists(path) and os.path.exists(os.path.join(ROOT, "csrc", "programs",
                                                                 "ffwd_bench.c"))):
        return None
    spec = importlib.util.spec_from_file_location("_ffwd_bench_cbuild", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def _installed_bench():
    try:
        from ..native import package_dir
        exe = os.path.join(package_dir(), "bin", "ffwd-bench")
        return exe if os.path.exists(exe) else None
    except Exception:
        return shutil.which("ffwd-bench")


def build_bench(robot, build_dir):
    """(path of ffwd-bench, how the model got in)."""
    cb = _cbuild()
    if cb is not None:
        exe = cb.model_bench(build_dir, robot, "latency_model")
        return exe, "model compiled in (exported as C)"
    exe = _installed_bench()
    if exe is None:
        raise OSError("cannot build ffwd-bench: no ffwd sources here and no installed "
                      "ffwd-bench (build the package, or run from the repository)")
    return exe, f"installed ffwd-bench on a random chain of {robot.dof} joints (no sources here)"


def markdown(robot, data, how, png):
    lines = [f"# Latency of the ffwd C core: {robot.name} ({robot.dof} joints)", "",
             f"{how}; {data['iterations']:,} timed calls per function after "
             f"{data['warmup']:,} warm-up calls; the timer's own cost ({data['timer_ns']} ns) "
             "is subtracted from every sample.", "",
             "| function | median ns | p90 ns | p99 ns | p99.9 ns | max ns |",
             "|---|---|---|---|---|---|"]
    for r in data["results"]:
        lines.append(f"| {r['function']} | {r['median_ns']:.0f} | {r['p90_ns']:.0f} | "
                     f"{r['p99_ns']:.0f} | {r['p999_ns']:.0f} | {r['max_ns']:.0f} |")
    lines += ["", f"![histograms]({os.path.basename(png)})", "",
              "Times depend on this CPU, its load and its frequency governor; pin the "
              "process (taskset) on a quiet core for figures that stand for a controller."]
    return "\n".join(lines) + "\n"


def run(args):
    if args.iterations < 1:
        raise ValueError(f"--iterations: must be >= 1, got {args.iterations}")
    robot = load_model(args.model)
    out = args.out
    os.makedirs(out, exist_ok=True)
    build = args.build or os.path.join(out, "build")
    exe, how = build_bench(robot, build)
    warm = args.warmup if args.warmup is not None else max(args.iterations // 10, 1)
    cmd = [exe, "--functions", args.functions, "--iterations", str(args.iterations),
           "--warmup", str(warm), "--json"]
    if how.startswith("installed"):
        cmd += ["--dof", str(robot.dof)]
    print(f"ffwd latency: {robot.name}, {how}; timing {args.iterations:,} calls per function",
          file=sys.stderr)
    res = subprocess.run(cmd, capture_output=True, text=True)
    if res.returncode not in (0, 1) or not res.stdout.strip():
        raise OSError(f"ffwd-bench failed: {res.stderr.strip() or res.returncode}")
    data = json.loads(res.stdout)
    data.update({"iterations": args.iterations, "robot": robot.name, "dof": robot.dof,
                 "model": os.path.abspath(args.model), "how": how})
    with open(os.path.join(out, "latency.json"), "w", encoding="utf-8") as fh:
        json.dump(data, fh, indent=1)
    from ..plots.latency import plot_latency
    png = plot_latency(data["results"], f"ffwd C core latency, {robot.name}",
                       os.path.join(out, "latency.png"))
    with open(os.path.join(out, "latency.md"), "w", encoding="utf-8") as fh:
        fh.write(markdown(robot, data, how, png))
    print(f"{'function':18s} {'median':>9s} {'p99':>9s} {'p99.9':>9s} {'max':>10s}  ns")
    for r in data["results"]:
        print(f"{r['function']:18s} {r['median_ns']:9.0f} {r['p99_ns']:9.0f} "
              f"{r['p999_ns']:9.0f} {r['max_ns']:10.0f}")
    print(f"wrote {out}/latency.json, latency.png, latency.md")
    bad = [r["function"] for r in data["results"] if r["status"] != 0]
    if bad:
        print(f"ffwd latency: status not OK in {', '.join(bad)}", file=sys.stderr)
        return 1
    return 0
