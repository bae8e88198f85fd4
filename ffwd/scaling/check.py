"""Independent checks of a governor run or a plan against the robot's limits.

    violations(robot, q, qd, qdd, dt=None)  -> dict of counts and worst ratios, from the
        inverse dynamics of the commanded (q, qd, qdd) (friction included)
    can_stop(robot, path, s, kappa, s_end)  -> (ok, largest safe kappa): offline
        reachability over [s, s_end] on a fine grid, at rest at s_end
"""
from __future__ import annotations

import math

import numpy as np

from .constraints import build_rows, make_dynamics, path_dynamics, required_limits, x_max
from .topp import backward_pass

__all__ = ["violations", "can_stop"]


def violations(robot, q, qd, qdd, dt=None, rel_tol=1e-9, dynamics=None):
    """Counts of samples over each limit and the worst |value| / limit per limit.
    Jerk (when dt is given and the robot has jerk limits) from differences of qdd."""
    lim = required_limits(robot)
    dyn = dynamics if dynamics is not None else make_dynamics(robot)
    q, qd, qdd = (np.atleast_2d(np.asarray(v, float)) for v in (q, qd, qdd))
    tau = np.asarray(dyn.inverse_dynamics(q, qd, qdd))
    out = {}
    for name, val, bound in (("torque", tau, lim["torque"]), ("velocity", qd, lim["velocity"]),
                             ("acceleration", qdd, lim["acceleration"])):
        ratio = np.abs(val) / bound
        out[name] = int(np.count_nonzero(ratio > 1.0 + rel_tol))
        out[f"{name}_worst"] = float(ratio.max()) if ratio.size else 0.0
    jm = [j.limits.jerk for j in robot.joints]
    if dt is not None and len(q) > 1 and all(v is not None for v in jm):
        jerk = np.diff(qdd, axis=0) / dt
        ratio = np.abs(jerk) / np.array(jm)
        out["jerk"] = int(np.count_nonzero(ratio > 1.0 + rel_tol))
        out["jerk_worst"] = float(ratio.max())
    pos = [(i, j.limits.position) for i, j in enumerate(robot.joints) if j.limits.position]
    out["position"] = int(sum(np.count_nonzero((q[:, i] < p[0] - 1e-12) | (q[:, i] > p[1] + 1e-12))
                              for i, p in pos))
    return out


def can_stop(robot, path, s, kappa, s_end, grid_step=None, dynamics=None, rel_tol=1e-6):
    """Whether the robot at progress s with override kappa can still come to rest by
    s_end without exceeding a limit (reachability on a grid over [s, s_end] with the
    full limits). Returns (ok, largest kappa from which it can)."""
    span = float(s_end) - float(s)
    if span <= 0:
        return kappa <= 1e-9, 0.0
    n = max(8, int(math.ceil(span / (grid_step or span / 64))))
    g = np.linspace(float(s), float(s_end), n + 1)
    ds = float(g[1] - g[0])
    dyn = dynamics if dynamics is not None else make_dynamics(robot)
    pd = path_dynamics(robot, g, path.q(g), path.dq(g), path.ddq(g), dynamics=dyn)
    rows = build_rows(pd)
    X, _ = x_max(rows, ds)
    Xs, _ = backward_pass(rows.lo, ds, X, 0.0)
    k_safe = math.sqrt(max(Xs[0], 0.0))
    return kappa * kappa <= Xs[0] * (1 + rel_tol) + 1e-12, k_safe
