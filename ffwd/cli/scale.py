"""`ffwd scale`: time-optimal speed scaling of a path, with its active limits."""
import json
import os


from ._common import add_model_trajectory, load_model, progress_note


def register(sub):
    p = sub.add_parser(
        "scale", help="time-optimal timing of a path within the robot's limits",
        description="Find the fastest timing of the path through the samples of a trajectory "
                    "CSV (t, q_<joint> columns; a C2 cubic spline through them, at rest at both "
                    "ends) within the torque (friction included), velocity and acceleration "
                    "limits, by reachability analysis on a uniform grid. Writes plan.csv, "
                    "active.md and active.json (which joint and limit is active where: the "
                    "proof that nothing faster exists), torques.png and phase.png.")
    add_model_trajectory(p, "ffwd-scale", data="path")
    p.add_argument("--grid", type=int, default=1000, help="grid segments (default: %(default)s)")
    p.add_argument("--margin", type=float, default=0.0,
                   help="fraction of every limit held back (default: %(default)s)")
    p.add_argument("--jerk", choices=["auto", "on", "off"], default="auto",
                   help="jerk pass: auto = when every joint has a jerk limit (default: auto)")
    p.add_argument("--backend", default=None, help="dynamics backend: c or twin (default: c if built)")
    p.set_defaults(func=run)


def run(args):
    from ..plots.scaling import plot_phase_plane, plot_plan_torques
    from ..scaling import Path, time_optimal
    from ..scaling.report import plan_markdown, plan_report
    from ..trajio import write_trajectory
    robot = load_model(args.model)
    path = Path.from_csv(args.path, robot)
    if args.grid < 2:
        raise ValueError(f"--grid: expected at least 2 segments, got {args.grid}")
    if not 0.0 <= args.margin < 0.5:
        raise ValueError(f"--margin: expected a fraction in [0, 0.5), got {args.margin}")
    progress_note(f"scaling {path.duration:g} s of path on {args.grid} segments")
    jerk = {"auto": None, "on": True, "off": False}[args.jerk]
    plan = time_optimal(robot, path, grid=args.grid, margin=args.margin, jerk=jerk,
                        backend=args.backend)
    os.makedirs(args.out, exist_ok=True)
    names = robot.joint_names
    extra = {"s": plan.s, "s_dot": plan.sd, "s_ddot": plan.sdd}
    for j, n in enumerate(names):
        extra[f"tau_{n}"] = plan.tau[:, j]
    write_trajectory(os.path.join(args.out, "plan.csv"), plan.t, names, plan.q, plan.qd,
                     plan.qdd, extra)
    with open(os.path.join(args.out, "active.json"), "w") as fh:
        json.dump(plan_report(plan, robot), fh, indent=2)
    with open(os.path.join(args.out, "active.md"), "w") as fh:
        fh.write(plan_markdown(plan, robot))
    plot_plan_torques(robot, plan, os.path.join(args.out, "torques.png"))
    plot_phase_plane(plan, os.path.join(args.out, "phase.png"))
    print(f"duration {plan.duration:.4f} s (nominal {path.duration:g} s); "
          f"wrote {args.out}/plan.csv, active.md, active.json, torques.png, phase.png")
    return 0
