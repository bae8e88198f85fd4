"""Limits along a path as bounds on the path acceleration u = s_dd for a given speed.

Along q(s), with kappa = s_dot, x = kappa^2 and u = s_dd, each joint j has
    tau_j  = a_j u + b_j x + c_j + F_v q'_j kappa + F_c sat(q'_j kappa / band)
    qdd_j  = q'_j u + q''_j x,          qd_j = q'_j kappa
with a = M q', b = M q'' + C(q, q') q', c = g (two torque-parts calls per sample).
Every limit is a row  alpha u + beta x + gamma kappa + delta <= 0:
    torque  +: ( a,  b,  F_v q',  c + Fc_hi - tau_max)   -: (-a, -b, -F_v q', -c - Fc_lo - tau_max)
    accel   +: ( q', q'', 0, -a_max)                      -: (-q', -q'', 0, -a_max)
    rate    +: ( 1, 0, 0, -U)                             -: (-1, 0, 0, -U)     (optional)
Coulomb friction is taken as anywhere between 0 and F_c sign(q'_j) (its value for any
kappa > 0 lies there), which is exact at rest and conservative by at most F_c when moving.
Velocity limits bound x alone: x <= (v_max / |q'_j|)^2.

For a row with alpha > 0 the row reads u <= U(kappa), with alpha < 0 u >= L(kappa), both
quadratics in kappa: B kappa^2 + G kappa + D. A row with alpha ~ 0 bounds kappa alone.
"""
from __future__ import annotations

from dataclasses import dataclass

import math

import numpy as np

from ..errors import ModelError

BIG = 1e30          # stands for "no bound" in the quadratics (finite on purpose)
CAP = 1e15          # sqrt(BIG): the root returned when there is none
ALPHA_TOL = 1e-12   # |alpha| below ALPHA_TOL * (1 + |delta|): the row bounds kappa alone
LIMIT_NAMES = ("torque", "acceleration", "rate", "velocity")

__all__ = ["PathDynamics", "RowSet", "path_dynamics", "required_limits", "build_rows",
           "first_root", "root1", "row_label", "x_max", "u_bounds", "InfeasiblePath"]


class InfeasiblePath(ValueError):
    """No admissible motion through a point of the path. Attributes: index (grid
    index), s (nominal time), joint (name), limit (which), why."""

    def __init__(self, why, index=None, s=None, joint=None, limit=None):
        self.why, self.index, self.s, self.joint, self.limit = why, index, s, joint, limit
        parts = []
        if index is not None:
            parts.append(f"grid index {index}")
        if s is not None:
            parts.append(f"s = {s:.6g} s")
        if joint is not None:
            parts.append(f"joint {joint!r}")
        if limit is not None:
            parts.append(f"{limit} limit")
        super().__init__("infeasible path: " + ", ".join(parts) + f": {why}")


def required_limits(robot, names=("torque", "velocity", "acceleration")):
    """Limits as arrays (dof,) per name; ModelError naming the joint if one is missing."""
    out = {}
    for name in names:
        vals = []
        for j in robot.joints:
            v = getattr(j.limits, name)
            if v is None:
                raise ModelError(f"a {name} limit is needed for speed scaling",
                                 file=getattr(robot, "source", None), joint=j.name,
                                 field=f"limits.{name}")
            vals.append(float(v))
        out[name] = np.array(vals)
    return out


@dataclass
class PathDynamics:
    """Per-sample path quantities (arrays (N, dof)) and drive/limit data (dof,)."""
    s: np.ndarray
    q: np.ndarray
    dq: np.ndarray
    ddq: np.ndarray
    a: np.ndarray
    b: np.ndarray
    c: np.ndarray
    viscous: np.ndarray
    coulomb: np.ndarray
    band: np.ndarray
    tau_max: np.ndarray
    v_max: np.ndarray
    a_max: np.ndarray
    joint_names: tuple


def make_dynamics(robot, backend=None):
    """ffwd.Dynamics for the robot: backend 'c' when the extension is built, else 'twin'."""
    from ..dynamics import Dynamics
    if backend is not None:
        return Dynamics(robot, backend=backend)
    try:
        return Dynamics(robot, backend="c")
    except ImportError:
        return Dynamics(robot, backend="twin")


def path_dynamics(robot, s, q, dq, ddq, dynamics=None):
    """a, b, c at every sample: two batched torque-parts calls."""
    limits = required_limits(robot)
    dyn = dynamics if dynamics is not None else make_dynamics(robot)
    p1 = dyn.torque_parts(q, dq, dq)      # inertial part = M(q) q' = a
    p2 = dyn.torque_parts(q, dq, ddq)     # M q'' + C(q, q') q' = b ; gravity = c
    drives = [j.drive for j in robot.joints]
    return PathDynamics(
        s=np.asarray(s, float), q=q, dq=dq, ddq=ddq,
        a=np.asarray(p1.inertial), b=np.asarray(p2.inertial) + np.asarray(p2.velocity),
        c=np.asarray(p2.gravity),
        viscous=np.array([d.viscous for d in drives]), coulomb=np.array([d.coulomb for d in drives]),
        band=np.array([d.coulomb_band for d in drives]),
        tau_max=limits["torque"], v_max=limits["velocity"], a_max=limits["acceleration"],
        joint_names=tuple(robot.joint_names))


@dataclass
class RowSet:
    """The limits at every sample as u-bounds, arrays (N, P). Column p is one limit of
    one joint (`joint[p]`, `limit[p]` an index into LIMIT_NAMES); of its two rows the one
    with alpha < 0 is the lower bound, the other the upper bound, and `lo_side[k, p]`
    (+1 or -1) says which row is the lower one (the upper one is the other)."""
    lo: tuple          # (B, G, D): u >= B k^2 + G k + D   (disabled: D = -BIG)
    hi: tuple          # (B, G, D): u <= B k^2 + G k + D   (disabled: D = +BIG)
    pure: tuple        # (B, G, D) of both rows where alpha ~ 0, (N, 2P): B k^2 + G k + D <= 0
    xv: np.ndarray     # (N, dof) velocity bound on x
    joint: np.ndarray  # (P,)  -1 for the override rate
    limit: np.ndarray  # (P,)
    lo_side: np.ndarray  # (N, P)


def build_rows(pd, rate_max=None, margin=0.0):
    """All limit rows at all samples of `pd` (PathDynamics), limits scaled by 1 - margin."""
    keep = 1.0 - margin
    n = pd.a.shape[1]
    fc = pd.coulomb * np.sign(pd.dq)
    fc_hi, fc_lo = np.maximum(fc, 0.0), np.minimum(fc, 0.0)
    gam = pd.viscous * pd.dq
    tau, acc = keep * pd.tau_max, keep * pd.a_max
    # the "+" row of each pair: alpha u + beta x + gamma k + delta_plus <= 0 ;
    # the "-" row: -(alpha u + beta x + gamma k) + delta_minus <= 0
    al = np.hstack([pd.a, pd.dq])
    be = np.hstack([pd.b, pd.ddq])
    ga = np.hstack([gam, np.zeros_like(gam)])
    dp = np.hstack([pd.c + fc_hi - tau, -acc + 0 * pd.dq])
    dm = np.hstack([-pd.c - fc_lo - tau, -acc + 0 * pd.dq])
    joint = np.concatenate([np.arange(n), np.arange(n)])
    limit = np.concatenate([np.zeros(n, int), np.ones(n, int)])
    if rate_max is not None:
        N = al.shape[0]
        one = np.ones((N, 1))
        al, be, ga = np.hstack([al, one]), np.hstack([be, 0 * one]), np.hstack([ga, 0 * one])
        dp, dm = np.hstack([dp, -rate_max * one]), np.hstack([dm, -rate_max * one])
        joint, limit = np.concatenate([joint, [-1]]), np.concatenate([limit, [2]])
    pure = np.abs(al) <= ALPHA_TOL * (1.0 + np.abs(dp) + np.abs(dm))
    sa = np.where(pure, 1.0, al)
    # "+" row: u <= -(be x + ga k + dp)/al  if al > 0, u >= that if al < 0
    # "-" row: u >= -(be x + ga k - dm)/al  if al > 0, u <= that if al < 0
    Pp = (-be / sa, -ga / sa, -dp / sa)
    Pm = (-be / sa, -ga / sa, dm / sa)
    pos = al > 0
    hi = tuple(np.where(pure, 0.0, np.where(pos, p, m)) for p, m in zip(Pp, Pm))
    lo = tuple(np.where(pure, 0.0, np.where(pos, m, p)) for p, m in zip(Pp, Pm))
    hi = (hi[0], hi[1], np.where(pure, BIG, hi[2]))
    lo = (lo[0], lo[1], np.where(pure, -BIG, lo[2]))
    pr = (np.hstack([np.where(pure, be, 0.0), np.where(pure, -be, 0.0)]),
          np.hstack([np.where(pure, ga, 0.0), np.where(pure, -ga, 0.0)]),
          np.hstack([np.where(pure, dp, -1.0), np.where(pure, dm, -1.0)]))
    vq = keep * pd.v_max
    with np.errstate(over="ignore", divide="ignore"):
        xv = np.where(np.abs(pd.dq) * 1e-15 < vq,
                      (vq / np.maximum(np.abs(pd.dq), vq * 1e-15)) ** 2, BIG)
    return RowSet(lo, hi, pr, np.minimum(xv, BIG), joint, limit, np.where(pos, -1, 1))


def row_label(rows, k, p, lower, names):
    """(joint name, limit name, side) of column p at sample k, lower or upper bound."""
    j = int(rows.joint[p])
    lim = LIMIT_NAMES[int(rows.limit[p])]
    sign = rows.lo_side[k, p] if lower else -rows.lo_side[k, p]
    return (names[j] if j >= 0 else "override"), lim, ("max" if sign > 0 else "min")


def root1(A, B, C):
    """first_root for one quadratic (plain floats), as the governor twin computes it."""
    if C > 0.0:
        return 0.0
    if B > 0.0:
        disc = B * B - 4.0 * A * C
        return -2.0 * C / (B + math.sqrt(disc)) if disc >= 0.0 else CAP
    if A > 0.0:
        return (math.sqrt(B * B - 4.0 * A * C) - B) / (2.0 * A)
    return CAP


def first_root(A, B, C):
    """Largest k >= 0 with A t^2 + B t + C <= 0 for all t in [0, k], given C <= 0.
    Returns sqrt(BIG) when there is no positive root (and 0 where C > 0)."""
    A, B, C = np.broadcast_arrays(np.asarray(A, float), np.asarray(B, float), np.asarray(C, float))
    disc = B * B - 4.0 * A * C
    sq = np.sqrt(np.maximum(disc, 0.0))
    cap = np.sqrt(BIG)
    with np.errstate(divide="ignore", invalid="ignore"):
        r_pos = np.where(B + sq > 0, (-2.0 * C) / (B + sq), cap)          # B > 0 branch (stable)
        r_neg = np.where(A > 0, (sq - B) / (2.0 * A), cap)                  # B <= 0 branch
    r = np.where(B > 0, np.where(disc >= 0, r_pos, cap), r_neg)
    r = np.where(C > 0, 0.0, r)
    return np.minimum(np.nan_to_num(r, nan=cap, posinf=cap), cap)


def x_max(rows, ds):
    """Largest x at every sample for which [0, x] admits some u with both bounds
    met and the next x >= 0 (x + 2 u ds >= 0). Also returns the binding cause:
    (kind, row_a, row_b) with kind 0 velocity, 1 pair, 2 pure row, 3 next-nonnegative."""
    (Bl, Gl, Dl), (Bu, Gu, Du) = rows.lo, rows.hi
    Bp, Gp, Dp = rows.pure
    N, R = Bl.shape
    cands, kinds, ra, rb = [], [], [], []
    # velocity, one per joint
    n = rows.xv.shape[1]
    cands.append(rows.xv)
    kinds += [0] * n
    ra += list(range(n)); rb += [-1] * n
    # pairs lower i <= upper j
    A = Bl[:, :, None] - Bu[:, None, :]
    Bq = Gl[:, :, None] - Gu[:, None, :]
    C = Dl[:, :, None] - Du[:, None, :]
    cands.append((first_root(A, Bq, C) ** 2).reshape(N, R * R))
    ii, jj = np.meshgrid(np.arange(R), np.arange(R), indexing="ij")
    kinds += [1] * (R * R); ra += list(ii.ravel()); rb += list(jj.ravel())
    cands.append(first_root(Bp, Gp, Dp) ** 2)
    kinds += [2] * (2 * R); ra += list(range(2 * R)); rb += [-1] * (2 * R)
    # x + 2 ds U(k) >= 0
    cands.append(first_root(-1.0 - 2 * ds * Bu, -2 * ds * Gu, -2 * ds * Du) ** 2)
    kinds += [3] * R; ra += list(range(R)); rb += [-1] * R
    allc = np.concatenate(cands, axis=1)
    arg = np.argmin(allc, axis=1)
    return allc[np.arange(N), arg], (np.array(kinds)[arg], np.array(ra)[arg], np.array(rb)[arg])


def u_bounds(rows, k, kappa):
    """(L, U, i_lo, i_hi): the u interval at sample k for speed kappa and the rows that set it."""
    x = kappa * kappa
    lo = rows.lo[0][k] * x + rows.lo[1][k] * kappa + rows.lo[2][k]
    hi = rows.hi[0][k] * x + rows.hi[1][k] * kappa + rows.hi[2][k]
    i, j = int(np.argmax(lo)), int(np.argmin(hi))
    return lo[i], hi[j], i, j
