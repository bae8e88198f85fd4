"""Fixed-rate loop statistics: a short ffwd-loop run on the demo robot, printed as JSON.

    python bench/bench_loop.py [--rate 1000] [--seconds 3] [--cpu N] [--rt-priority P]

Prints {loop_deadline_misses_1khz, loop_wakeup_p99_us, ...} (at the chosen rate; the
key names keep "1khz" for the default rate). Nothing is asserted: the figures depend on
the machine, its load and whether the OS grants CPU pinning and real-time priority
(the "realtime" part of the output says what it granted).
"""
import argparse
import json
import os
import sys

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.dirname(HERE))

import ffwd  # noqa: E402
from ffwd.sim import demo_path, run_loop  # noqa: E402
from ffwd.sim.reference import Reference  # noqa: E402


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--model", default=os.path.join(HERE, "..", "examples", "robots", "six_axis.toml"))
    p.add_argument("--rate", type=float, default=1000.0)
    p.add_argument("--seconds", type=float, default=3.0, help="reference length (demo path cut)")
    p.add_argument("--cpu", type=int, default=None)
    p.add_argument("--rt-priority", type=int, default=50,
                   help="SCHED_FIFO priority to ask for (default 50; 0 = do not ask)")
    p.add_argument("--out", help="also write the JSON here")
    args = p.parse_args(argv)
    robot = ffwd.load(args.model)
    ref = demo_path(robot, args.rate)
    n = min(len(ref.t), int(args.seconds * args.rate))
    ref = Reference(ref.t[:n], ref.q[:n], ref.qd[:n], ref.qdd[:n])
    result = run_loop(robot, ref, rate_hz=args.rate, mode="ff", settle=0.0, cpu=args.cpu,
                      rt_priority=args.rt_priority or None)
    run = result["runs"][0]
    w, c, pl = run["wakeup_us"], run["compute_us"], run["plant_us"]
    tag = "1khz" if args.rate == 1000.0 else f"{args.rate:g}hz"
    out = {
        f"loop_deadline_misses_{tag}": run["deadline_misses"],
        "loop_wakeup_p99_us": w["p99"],
        "loop_wakeup_p50_us": w["p50"],
        "loop_wakeup_max_us": w["max"],
        "loop_compute_p99_us": c["p99"],
        "loop_plant_step_p50_us": pl["p50"],
        "loop_cycles": result["cycles"],
        "loop_rate_hz": result["rate_hz"],
        "loop_rms_error_rad": run["rms_error_overall"],
        "loop_realtime": result["realtime"],
        "loop_notes": result.get("notes", []),
        "robot": robot.name,
        "load_average": list(np.round(os.getloadavg(), 2)) if hasattr(os, "getloadavg") else None,
    }
    text = json.dumps(out, indent=2)
    print(text)
    if args.out:
        with open(args.out, "w") as fh:
            fh.write(text + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
