"""Find where a sampled joint trajectory exceeds the model's limits."""
import numpy as np

# (limit name, function giving the per-sample excess ratio |value| / limit)
_KINDS = ("position", "velocity", "acceleration", "torque")


def _intervals(mask):
    """Start/end indices (inclusive) of runs of True in a boolean vector."""
    edges = np.diff(np.concatenate(([0], mask.astype(np.int8), [0])))
    return list(zip(np.flatnonzero(edges == 1), np.flatnonzero(edges == -1) - 1))


def exceedances(robot, t, q, qd=None, qdd=None, tau=None, tol=1e-9):
    """List of dicts {joint, limit, t_start, t_end, worst_value, limit_value} for every
    contiguous stretch of samples where a set limit is exceeded."""
    found = []
    for j, joint in enumerate(robot.joints):
        lim = joint.limits
        checks = []
        if lim.position is not None:
            lo, hi = lim.position
            checks.append(("position", q[:, j], lambda v, lo=lo, hi=hi: (v < lo - tol) | (v > hi + tol),
                           lim.position))
        for name, arr, bound in (("velocity", qd, lim.velocity), ("acceleration", qdd, lim.acceleration),
                                 ("torque", tau, lim.torque)):
            if arr is not None and bound is not None:
                checks.append((name, arr[:, j], lambda v, b=bound: np.abs(v) > b * (1 + tol), bound))
        for name, values, over, bound in checks:
            for a, b in _intervals(over(values)):
                seg = values[a:b + 1]
                worst = seg[np.argmax(np.abs(seg))]
                found.append({"joint": joint.name, "limit": name, "t_start": float(t[a]),
                              "t_end": float(t[b]), "worst_value": float(worst),
                              "limit_value": bound if np.isscalar(bound) else list(bound)})
    return found
