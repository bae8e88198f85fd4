"""Speed-scaling figures: the governor's cost per control cycle and the offline solver's
time. Prints JSON (medians of repeated runs); asserts nothing.

    python bench/bench_scaling.py [--repeat 5]

governor_step_us_median_6dof_h64: one control cycle of the C governor (push of the
  samples that fit, usually one, plus ffwd_governor_step), six_axis example robot,
  window 64 samples, dt = ds = 1 ms, command 100 %; median over all cycles of a path.
governor_cycle_instructions_6dof_h64: the same cycles under valgrind's callgrind,
  collection on inside ffwd_governor_push and ffwd_governor_step only: instructions per
  cycle (repeatable where the times move with the machine's load; left out with
  --no-instructions or without valgrind).
offline_scaling_ms_1000: ffwd.scaling.time_optimal on the same robot and path with a
  1000-segment grid (torque parts through the C core when built), without the jerk
  pass (the time-optimal solve itself), median of runs.
"""
import argparse
import json
import os
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import time

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(__file__), ".."))

import ffwd  # noqa: E402
from ffwd.scaling import Path, time_optimal  # noqa: E402

HERE = os.path.dirname(os.path.abspath(__file__))
ROBOT = os.path.join(HERE, "..", "examples", "robots", "six_axis.toml")


def demo_path():
    q = np.array([[0.0, 0.0, 0.0, 0.0, 0.0, 0.0],
                  [0.5, -0.3, 0.2, -0.5, 0.2, 0.0],
                  [1.0, 0.5, -0.8, 1.0, 0.7, 1.5]])
    return Path.from_waypoints([0.0, 1.0, 2.0], q)


def governor_cycles(robot, path, horizon=64, dt=0.001):
    from ffwd import _governor
    from ffwd.pack import model_fields
    g = _governor.Governor(**model_fields(robot).as_dict(), dt=dt, ds=dt, horizon=horizon,
                           override_max=1.0, rate_max=20.0, rate_rate_max=1000.0, margin=0.02)
    if g.init_status != 0:
        raise RuntimeError(_governor.status_str(g.init_status))
    s, Q, DQ, DDQ, DDDQ = path.samples(dt)
    return g.time_cycles(Q, DQ, DDQ, DDDQ, 1.0, 100000) / 1000.0   # us per cycle


def cycle_instructions():
    """Instructions per control cycle (push + step) over one run of the path, from
    callgrind (None without valgrind)."""
    if shutil.which("valgrind") is None:
        return None
    with tempfile.TemporaryDirectory(prefix="ffwd-cg-") as tmp:
        cg = os.path.join(tmp, "cg.out")
        res = subprocess.run(["valgrind", "--tool=callgrind", f"--callgrind-out-file={cg}",
                              "--collect-atstart=no", "--toggle-collect=ffwd_governor_step",
                              "--toggle-collect=ffwd_governor_push", sys.executable,
                              os.path.abspath(__file__), "--cycles-only"],
                             capture_output=True, text=True)
        if res.returncode != 0:
            raise OSError(f"callgrind run failed ({res.returncode}): {res.stderr[-500:]}")
        cycles = json.loads(res.stdout.strip().splitlines()[-1])["cycles"]
        with open(cg, encoding="utf-8", errors="replace") as fh:
            m = re.search(r"^(?:totals|summary):\s+(\d+)", fh.read(), re.M)
    if not m or not cycles:
        raise OSError("no totals in the callgrind output of the governor run")
    return int(m.group(1)) / cycles


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--no-instructions", action="store_true",
                    help="leave out the callgrind count of the governor cycle")
    ap.add_argument("--cycles-only", action="store_true", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    robot = ffwd.load(ROBOT)
    path = demo_path()
    if args.cycles_only:      # the run callgrind counts (one pass over the path)
        print(json.dumps({"cycles": int(len(governor_cycles(robot, path)))}))
        return 0
    out = {}
    try:
        us = np.concatenate([governor_cycles(robot, path) for _ in range(args.repeat)])
        out["governor_step_us_median_6dof_h64"] = float(np.median(us))
        # where the window holds the speed about every other cycle is held (no plan check):
        # the cycle times are two groups, so the mean and p90 are told beside the median
        out["governor_step_us_mean_6dof_h64"] = float(np.mean(us))
        out["governor_step_us_p90_6dof_h64"] = float(np.percentile(us, 90))
        out["governor_step_us_p99_6dof_h64"] = float(np.percentile(us, 99))
        out["governor_step_us_max_6dof_h64"] = float(us.max())
        if not args.no_instructions:
            out["governor_cycle_instructions_6dof_h64"] = cycle_instructions()
    except ImportError as exc:
        out["governor_step_us_median_6dof_h64"] = None
        out["governor_note"] = f"ffwd._governor not built: {exc}"
    time_optimal(robot, path, grid=1000, jerk=False)   # warm-up (imports, first calls)
    ms = []
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        plan = time_optimal(robot, path, grid=1000, jerk=False)
        ms.append((time.perf_counter() - t0) * 1e3)
    out["offline_scaling_ms_1000"] = statistics.median(ms)
    out["offline_duration_s"] = plan.duration
    try:
        from ffwd import _core  # noqa: F401
        out["offline_dynamics_backend"] = "c"
    except ImportError:
        out["offline_dynamics_backend"] = "twin"
    print(json.dumps(out, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
