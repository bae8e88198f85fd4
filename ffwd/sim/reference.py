"""Reference trajectories for the closed-loop runs: sampled t, q, qd, qdd.

`demo_path(robot)` is the default demo, a pick-and-place style motion: quintic
rest-to-rest moves (zero velocity and acceleration at every waypoint) between four
poses with short dwells, scaled to stay inside half of each joint's velocity and
acceleration limits and inside its position range.
"""
from dataclasses import dataclass

import numpy as np

__all__ = ["Reference", "quintic_moves", "demo_path", "as_reference"]


@dataclass(frozen=True)
class Reference:
    t: np.ndarray     # (N,) sample times [s], uniform step
    q: np.ndarray     # (N, dof)
    qd: np.ndarray    # (N, dof)
    qdd: np.ndarray   # (N, dof)

    @property
    def dt(self):
        return float(self.t[1] - self.t[0])


def _quintic(s):
    """Rest-to-rest blend on s in [0, 1]: p = 10s^3 - 15s^4 + 6s^5 and its derivatives."""
    p = s ** 3 * (10 - 15 * s + 6 * s ** 2)
    dp = 30 * s ** 2 * (1 - s) ** 2
    ddp = 60 * s * (1 - s) * (1 - 2 * s)
    return p, dp, ddp


def quintic_moves(waypoints, durations, dwell, rate_hz):
    """Samples at rate_hz of quintic rest-to-rest moves through `waypoints` (K, dof),
    move k lasting durations[k], with `dwell` seconds at rest after every waypoint
    (and before the first move)."""
    W = np.asarray(waypoints, dtype=float)
    dt = 1.0 / float(rate_hz)
    pieces = []   # (start time, length, q0, q1)
    t0 = dwell
    for k in range(len(W) - 1):
        pieces.append((t0, float(durations[k]), W[k], W[k + 1]))
        t0 += float(durations[k]) + dwell
    n = int(round(t0 / dt)) + 1
    t = np.arange(n) * dt
    q = np.repeat(W[:1], n, axis=0)
    qd = np.zeros_like(q)
    qdd = np.zeros_like(q)
    for start, T, a, b in pieces:
        inside = t >= start
        s = np.clip((t[inside] - start) / T, 0.0, 1.0)
        p, dp, ddp = _quintic(s)
        moving = (t[inside] - start) < T
        q[inside] = a + np.outer(p, b - a)
        qd[inside] = np.outer(dp * moving / T, b - a)
        qdd[inside] = np.outer(ddp * moving / T ** 2, b - a)
    return Reference(t, q, qd, qdd)


# Pick-and-place poses as fractions of each joint's span (position range, or +-1 rad
# when no position limit is given): home, above the part, at the part, above the place.
_POSE_FRACTIONS = np.array([
    [0.00, 0.00, 0.00, 0.00, 0.00, 0.00],
    [0.35, 0.25, -0.30, 0.20, 0.30, 0.40],
    [0.35, 0.35, -0.40, 0.20, 0.40, 0.40],
    [-0.30, 0.20, -0.25, -0.25, 0.25, -0.45],
    [0.00, 0.00, 0.00, 0.00, 0.00, 0.00],
])


def demo_poses(robot):
    """(5, dof) waypoints: home, above pick, pick, place, home."""
    n = robot.dof
    F = np.resize(_POSE_FRACTIONS.T, (n, len(_POSE_FRACTIONS))).T   # cycle rows for other dof
    W = np.zeros((len(F), n))
    for j, joint in enumerate(robot.joints):
        pos = joint.limits.position
        if pos is None:
            lo, hi = -1.0, 1.0
        else:
            lo, hi = pos
        mid = 0.0 if lo < 0.0 < hi else 0.5 * (lo + hi)
        half = min(hi - mid, mid - lo, 1.0 if joint.type == "revolute" else 0.2)
        W[:, j] = mid + F[:, j] * half
    return W


def demo_path(robot, rate_hz=1000.0, dwell=0.25, speed=0.5):
    """The default demo trajectory of `robot` sampled at rate_hz. Each move lasts long
    enough that the peak joint velocity (1.875 d/T) and acceleration (5.77 d/T^2) stay
    within `speed` times the joint's limits (when given), and at least 0.6 s."""
    W = demo_poses(robot)
    durations = []
    for k in range(len(W) - 1):
        d = np.abs(W[k + 1] - W[k])
        T = 0.6
        for j, joint in enumerate(robot.joints):
            lim = joint.limits
            if lim.velocity:
                T = max(T, 1.875 * d[j] / (speed * lim.velocity))
            if lim.acceleration:
                T = max(T, np.sqrt(5.7735 * d[j] / (speed * lim.acceleration)))
        durations.append(float(np.ceil(T * 20) / 20))
    return quintic_moves(W, durations, dwell, rate_hz)


def as_reference(path, rate_hz):
    """A Reference sampled at rate_hz from: a Reference; anything with arrays t, q and
    optionally qd, qdd (e.g. a trajectory CSV read by ffwd.trajio); or an
    ffwd.scaling.Path, sampled at its nominal timing."""
    dt = 1.0 / float(rate_hz)
    if hasattr(path, "t") and hasattr(path, "q") and not callable(path.q):
        t = np.asarray(path.t, dtype=float)
        q = np.asarray(path.q, dtype=float)
        if q.ndim != 2 or q.shape[0] != t.shape[0] or t.ndim != 1 or len(t) < 2:
            raise ValueError("path: t must be (N,) and q (N, dof) with N >= 2")
        if not (np.all(np.isfinite(t)) and np.all(np.isfinite(q))):
            raise ValueError("path: t and q must be finite")
        if np.any(np.diff(t) <= 0):
            raise ValueError("path: t must increase")
        qd = getattr(path, "qd", None)
        qdd = getattr(path, "qdd", None)
        on_grid = abs((t[1] - t[0]) - dt) < 1e-9 * dt and np.allclose(np.diff(t), dt,
                                                                    rtol=0, atol=1e-9)
        if on_grid and qd is not None and qdd is not None:
            return Reference(t - t[0], q, np.asarray(qd, float), np.asarray(qdd, float))
        from scipy.interpolate import CubicSpline   # scipy
        tk = np.arange(int(np.floor((t[-1] - t[0]) / dt + 1e-9)) + 1) * dt
        spline = CubicSpline(t - t[0], q, axis=0, bc_type="clamped")
        return Reference(tk, spline(tk), spline(tk, 1), spline(tk, 2))
    if hasattr(path, "duration") and all(callable(getattr(path, f, None))
                                         for f in ("q", "dq", "ddq")):
        # ffwd.scaling.Path: q(s) with s the nominal time, so t = s at override 1
        tk = np.arange(int(np.floor(float(path.duration) / dt + 1e-9)) + 1) * dt
        tk = np.minimum(tk, float(path.duration))
        return Reference(tk, path.q(tk), path.dq(tk), path.ddq(tk))
    raise ValueError("path: expected a Reference, an object with t and q arrays, "
                     "or an ffwd.scaling.Path (duration, q(s), dq(s), ddq(s))")
