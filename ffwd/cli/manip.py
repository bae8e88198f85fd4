"""`ffwd manip`: dynamic manipulability (reachable tool accelerations at rest) along a
trajectory CSV."""
import json
import os

import numpy as np

from ._common import add_model_trajectory, load_model, progress_note


def register(sub):
    p = sub.add_parser(
        "manip", help="reachable tool accelerations at rest (acceleration ellipsoids) along a trajectory",
        description="At each pose of a trajectory CSV (columns t, q_<joint>), the ellipsoid of "
                    "tool-origin linear accelerations an arm at rest reaches with torques of unit "
                    "norm (or, with --normalise, torques scaled by their limits), shifted by "
                    "gravity; and the largest acceleration straight down and straight up. Writes "
                    "manip.csv, manip.json, manip.png and summary.md. Exit code 1 when, with "
                    "--normalise, the arm cannot hold some pose within its torque limits.")
    add_model_trajectory(p, "ffwd-manip", data_help="trajectory CSV (t, q_<joint>)")
    p.add_argument("--normalise", action="store_true",
                   help="scale each joint torque by its torque limit (all limits must be given)")
    p.add_argument("--backend", default=None,
                   help="c, twin, or a path to libffwd.so (default: c if built, else twin)")
    p.set_defaults(func=run)


def table(ellipsoids):
    """Per-sample columns: centre, semi-axis lengths and directions, down, up, ratio."""
    cols = {}
    for k, axis in enumerate("xyz"):
        cols[f"centre_{axis}"] = [e.centre[k] for e in ellipsoids]
    for a in range(3):
        cols[f"axis{a + 1}_length"] = [e.lengths[a] for e in ellipsoids]
        for k, axis in enumerate("xyz"):
            cols[f"axis{a + 1}_{axis}"] = [e.directions[k, a] for e in ellipsoids]
    nan = float("nan")
    cols["down"] = [nan if e.down is None else e.down for e in ellipsoids]
    cols["up"] = [nan if e.up is None else e.up for e in ellipsoids]
    cols["ratio"] = [nan if e.ratio is None else e.ratio for e in ellipsoids]
    cols["holds"] = [1.0 if e.holds_still() else 0.0 for e in ellipsoids]
    return {k: np.asarray(v, dtype=float) for k, v in cols.items()}


def summarise(t, cols, normalised):
    def at(name, fn):
        v = cols[name]
        ok = np.isfinite(v)
        if not ok.any():
            return None
        i = int(np.flatnonzero(ok)[fn(v[ok])])
        return {"value": float(v[i]), "t": float(t[i])}
    return {
        "samples": int(len(t)),
        "normalised": bool(normalised),
        "min_down": at("down", np.argmin), "max_down": at("down", np.argmax),
        "min_up": at("up", np.argmin), "max_up": at("up", np.argmax),
        "min_ratio": at("ratio", np.argmin), "max_ratio": at("ratio", np.argmax),
        "min_largest_axis": at("axis1_length", np.argmin),
        "poses_not_held": [float(x) for x in t[cols["holds"] == 0.0]],
    }


def run(args):
    from ..manipulability import ellipsoids_along, torque_weights
    from ..plots.manipulability import plot_ellipses
    from ..trajio import read_trajectory, write_trajectory
    robot = load_model(args.model)
    torque_weights(robot, args.normalise)          # fails early if a limit is missing
    traj = read_trajectory(args.trajectory, robot.joint_names)
    progress_note(f"{len(traj.t)} poses")
    ells = ellipsoids_along(robot, traj.q, args.normalise, args.backend)
    cols = table(ells)
    os.makedirs(args.out, exist_ok=True)
    write_trajectory(os.path.join(args.out, "manip.csv"), traj.t, robot.joint_names, traj.q,
                     extra=cols)
    summary = summarise(traj.t, cols, args.normalise)
    with open(os.path.join(args.out, "manip.json"), "w") as fh:
        json.dump({"robot": robot.name, "trajectory": str(args.trajectory), **summary}, fh, indent=2)
    plot_ellipses(robot, traj.t, traj.q, ells, os.path.join(args.out, "manip.png"))

    unit = "torques scaled by their limits" if args.normalise else "torques of unit norm (N m, N)"
    def fmt(entry):
        return "-" if entry is None else f"{entry['value']:.4g} (t = {entry['t']:.3f} s)"
    lines = [f"# Dynamic manipulability: {robot.name}", "",
             f"Trajectory `{args.trajectory}`: {len(traj.t)} poses, {unit}; accelerations of "
             "the tool origin at rest, m/s^2, base frame.", "",
             "| quantity | min | max |", "|---|---|---|",
             f"| straight down | {fmt(summary['min_down'])} | {fmt(summary['max_down'])} |",
             f"| straight up | {fmt(summary['min_up'])} | {fmt(summary['max_up'])} |",
             f"| down / up | {fmt(summary['min_ratio'])} | {fmt(summary['max_ratio'])} |",
             f"| largest semi-axis | {fmt(summary['min_largest_axis'])} | |", "",
             "![ellipses](manip.png)", ""]
    bad = summary["poses_not_held"]
    if bad:
        lines.append(f"The arm cannot hold {len(bad)} pose(s) at rest with these torques "
                     f"(first at t = {bad[0]:.3f} s).")
    else:
        lines.append("The arm can hold every pose at rest with these torques.")
    with open(os.path.join(args.out, "summary.md"), "w") as fh:
        fh.write("\n".join(lines) + "\n")
    print("\n".join(lines[4:10]))
    print(lines[-1])
    print(f"outputs in {args.out}/")
    return 1 if (args.normalise and bad) else 0
