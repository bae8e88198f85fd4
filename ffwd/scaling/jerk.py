"""The jerk pass of the offline plan: the time-optimal profile has jumps in s_ddot
(bang-bang), so unbounded joint jerk. The pass runs the governor over the whole path
with the command at the plan's top speed and the joint jerk limits: the same machinery
that keeps every torque, velocity and acceleration limit, the stop-at-the-end bound and
the joint jerk at every cycle. The C governor (ffwd._governor) when it is built, with a
window of min(grid + 1, MAX_HORIZON) samples; else the twin (ffwd/twin/governor.py) with
the window as long as the path (slow: minutes on a 1000-point grid). Its result is
resampled on the plan's grid. Reported in plan.jerk: the method, the duration
increase, the worst joint jerk / limit in the time samples, and the cycles where a
hard limit needed more than the jerk limits allowed (flagged, counted)."""
from __future__ import annotations

import numpy as np

from ..twin import governor as twin_gov

__all__ = ["jerk_pass"]


def jerk_pass(robot, path, plan, rows, sol, dyn, dt=None, margin=0.02, max_cycles=2_000_000):
    s = plan.s
    N1 = len(s)
    ds = float(s[1] - s[0])
    dt = dt if dt is not None else min(1e-3, plan.duration / 2000.0)
    top = float(plan.sd.max()) * 1.02 + 1e-6
    u_max = float(np.abs(plan.sdd).max()) * 1.02 + 1e-6
    # rate of s_ddot: what the weakest joint jerk limit allows where q' is largest
    jm = np.array([j.limits.jerk for j in robot.joints], float)
    dq_max = np.abs(path.dq(s)).max(axis=0)
    V = float(np.min(jm / np.maximum(dq_max, 1e-9)))
    dq, ddq = path.dq(s), path.ddq(s)
    from .governor import MAX_HORIZON, Governor, _c_available
    if _c_available():
        H = min(N1, MAX_HORIZON)
        run = Governor(robot, path, horizon=H, dt=dt, ds=ds, override_max=top, rate_max=u_max,
                       rate_rate_max=V, margin=margin, backend="c").run(top)
        ts, ss, ov, rate, qdd_t, flags = (np.asarray(v) for v in (
            run.t, run.s, run.override, run.rate, run.qdd, run.flags))
        how = f"C governor, window {H} samples"
    else:
        ts, ss, ov, rate, qdd_t, flags = _twin_run(robot, s, ds, dt, top, u_max, V, margin,
                                                   path, dyn, N1, max_cycles)
        how = "twin, window as long as the path"
    return _report(robot, path, plan, s, ds, dt, V, margin, jm, ts, ss, ov, rate, qdd_t,
                   flags, how, dq, ddq, dyn)


def _twin_run(robot, s, ds, dt, top, u_max, V, margin, path, dyn, N1, max_cycles):
    gov = twin_gov.GovernorTwin(robot, dt, ds, N1, top, u_max, V, margin,
                                dynamics=dyn, max_horizon=N1)
    q, dq, ddq, dddq = path.q(s), path.dq(s), path.ddq(s), path.dddq(s)
    g = np.asarray(dyn.gravity(q))
    a = np.asarray(dyn.inverse_dynamics(q, np.zeros_like(dq), dq)) - g
    fr = np.array([[j.drive.viscous * dq[k, i] + j.drive.coulomb
                    * np.clip(dq[k, i] / j.drive.coulomb_band, -1, 1)
                    for i, j in enumerate(robot.joints)] for k in range(N1)])
    b = np.asarray(dyn.inverse_dynamics(q, dq, ddq)) - g - fr
    for k in range(N1):
        gov.push(q[k], dq[k], ddq[k], dddq[k], parts=(a[k], b[k], g[k]))
    gov.finish()
    ts, ss, ov, rate, qdd_t, flags = [], [], [], [], [], []
    for i in range(max_cycles):
        out = gov.step(top)
        ts.append(i * dt)
        ss.append(out["s"])
        ov.append(out["override"])
        rate.append(out["rate"])
        qdd_t.append(out["qdd"])
        flags.append(out["flags"])
        if out["flags"] & twin_gov.DONE:
            break
    return (np.array(ts), np.array(ss), np.array(ov), np.array(rate), np.array(qdd_t),
            np.array(flags))


def _report(robot, path, plan, s, ds, dt, V, margin, jm, ts, ss, ov, rate, qdd_t, flags, how,
            dq, ddq, dyn):
    ratio = (np.abs(np.diff(qdd_t, axis=0)) / dt / jm).max(axis=1) if len(ts) > 1 else np.zeros(1)
    jerk_ratio = float(ratio.max())
    unflagged = (flags[1:] & twin_gov.JERK) == 0 if len(ts) > 1 else np.ones(1, bool)
    jerk_ratio_unflagged = float(ratio[unflagged].max()) if unflagged.any() else 0.0
    # resample on the grid (s increases monotonically along the run)
    keep = np.concatenate([[True], np.diff(ss) > 0])
    sk, tk = ss[keep], ts[keep]
    sd = np.interp(s, sk, ov[keep])
    sdd = np.interp(s, sk, rate[keep])
    t = np.interp(s, sk, tk)
    t[-1] = ts[-1]
    qd = dq * sd[:, None]
    qdd = ddq * (sd * sd)[:, None] + dq * sdd[:, None]
    tau = np.asarray(dyn.inverse_dynamics(path.q(s), qd, qdd))
    plan.jerk = {
        "method": f"jerk-bounded governor pass over the whole path ({how}), resampled on the grid",
        "dt_s": dt,
        "rate_rate_max": V,
        "time_optimal_duration_s": plan.duration,
        "duration_increase": float(ts[-1] / plan.duration - 1.0) if plan.duration > 0 else 0.0,
        "margin": margin,
        "worst_jerk_ratio": jerk_ratio,
        "worst_jerk_ratio_unflagged": jerk_ratio_unflagged,
        "cycles": int(len(ts)),
        "jerk_flagged_cycles": int(np.count_nonzero(flags & twin_gov.JERK)),
    }
    plan.t, plan.sd, plan.sdd, plan.qd, plan.qdd, plan.tau = t, sd, sdd, qd, qdd, tau
    plan.duration = float(ts[-1])
    return plan
