"""Reports of which limit is active where: a plan's active-limit table and a governor
run's summary, as JSON-ready dicts and markdown."""
from __future__ import annotations

import numpy as np

__all__ = ["plan_report", "plan_markdown", "run_report", "run_markdown", "window_bound_share"]


def plan_report(plan, robot=None):
    tau_ratio = None
    if robot is not None:
        lim = np.array([j.limits.torque for j in robot.joints], float)
        tau_ratio = (np.abs(plan.tau) / lim).max(axis=0).tolist()
    share = {}
    for a in plan.active:
        key = f"{a['joint']} {a['limit']}"
        share[key] = share.get(key, 0) + 1
    n = max(len(plan.active), 1)
    return {
        "duration_s": plan.duration,
        "grid_segments": len(plan.s) - 1,
        "jerk": plan.jerk,
        "active_share": {k: v / n for k, v in sorted(share.items(), key=lambda kv: -kv[1])},
        "active": plan.active_table(),
        "peak_torque_ratio": tau_ratio,
    }


def plan_markdown(plan, robot=None):
    rep = plan_report(plan, robot)
    lines = [f"# Time-optimal plan", "",
             f"Duration **{rep['duration_s']:.4f} s** on a grid of {rep['grid_segments']} segments.",
             "", "Every segment has its path acceleration at the largest value one limit allows "
             "(accelerating), or ends at the largest speed from which the rest of the path can "
             "still be completed (braking / at speed limit): the limit named is the reason no "
             "faster motion exists there.", "",
             "| from t [s] | to t [s] | from s | to s | joint | limit | side | how |",
             "|---:|---:|---:|---:|---|---|---|---|"]
    for r in rep["active"]:
        lines.append(f"| {r['from_t']:.4f} | {r['to_t']:.4f} | {r['from_s']:.4f} | {r['to_s']:.4f} "
                     f"| {r['joint']} | {r['limit']} | {r['side']} | {r['how']} |")
    lines += ["", "Share of segments per active limit:", ""]
    for k, v in rep["active_share"].items():
        lines.append(f"- {k}: {100 * v:.1f} %")
    if rep["jerk"] and rep["jerk"].get("method") not in (None, "none"):
        lines += ["", f"Jerk pass: {rep['jerk']}"]
    return "\n".join(lines) + "\n"


def run_report(run, robot, violations=None):
    flags = run.flag_counts()
    capped = (run.flags & 4) != 0
    return {
        "done": bool(run.done),
        "duration_s": run.duration,
        "cycles": int(len(run.t)),
        "flag_counts": flags,
        "capped_share": float(capped.mean()) if len(capped) else 0.0,
        "violations": violations,
        "max_override": float(run.override.max()) if len(run.t) else 0.0,
    }


def run_markdown(run, robot, violations=None, window_share=None):
    rep = run_report(run, robot, violations)
    lines = ["# Governor run", "",
             f"- end of path reached at rest: **{rep['done']}** after {rep['duration_s']:.4f} s "
             f"({rep['cycles']} cycles)",
             f"- applied override below the command (limits or the window bound it): "
             f"{100 * rep['capped_share']:.1f} % of cycles",
             f"- rate-of-rate or jerk bound gave way to a hard limit: "
             f"{rep['flag_counts']['jerk']} cycles",
             f"- limits and safe bound in conflict (braking chosen): {rep['flag_counts']['conflict']} cycles"]
    if violations is not None:
        lines.append(f"- limit violations recomputed from the command by inverse dynamics: "
                     f"torque {violations['torque']}, velocity {violations['velocity']}, "
                     f"acceleration {violations['acceleration']} (worst ratios "
                     f"{violations['torque_worst']:.4f}, {violations['velocity_worst']:.4f}, "
                     f"{violations['acceleration_worst']:.4f})")
    if window_share is not None:
        lines.append(f"- override held below the command and below what the torque, velocity "
                     f"and acceleration limits allow, by the window or the jerk-bounded stop it "
                     f"must hold: {100 * window_share:.1f} % of cycles")
    return "\n".join(lines) + "\n"


def window_bound_share(run, robot, path, margin, override_max=1.0, grid=1000):
    """Share of a governor run's cycles where the window, not the limits, held the override
    down: cycles flagged capped (the target or the step's u held below the command) whose
    applied override is below 0.95 of what the limits and the path's end allow there (sqrt
    of the offline plan's Xs at the same progress, limits held back by 2 margin as the
    governor's safe curve does, at most the command). The window must always hold a
    complete stop, under the jerk limits a jerk-bounded one. None when the offline plan
    cannot be made."""
    from .topp import time_optimal
    if not len(run.t):
        return 0.0
    try:
        plan = time_optimal(robot, path, grid=grid, margin=2.0 * margin, jerk=False)
    except ValueError:
        return None
    bound = np.sqrt(np.maximum(np.interp(run.s, plan.s, plan.x_safe), 0.0))
    bound = np.minimum(np.minimum(bound, override_max), run.command)
    held = ((run.flags & 4) != 0) & (run.override < 0.95 * bound)
    return float(held.mean())
