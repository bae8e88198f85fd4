"""`ffwd govern`: run the online speed-override governor along a path."""
import csv
import json
import os

import numpy as np

from ._common import add_model_trajectory, load_model, progress_note


def register(sub):
    p = sub.add_parser(
        "govern", help="run the speed-override governor along a path for an override profile",
        description="Run the online governor (the C core when built) along the path through a "
                    "trajectory CSV for an operator override given as a CSV (columns t, "
                    "override; each value holds until the next row) or as steps "
                    "--step 't0:k0,t1:k1,...'. Writes command.csv (one row per control cycle), "
                    "override.png, torques.png, summary.md and summary.json. Exit code 1 when "
                    "a limit is exceeded in the command or the end is not reached.")
    add_model_trajectory(p, "ffwd-govern", data="path")
    src = p.add_mutually_exclusive_group(required=True)
    src.add_argument("--override", metavar="PROFILE.csv", help="override profile CSV (t, override)")
    src.add_argument("--step", metavar="T:K,...", help="override steps, e.g. '0:1,0.5:0,0.8:1'")
    p.add_argument("--horizon", type=int, default=64, help="window in samples (default: %(default)s)")
    p.add_argument("--dt", type=float, default=0.001, help="control period [s] (default: %(default)s)")
    p.add_argument("--ds", type=float, default=None, help="sample spacing in nominal time [s] (default: dt)")
    p.add_argument("--override-max", type=float, default=1.0, help="largest override (default: %(default)s)")
    p.add_argument("--rate-max", type=float, default=20.0, help="|d override/dt| bound [1/s] (default: %(default)s)")
    p.add_argument("--rate-rate-max", type=float, default=1000.0,
                   help="|d2 override/dt2| bound [1/s^2] (default: %(default)s)")
    p.add_argument("--margin", type=float, default=0.02,
                   help="fraction of every limit held back (default: %(default)s)")
    p.add_argument("--backend", choices=["c", "twin"], default=None, help="governor: c or twin")
    p.set_defaults(func=run)


def parse_steps(text):
    """'t0:k0,t1:k1,...' -> (times, values), times increasing from the first."""
    times, values = [], []
    for i, item in enumerate(text.split(",")):
        try:
            t, k = (float(v) for v in item.split(":"))
        except ValueError:
            raise ValueError(f"--step: item {i + 1} {item!r} is not 'time:override'") from None
        _append_point(times, values, t, k, f"--step: item {i + 1} {item!r}")
    return np.array(times), np.array(values)


def _append_point(times, values, t, k, where):
    """One (time, override) point of a profile: finite, override >= 0, time increasing."""
    if not (np.isfinite(t) and np.isfinite(k) and k >= 0):
        raise ValueError(f"{where}: need finite time and override >= 0")
    if times and t <= times[-1]:
        raise ValueError(f"{where}: time {t:g} does not increase")
    times.append(t)
    values.append(k)


def read_profile(path):
    with open(path, newline="") as fh:
        rows = list(csv.reader(fh))
    if not rows or [h.strip() for h in rows[0][:2]] != ["t", "override"]:
        raise ValueError(f"{path}: expected a header 't,override'")
    times, values = [], []
    for i, r in enumerate(rows[1:]):
        if not r:
            continue
        try:
            t, k = float(r[0]), float(r[1])
        except (ValueError, IndexError):
            raise ValueError(f"{path}: row {i + 2}: expected two numbers, got {r!r}") from None
        _append_point(times, values, t, k, f"{path}: row {i + 2}")
    if not times:
        raise ValueError(f"{path}: no rows")
    return np.array(times), np.array(values)


def hold(times, values):
    def f(t):
        i = int(np.searchsorted(times, t, side="right")) - 1
        return float(values[max(i, 0)])
    return f


def run(args):
    from ..plots.scaling import plot_override, plot_run_torques
    from ..scaling import Governor, Path
    from ..scaling.check import violations
    from ..scaling.report import run_markdown, run_report, window_bound_share
    from ..trajio import write_trajectory
    robot = load_model(args.model)
    path = Path.from_csv(args.path, robot)
    times, values = parse_steps(args.step) if args.step else read_profile(args.override)
    gov = Governor(robot, path, horizon=args.horizon, dt=args.dt, ds=args.ds,
                   override_max=args.override_max, rate_max=args.rate_max,
                   rate_rate_max=args.rate_rate_max, margin=args.margin, backend=args.backend)
    progress_note(f"governing {path.duration:g} s of path, window {args.horizon} samples, "
                  f"backend {gov.backend}")
    run_ = gov.run(hold(times, values))
    v = violations(robot, run_.q, run_.qd, run_.qdd)
    os.makedirs(args.out, exist_ok=True)
    names = robot.joint_names
    extra = {"s": run_.s, "override_cmd": run_.command, "override": run_.override,
             "rate": run_.rate, "rate_rate": run_.rate_rate, "safe_override": run_.safe_override,
             "flags": run_.flags}
    for j, n in enumerate(names):
        extra[f"tau_{n}"] = run_.tau[:, j]
    write_trajectory(os.path.join(args.out, "command.csv"), run_.t, names, run_.q, run_.qd,
                     run_.qdd, extra)
    share = window_bound_share(run_, robot, path, args.margin, args.override_max)
    report = run_report(run_, robot, v)
    report["window_bound_share"] = share
    with open(os.path.join(args.out, "summary.json"), "w") as fh:
        json.dump(report, fh, indent=2)
    with open(os.path.join(args.out, "summary.md"), "w") as fh:
        fh.write(run_markdown(run_, robot, v, share))
    plot_override(run_, os.path.join(args.out, "override.png"))
    plot_run_torques(robot, run_, os.path.join(args.out, "torques.png"))
    bad = v["torque"] + v["velocity"] + v["acceleration"]
    print(f"{'done' if run_.done else 'NOT finished'} in {run_.duration:.4f} s, "
          f"{bad} limit violations; wrote {args.out}/command.csv, summary.md, summary.json, "
          "override.png, torques.png")
    if share is not None and share > 0.1:
        print(f"note: for {100 * share:.0f} % of the cycles the window ({args.horizon} samples) "
              "held the override below the command and below what the torque, velocity and "
              "acceleration limits allow (it must always hold a complete, jerk-bounded stop); "
              "a longer --horizon lets the robot run faster")
    return 0 if (run_.done and bad == 0) else 1
