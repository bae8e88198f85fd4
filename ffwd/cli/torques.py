"""`ffwd torques`: feedforward torques along a trajectory CSV."""
import json
import os

import numpy as np

from ._common import add_model_trajectory, load_model, progress_note


def register(sub):
    p = sub.add_parser("torques", help="feedforward torques (with their parts) along a trajectory CSV",
                       description="Compute inverse-dynamics feedforward torques along a trajectory "
                                   "CSV (columns t, q_<joint>, optional qd_<joint>, qdd_<joint>; "
                                   "missing derivatives come from a cubic spline through q). "
                                   "Writes torques.csv (total and inertial/velocity/gravity/friction "
                                   "parts), torques.png (torques against limits), limits.json and "
                                   "summary.md. Exit code 1 when a limit is exceeded.")
    add_model_trajectory(p, "ffwd-torques", data_help="trajectory CSV")
    p.add_argument("--backend", default="c", help="c, twin, or a path to libffwd.so (default: c)")
    p.set_defaults(func=run)


def derivatives(t, q):
    """qd, qdd from a not-a-knot cubic spline through the samples (scipy)."""
    from scipy.interpolate import CubicSpline
    spline = CubicSpline(t, q, axis=0)
    return spline(t, 1), spline(t, 2)


def compute(robot, traj, backend="c"):
    from ..dynamics import Dynamics
    from ..limits_check import exceedances
    qd, qdd = traj.qd, traj.qdd
    if qd is None or qdd is None:
        sqd, sqdd = derivatives(traj.t, traj.q)
        qd = sqd if qd is None else qd
        qdd = sqdd if qdd is None else qdd
    parts = Dynamics(robot, backend=backend).torque_parts(traj.q, qd, qdd)
    tau = parts.inertial + parts.velocity + parts.gravity + parts.friction
    over = exceedances(robot, traj.t, traj.q, qd, qdd, tau)
    return qd, qdd, parts, tau, over


def run(args):
    from ..trajio import read_trajectory, write_trajectory
    from ..plots.torques import plot_torques
    robot = load_model(args.model)
    traj = read_trajectory(args.trajectory, robot.joint_names)
    progress_note(f"computing {len(traj.t)} samples")
    qd, qdd, parts, tau, over = compute(robot, traj, args.backend)
    os.makedirs(args.out, exist_ok=True)
    names = robot.joint_names
    extra = {}
    for label, arr in (("tau", tau), ("inertial", parts.inertial), ("velocity", parts.velocity),
                       ("gravity", parts.gravity), ("friction", parts.friction)):
        for j, n in enumerate(names):
            extra[f"{label}_{n}"] = arr[:, j]
    write_trajectory(os.path.join(args.out, "torques.csv"), traj.t, names, traj.q, qd, qdd, extra)
    plot_torques(robot, traj.t, tau, parts, os.path.join(args.out, "torques.png"))
    with open(os.path.join(args.out, "limits.json"), "w") as fh:
        json.dump(over, fh, indent=2)
    peak = np.max(np.abs(tau), axis=0)
    lines = [f"# Feedforward torques: {robot.name}", "",
             f"Trajectory `{args.trajectory}`: {len(traj.t)} samples over {traj.t[-1] - traj.t[0]:.3f} s.",
             "", "| joint | peak torque | torque limit | peak/limit |", "|---|---|---|---|"]
    for j, joint in enumerate(robot.joints):
        lim = joint.limits.torque
        ratio = f"{peak[j] / lim:.2f}" if lim else "-"
        lines.append(f"| {joint.name} | {peak[j]:.2f} | {lim if lim else '-'} | {ratio} |")
    lines += ["", "![torques](torques.png)", ""]
    if over:
        lines.append("## Limits exceeded")
        lines += [f"- {o['joint']} {o['limit']}: t = {o['t_start']:.4f} .. {o['t_end']:.4f} s, "
                  f"worst {o['worst_value']:.4g} (limit {o['limit_value']})" for o in over]
    else:
        lines.append("No position, velocity, acceleration or torque limit is exceeded.")
    with open(os.path.join(args.out, "summary.md"), "w") as fh:
        fh.write("\n".join(lines) + "\n")
    print("\n".join(lines[4:4 + 2 + robot.dof]))
    print(f"{len(over)} limit exceedance(s); outputs in {args.out}/")
    return 1 if over else 0
