"""Offline time-optimal speed scaling by reachability analysis (Pham and Pham, 2018).

On the grid s_0 .. s_N (spacing ds) the state is x_k = s_dot^2 at s_k and the control
u_k = s_dd, constant on segment k, so x_{k+1} = x_k + 2 u_k ds. The limits at s_k give
an interval [L_k(x_k), U_k(x_k)] for u_k (constraints.py).
  1. X_k: the largest x at s_k with a non-empty interval (and x_{k+1} >= 0 possible).
  2. Backward pass: K_N = [0, x_end]; K_k = [0, Xs_k] with Xs_k the largest x <= X_k
     from which the braking bound L_k still reaches K_{k+1}: x + 2 ds L_k(x) <= Xs_{k+1}.
  3. Forward pass: from x_0 take the largest admissible u_k that keeps x_{k+1} in K_{k+1}.
Each step of each pass is a closed-form quadratic per limit (viscous friction makes
the bounds quadratic in s_dot). Every segment ends with u_k at its upper bound (that
limit is active now) or x_{k+1} at the edge of K_{k+1} (a limit ahead is active): the
plan names which joint and which limit, the proof that no faster motion exists on the grid.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .constraints import (BIG, LIMIT_NAMES, InfeasiblePath, build_rows, make_dynamics,
                          path_dynamics, root1, row_label, x_max)

__all__ = ["Plan", "time_optimal", "solve_profile"]


@dataclass
class Plan:
    """A time-optimal motion along a path, one row per grid point."""
    duration: float
    s: np.ndarray            # (N+1,) grid of nominal time
    t: np.ndarray            # (N+1,) time at each grid point
    sd: np.ndarray           # (N+1,) s_dot (the override reached at each point)
    sdd: np.ndarray          # (N+1,) s_ddot
    q: np.ndarray            # (N+1, dof)
    qd: np.ndarray
    qdd: np.ndarray
    tau: np.ndarray          # inverse dynamics of (q, qd, qdd), friction included
    x_limit: np.ndarray      # (N+1,) X_k: the largest s_dot^2 any motion may have there
    x_safe: np.ndarray       # (N+1,) Xs_k: the largest s_dot^2 from which the end is reachable
    active: list             # per segment: dict(segment, joint, limit, side, how, at)
    joint_names: tuple
    jerk: dict = field(default_factory=dict)   # the jerk pass: method, figures

    def active_table(self):
        """Runs of consecutive segments with the same active limit (for reports)."""
        runs = []
        for a in self.active:
            key = (a["joint"], a["limit"], a["side"], a["how"])
            if runs and runs[-1]["key"] == key:
                runs[-1]["to"] = a["segment"]
            else:
                runs.append({"key": key, "from": a["segment"], "to": a["segment"]})
        out = []
        for r in runs:
            j, lim, side, how = r["key"]
            out.append({"from_s": float(self.s[r["from"]]), "to_s": float(self.s[r["to"] + 1]),
                        "from_t": float(self.t[r["from"]]), "to_t": float(self.t[r["to"] + 1]),
                        "segments": r["to"] - r["from"] + 1, "joint": j, "limit": lim,
                        "side": side, "how": how})
        return out


def _pure_label(rows, idx, names):
    P = len(rows.joint)
    p = idx % P
    j = int(rows.joint[p])
    return ((names[j] if j >= 0 else "override"), LIMIT_NAMES[int(rows.limit[p])],
            "max" if idx < P else "min")


def _check_rest(rows, s, names):
    """Holding still must be admissible at every grid point: L(0) <= 0 <= U(0); the
    first grid point where it is not raises, naming the joint and the limit."""
    Dl, Du, Dp = rows.lo[2], rows.hi[2], rows.pure[2]
    found = []
    for bad, lower in ((Dl > 1e-12, True), (Du < -1e-12, False), (Dp > 1e-12, None)):
        if bad.any():
            k, r = (int(v) for v in np.argwhere(bad)[0])
            found.append((k, r, lower))
    if not found:
        return
    k, r, lower = min(found, key=lambda f: f[0])
    if lower is None:
        j, lim, side = _pure_label(rows, r, names)
    else:
        j, lim, side = row_label(rows, k, r, lower, names)
    why = (f"gravity and Coulomb friction exceed the {side} torque at rest"
           if lim == "torque" else "cannot hold still here")
    raise InfeasiblePath(why, index=k, s=float(s[k]), joint=j, limit=lim)


def backward_pass(lo, ds, X, x_end):
    """Xs_k (largest x at s_k from which x_end can be reached) and the lower-bound
    column that binds there (-1: X_k binds). lo = (B, G, D) arrays (N, P)."""
    N1 = X.shape[0]
    A = (1.0 + 2.0 * ds * lo[0]).tolist()
    B = (2.0 * ds * lo[1]).tolist()
    C = (2.0 * ds * lo[2]).tolist()
    Xl = X.tolist()
    Xs = [0.0] * N1
    brake = [-1] * N1
    Xs[-1] = min(x_end, Xl[-1])
    for k in range(N1 - 2, -1, -1):
        X1 = Xs[k + 1]
        best, arg = Xl[k], -1
        for p, (a, b, c) in enumerate(zip(A[k], B[k], C[k])):
            r = root1(a, b, c - X1)
            if r * r < best:
                best, arg = r * r, p
        Xs[k], brake[k] = best, arg
    return np.array(Xs), np.array(brake)


def _fast():
    """The C++ passes of ffwd._governor when built (same arithmetic), else None."""
    try:
        from .. import _governor
    except ImportError:
        return None
    return _governor if hasattr(_governor, "offline_passes") else None


def solve_profile(rows, ds, x_start=0.0, x_end=0.0, s=None, names=None):
    """Reachability analysis on precomputed rows. Returns x (N+1,), u (N,), X, Xs and
    the bookkeeping (at_upper, hi_row, xcause, brake_row) used for the active limits."""
    (Bl, Gl, Dl), (Bu, Gu, Du) = rows.lo, rows.hi
    N1 = Bl.shape[0]
    s = np.arange(N1) * ds if s is None else s
    names = names or tuple(f"j{i + 1}" for i in range(int(rows.joint.max()) + 1))
    _check_rest(rows, s, names)
    fast = _fast()
    if fast is not None:
        X, xcause = fast.offline_xmax(*rows.lo, *rows.hi, *rows.pure, rows.xv, ds)
        xcause = tuple(np.asarray(c) for c in xcause)
    else:
        X, xcause = x_max(rows, ds)
    if x_end > X[-1] * (1 + 1e-9):
        raise InfeasiblePath(f"end speed {math.sqrt(x_end):.6g} exceeds the largest "
                             f"admissible {math.sqrt(X[-1]):.6g}", index=N1 - 1, s=float(s[-1]))
    if fast is not None:
        Xs, brake_row, x, u, at_upper, hi_row = fast.offline_passes(
            *rows.lo, *rows.hi, X, ds, x_start, x_end)
    else:
        Xs, brake_row = backward_pass(rows.lo, ds, X, x_end)
    if x_start > Xs[0] * (1 + 1e-9) + 1e-15:
        raise InfeasiblePath(f"start speed {math.sqrt(x_start):.6g} is above the largest "
                             f"speed {math.sqrt(Xs[0]):.6g} from which the path can be completed",
                             index=0, s=float(s[0]))
    if fast is not None:
        return dict(x=x, u=u, X=X, Xs=Xs, at_upper=at_upper, hi_row=hi_row, xcause=xcause,
                    brake_row=brake_row)
    # forward pass: the largest admissible u that keeps x_{k+1} <= Xs_{k+1}
    x = [0.0] * N1
    u = [0.0] * (N1 - 1)
    at_upper = [False] * (N1 - 1)
    hi_row = [0] * (N1 - 1)
    Bu_l, Gu_l, Du_l, Xs_l = Bu.tolist(), Gu.tolist(), Du.tolist(), Xs.tolist()
    x[0] = min(x_start, Xs_l[0])
    for k in range(N1 - 1):
        xk = x[k]
        kap = math.sqrt(xk)
        hi, j = min((b * xk + g * kap + d, p)
                    for p, (b, g, d) in enumerate(zip(Bu_l[k], Gu_l[k], Du_l[k])))
        u_reach = (Xs_l[k + 1] - xk) / (2.0 * ds)
        uk = hi if hi <= u_reach else u_reach
        at_upper[k] = hi <= u_reach
        hi_row[k] = j
        x[k + 1] = min(max(xk + 2.0 * ds * uk, 0.0), Xs_l[k + 1])
        u[k] = (x[k + 1] - xk) / (2.0 * ds)
    return dict(x=np.array(x), u=np.array(u), X=X, Xs=Xs, at_upper=np.array(at_upper),
                hi_row=np.array(hi_row), xcause=xcause, brake_row=brake_row)


def _active(sol, rows, names):
    """Which limit ends each segment's acceleration (see module doc)."""
    X, Xs, brake = sol["X"], sol["Xs"], sol["brake_row"]
    kind, ra, rb = sol["xcause"]
    last = len(Xs) - 1
    out = []
    for k in range(len(sol["u"])):
        if sol["at_upper"][k]:
            j, lim, side = row_label(rows, k, sol["hi_row"][k], False, names)
            out.append(dict(segment=k, joint=j, limit=lim, side=side, how="accelerating", at=k))
            continue
        m = k + 1                       # follow the braking chain to the limit behind it
        if brake[m] >= 0:
            j, lim, side = row_label(rows, m, brake[m], True, names)
            how = "braking"
        elif m == last and Xs[m] < X[m]:
            j, lim, side, how = "-", "end speed", "-", "end"
        else:
            how = "at speed limit"
            kd = int(kind[m])
            if kd == 0:
                j, lim, side = names[int(ra[m])], "velocity", "max"
            elif kd == 1:
                j, lim, side = row_label(rows, m, rb[m], False, names)
                j2, lim2, side2 = row_label(rows, m, ra[m], True, names)
                if (j2, lim2, side2) != (j, lim, side):
                    j, lim, side = f"{j}+{j2}", f"{lim}+{lim2}", f"{side}+{side2}"
            elif kd == 2:
                j, lim, side = _pure_label(rows, ra[m], names)
            else:
                j, lim, side = row_label(rows, m, ra[m], False, names)
        out.append(dict(segment=k, joint=j, limit=lim, side=side, how=how, at=m))
    return out


def _check_positions(robot, s, q):
    for j, joint in enumerate(robot.joints):
        lim = joint.limits.position
        if lim is None:
            continue
        bad = (q[:, j] < lim[0] - 1e-12) | (q[:, j] > lim[1] + 1e-12)
        if bad.any():
            k = int(np.argmax(bad))
            raise InfeasiblePath(f"q = {q[k, j]:.6g} outside [{lim[0]:g}, {lim[1]:g}]",
                                 index=k, s=float(s[k]), joint=joint.name, limit="position")


def time_optimal(robot, path, grid=1000, start_speed=0.0, end_speed=0.0, margin=0.0,
                 rate_max=None, jerk=None, backend=None):
    """The fastest motion along `path` within the robot's torque (friction included),
    velocity and acceleration limits, sampled on a uniform grid of `grid` segments.

    start_speed, end_speed: s_dot at the ends (0 = at rest; 1 = the nominal speed).
    margin: fraction of every limit held back. rate_max: optional bound on |s_ddot|.
    jerk: None (apply the jerk pass when every joint has a jerk limit), True or False.
    Raises InfeasiblePath (a ValueError) naming grid index, s, joint and limit."""
    if not (isinstance(margin, (int, float, np.floating, np.integer)) and 0.0 <= margin < 1.0):
        raise ValueError(f"margin: expected a fraction of the limits in [0, 1), got {margin!r}")
    if rate_max is not None and not (np.isfinite(rate_max) and rate_max > 0):
        raise ValueError(f"rate_max: expected a bound > 0 on |s_ddot| (or None), got {rate_max!r}")
    s = path.grid(grid)
    ds = float(s[1] - s[0])
    q, dq, ddq = path.q(s), path.dq(s), path.ddq(s)
    if q.shape[1] != robot.dof:
        raise ValueError(f"path has {q.shape[1]} joints, robot {robot.name!r} has {robot.dof}")
    _check_positions(robot, s, q)
    dyn = make_dynamics(robot, backend)
    pd = path_dynamics(robot, s, q, dq, ddq, dynamics=dyn)
    rows = build_rows(pd, rate_max=rate_max, margin=margin)
    names = tuple(robot.joint_names)
    for name, v in (("start_speed", start_speed), ("end_speed", end_speed)):
        if not (np.isfinite(v) and v >= 0):
            raise ValueError(f"{name}: expected a speed >= 0, got {v}")
    sol = solve_profile(rows, ds, start_speed ** 2, end_speed ** 2, s, names)
    plan = _make_plan(robot, path, s, ds, sol, rows, names, dyn)
    if jerk is None:
        jerk = all(j.limits.jerk is not None for j in robot.joints)
    if jerk:
        from .jerk import jerk_pass
        plan = jerk_pass(robot, path, plan, rows, sol, dyn)
    return plan


def _make_plan(robot, path, s, ds, sol, rows, names, dyn):
    x, u = sol["x"], sol["u"]
    kap = np.sqrt(x)
    dt = 2.0 * ds / np.maximum(kap[:-1] + kap[1:], 1e-300)
    t = np.concatenate([[0.0], np.cumsum(dt)])
    # u at the last point: the largest admissible there, clipped to keep it at rest
    ul = np.concatenate([u, [u[-1] if len(u) else 0.0]])
    if x[-1] == 0.0:
        ul[-1] = min(max(ul[-1], rows.lo[2][-1].max()), rows.hi[2][-1].min())
    q, dq, ddq = path.q(s), path.dq(s), path.ddq(s)
    qd = dq * kap[:, None]
    qdd = ddq * x[:, None] + dq * ul[:, None]
    tau = np.asarray(dyn.inverse_dynamics(q, qd, qdd))
    return Plan(duration=float(t[-1]), s=s, t=t, sd=kap, sdd=ul, q=q, qd=qd, qdd=qdd, tau=tau,
                x_limit=np.minimum(sol["X"], BIG), x_safe=sol["Xs"],
                active=_active(sol, rows, names), joint_names=names,
                jerk={"method": "none"})
