"""The speed-override governor in plain Python: the readable twin of csrc/governor.c.

Same algorithm, operation for operation, so the two agree to rounding (the
equivalence test compares them). Notation along the path q(s):
    kappa = ds/dt (the applied override), x = kappa^2, u = d kappa / dt
    qd = q' kappa,  qdd = q'' x + q' u,
    tau = a u + b x + c + viscous q' kappa + Coulomb,   a = M q', b = M q'' + C(q, q') q', c = g.
Every limit is a row  alpha u + beta x + gamma kappa + delta <= 0, i.e. an interval of u
for each kappa. Per sample (push): its rows and X, the largest admissible x there. Per
cycle (step): a backward pass gives the safe curve Xs over the window (x = 0 at its last
sample: the robot can always stop inside the window); u follows the command with
bounded rate and rate of rate, clipped into the limits and under the safe curve; and u
is applied only if a braking plan from where it leads is verified to reach rest in the
window within every limit, the rate of rate and the joint jerk (the fastest stop, P, or
a jerk-ramped constant deceleration, D), else the stored plan's own u (see vouch).

    g = GovernorTwin(robot, dt, ds, horizon, override_max, rate_max, rate_rate_max, margin)
    g.push(q, dq, ddq, dddq); ...; g.finish()
    out = g.step(override_cmd)    # dict: q, qd, qdd, tau, s, override, rate, ... flags
"""
import math

import numpy as np

from .rnea import gravity_torque, inverse_dynamics

BIG = 1e30
CAP = 1e15
ALPHA_TOL = 1e-12
NBISECT = 4            # halvings between the plan's u and the step's
FIT_ITER = 20          # stop_fit_u: the width of this many halvings, at most this many steps
EXACT_CYCLES = 2048    # plan D cycles checked one by one at most (pass 2)
HOLD = 1               # where the window holds the speed: cycles plan D repeats u before it brakes
MAX_PLAN_CYCLES = 100000   # cycles of plan D simulated at most (longer: not vouched for)
REST_TOL = 1e-12

AT_REST, DONE, CAPPED, JERK, CONFLICT, STARVED = 1, 2, 4, 8, 16, 32
LIM_POSITION, LIM_VELOCITY, LIM_ACCELERATION, LIM_JERK, LIM_TORQUE = 1, 2, 4, 8, 16


class GovernorError(ValueError):
    """A governor call failed; `status` is the C status name, `fault` (index, joint, limit)."""

    def __init__(self, status, why, fault=None):
        self.status, self.fault = status, fault
        super().__init__(why)


def sqrt0(x):
    return math.sqrt(x) if x > 0.0 else 0.0


def sgn(a):
    return 1.0 if a > 0.0 else (-1.0 if a < 0.0 else 0.0)


def root1(A, B, C):
    """Largest k >= 0 with A t^2 + B t + C <= 0 on all of [0, k], given C <= 0."""
    disc = B * B - 4.0 * A * C
    if C > 0.0:
        return 0.0
    if B > 0.0:
        r = (-2.0 * C) / (B + sqrt0(disc)) if disc >= 0.0 else CAP
    else:
        r = (sqrt0(disc) - B) / (2.0 * A) if A > 0.0 else CAP
    return min(r, CAP)


def xroot(A, B, C):
    """root1 squared: the largest x = k^2; without a square root when B = 0."""
    if C > 0.0:
        return 0.0
    if B == 0.0:
        return min(-C / A, BIG) if A > 0.0 else BIG
    r = root1(A, B, C)
    return r * r


def hermite_points(s0, s1, j, ds):
    """The Hermite data of joint j between two samples: p0, v0, w0, w1, v1, p1 (scaled)."""
    return (s0.q[j], ds * s0.dq[j], ds * ds * s0.ddq[j], ds * ds * s1.ddq[j],
            ds * s1.dq[j], s1.q[j])


def hermite_basis(th):
    """Quintic Hermite basis on [0, 1] for (v0, w0, w1, v1, p1 - p0): rows value, d/dth, d2,
    d3. The value is p0 plus its row's sum, a derivative its row's sum (p0's own basis
    function is 1 less p1's), so a standing path is exact under any rounding."""
    t2 = th * th
    t3 = t2 * th
    t4 = t3 * th
    t5 = t4 * th
    return (
        (th - 6.0 * t3 + 8.0 * t4 - 3.0 * t5, 0.5 * t2 - 1.5 * t3 + 1.5 * t4 - 0.5 * t5,
         0.5 * t3 - t4 + 0.5 * t5, -4.0 * t3 + 7.0 * t4 - 3.0 * t5, 10.0 * t3 - 15.0 * t4 + 6.0 * t5),
        (1.0 - 18.0 * t2 + 32.0 * t3 - 15.0 * t4, th - 4.5 * t2 + 6.0 * t3 - 2.5 * t4,
         1.5 * t2 - 4.0 * t3 + 2.5 * t4, -12.0 * t2 + 28.0 * t3 - 15.0 * t4,
         30.0 * t2 - 60.0 * t3 + 30.0 * t4),
        (-36.0 * th + 96.0 * t2 - 60.0 * t3, 1.0 - 9.0 * th + 18.0 * t2 - 10.0 * t3,
         3.0 * th - 12.0 * t2 + 10.0 * t3, -24.0 * th + 84.0 * t2 - 60.0 * t3,
         60.0 * th - 180.0 * t2 + 120.0 * t3),
        (-36.0 + 192.0 * th - 180.0 * t2, -9.0 + 36.0 * th - 30.0 * t2,
         3.0 - 24.0 * th + 30.0 * t2, -24.0 + 168.0 * th - 180.0 * t2,
         60.0 - 360.0 * th + 360.0 * t2),
    )


def hermite_row(h, P):
    """Basis row h times the Hermite data P = (p0, v0, w0, w1, v1, p1), with p1 - p0 for p1."""
    return h[0] * P[1] + h[1] * P[2] + h[2] * P[3] + h[3] * P[4] + h[4] * (P[5] - P[0])


def hermite_a345(p0, v0, w0, w1, v1, p1):
    """The th^3, th^4, th^5 coefficients of the quintic Hermite through the data
    (q(th) = p0 + v0 th + w0 th^2 / 2 + a3 th^3 + a4 th^4 + a5 th^5)."""
    dp = p1 - p0
    return (10.0 * dp - 6.0 * v0 - 4.0 * v1 - 1.5 * w0 + 0.5 * w1,
            -15.0 * dp + 8.0 * v0 + 7.0 * v1 + 1.5 * w0 - w1,
            6.0 * dp - 3.0 * v0 - 3.0 * v1 - 0.5 * w0 + 0.5 * w1)


def box_join(box, i, kl, kh, ul, uh):
    """Segment i's box of plan D states grows to hold kappa in [kl, kh] and u in [ul, uh]."""
    b = box.get(i)
    if b is None:
        box[i] = [kl, kh, ul, uh]
    else:
        b[0] = min(b[0], kl); b[1] = max(b[1], kh)
        b[2] = min(b[2], ul); b[3] = max(b[3], uh)


class Slot:
    """One window sample: the path there, a, b, c, its braking rows, X and Xs."""
    __slots__ = ("q", "dq", "ddq", "dddq", "a", "b", "c", "bA", "bB", "bC", "x_max", "x_safe",
                 "x_try", "x_plan", "u_try", "u_plan", "vp", "dr", "jb", "jr",
                 "thi", "tlo", "gv", "kv", "fv", "k_vel")


class GovernorTwin:
    """The governor of csrc/governor.c in Python (see the module doc)."""

    def __init__(self, robot, dt, ds, horizon, override_max, rate_max, rate_rate_max, margin,
                 dynamics=None, max_horizon=256):
        values = (dt, ds, override_max, rate_max, rate_rate_max, margin)
        if not all(math.isfinite(float(v)) for v in values):
            raise GovernorError("FFWD_E_NONFINITE", "governor: a configuration value is not finite")
        if not (dt > 0 and ds > 0 and 2 <= horizon <= max_horizon and override_max > 0
                and rate_max > 0 and rate_rate_max > 0 and 0 <= margin < 0.5):
            raise GovernorError("FFWD_E_ARG", "governor: configuration out of range")
        self.robot = robot
        self.n = robot.dof
        for j, joint in enumerate(robot.joints):
            for name, bit in (("velocity", LIM_VELOCITY), ("acceleration", LIM_ACCELERATION),
                              ("torque", LIM_TORQUE)):
                if getattr(joint.limits, name) is None:
                    raise GovernorError("FFWD_E_LIMIT", f"joint {joint.name!r}: no {name} limit",
                                        (None, j, bit))
        self.dt, self.ds, self.H = float(dt), float(ds), int(horizon)
        self.override_max, self.U, self.V = float(override_max), float(rate_max), float(rate_rate_max)
        self.margin = float(margin)
        self.keep = 1.0 - self.margin
        self.viscous = [j.drive.viscous for j in robot.joints]
        self.coulomb = [j.drive.coulomb for j in robot.joints]
        lim = [j.limits for j in robot.joints]
        self.tau_max = [l.torque for l in lim]
        self.v_max = [l.velocity for l in lim]
        self.a_max = [l.acceleration for l in lim]
        self.j_max = [l.jerk for l in lim]               # None: no jerk limit
        self.pos = [l.position for l in lim]
        self.any_jerk = any(v is not None for v in self.j_max)
        # inverse dynamics and gravity: the twin's, or those of an ffwd.Dynamics
        if dynamics is None:
            self.inv = lambda q, v, a: inverse_dynamics(robot, q, v, a)
            self.grav = lambda q: gravity_torque(robot, q)
        else:
            self.inv, self.grav = dynamics.inverse_dynamics, dynamics.gravity
        self.band = [j.drive.coulomb_band for j in robot.joints]
        self.window = []          # the window's slots, first sample first
        self.base = 0
        self.pushed = 0
        self.finished = False
        self.dirty = False
        self.sigma = 0.0
        self.kappa = 0.0
        self.u = 0.0
        self.u_last = 0.0         # the rate the last cycle applied (u differs: it came to rest)
        self.qdd_prev = [0.0] * self.n      # the last command's qdd (for the jerk per cycle)
        self.plan = None          # the stored braking plan: None or ("rest",), ("P",) (x_plan of
                                  # the slots) or ("D", D, Vp)
        self.hold_left = 0        # plan D repeats u this many cycles before it brakes
        reach = self.override_max * self.dt + 0.5 * self.U * self.dt * self.dt
        self.pieces = 1
        for p in range(1, self.H - 1):
            if (p - 1) * self.ds < reach:
                self.pieces = p + 1
        self.pieces = min(self.pieces, self.H - 1)

    # ---- samples
    def room(self):
        return 0 if self.finished else self.H - len(self.window)

    def finish(self):
        if not self.window:
            raise GovernorError("FFWD_E_ARG", "finish: no sample pushed")
        self.finished = True

    def _fault(self, joint, limit, why):
        raise GovernorError("FFWD_E_INFEASIBLE", why, (self.pushed, joint, limit))

    def push(self, q, dq, ddq, dddq, parts=None):
        """Append the next path sample; `parts` = (a, b, c) skips the dynamics calls."""
        if self.finished or len(self.window) >= self.H:
            raise GovernorError("FFWD_E_ARG", "push: the window is full or the path finished")
        q, dq, ddq, dddq = (np.asarray(v, dtype=float) for v in (q, dq, ddq, dddq))
        if not all(np.all(np.isfinite(v)) for v in (q, dq, ddq, dddq)):
            raise GovernorError("FFWD_E_NONFINITE", "push: a sample value is not finite")
        # the safe curve keeps twice the margin: a state on it can follow it between
        # samples and still meet the limits reduced once (checked at every step)
        n, ds, keep = self.n, self.ds, 1.0 - 2.0 * self.margin
        for j in range(n):
            if self.pos[j] is not None and (q[j] < self.pos[j][0] or q[j] > self.pos[j][1]):
                self._fault(j, LIM_POSITION, "outside the position limits")
        if parts is None:
            # a = M q' = ID(q, 0, q') - g ; b = M q'' + C(q, q') q' = ID(q, q', q'') - g - friction(q')
            g = np.asarray(self.grav(q), dtype=float)
            a = np.asarray(self.inv(q, np.zeros(n), dq), dtype=float)
            iner = np.asarray(self.inv(q, dq, ddq), dtype=float)
            fr = [self.viscous[j] * dq[j] + self.coulomb[j] * min(max(dq[j] / self.band[j], -1.0), 1.0)
                  for j in range(n)]
            a = [float(a[j]) - float(g[j]) for j in range(n)]
            b = [float(iner[j]) - float(g[j]) - float(fr[j]) for j in range(n)]
            c = g
        else:
            a, b, c = parts
        sl = Slot()
        sl.q, sl.dq, sl.ddq, sl.dddq = q.tolist(), dq.tolist(), ddq.tolist(), dddq.tolist()
        sl.a, sl.b, sl.c = [float(v) for v in a], [float(v) for v in b], [float(v) for v in c]
        cols = 2 * n + 1
        lB, lG, lD, uB, uG, uD = ([0.0] * cols for _ in range(6))
        X = self.override_max * self.override_max      # never above the largest override
        # rows: column p < n torque of joint p, n <= p < 2n acceleration of joint p - n, 2n rate
        for p in range(cols):
            if p < n:
                fc = self.coulomb[p] * sgn(sl.dq[p])
                tau = keep * self.tau_max[p]
                al, be, ga = sl.a[p], sl.b[p], self.viscous[p] * sl.dq[p]
                dp = sl.c[p] + max(fc, 0.0) - tau
                dm = -sl.c[p] - min(fc, 0.0) - tau
                jj, lim = p, LIM_TORQUE
            elif p < 2 * n:
                al, be, ga = sl.dq[p - n], sl.ddq[p - n], 0.0
                dp = -(keep * self.a_max[p - n])
                dm = dp
                jj, lim = p - n, LIM_ACCELERATION
            else:
                al, be, ga = 1.0, 0.0, 0.0
                dp = -self.U
                dm = dp
                jj, lim = -1, 0
            pure = abs(al) <= ALPHA_TOL * (1.0 + abs(dp) + abs(dm))
            sa = 1.0 if pure else al
            uB[p] = 0.0 if pure else -be / sa
            uG[p] = 0.0 if pure else -ga / sa
            lB[p], lG[p] = uB[p], uG[p]
            if pure:
                uD[p], lD[p] = BIG, -BIG
                if dp > REST_TOL or dm > REST_TOL:
                    self._fault(jj, lim, "the limit cannot be met at rest")
                X = min(X, xroot(be, ga, dp))
                X = min(X, xroot(-be, -ga, dm))
            elif al > 0.0:
                uD[p], lD[p] = -dp / sa, dm / sa
            else:
                uD[p], lD[p] = dm / sa, -dp / sa
            if lD[p] > REST_TOL or uD[p] < -REST_TOL:
                self._fault(jj, lim, "the limit cannot be met at rest")
        for j in range(n):                      # velocity limits bound x alone
            vq = keep * self.v_max[j]
            d = abs(sl.dq[j])
            xv = BIG
            if d * 1e-15 < vq:
                t = vq / max(d, vq * 1e-15)
                xv = min(t * t, BIG)
            X = min(X, xv)
        for i in range(cols):                   # every lower bound under every upper bound
            for p in range(cols):
                if p != i:                      # a column's own two bounds never cross
                    X = min(X, xroot(lB[i] - uB[p], lG[i] - uG[p], lD[i] - uD[p]))
        for p in range(cols):                   # the next x >= 0 stays reachable
            X = min(X, xroot(-1.0 - 2.0 * ds * uB[p], -(2.0 * ds * uG[p]), -(2.0 * ds * uD[p])))
        # where q'_j or a_j changes sign between the previous sample and this one, the
        # limit of joint j bounds x alone somewhere in between: bound x at both samples
        if self.window:
            pv = self.window[-1]
            for j in range(n):
                if pv.dq[j] * sl.dq[j] <= 0.0:
                    qq = max(abs(pv.ddq[j]), abs(sl.ddq[j]))
                    xb = min(keep * self.a_max[j] / qq, BIG) if qq > 0.0 else BIG
                    X = min(X, xb)
                    pv.x_max = min(pv.x_max, xb)
                if pv.a[j] * sl.a[j] <= 0.0:
                    bb = max(abs(pv.b[j]), abs(sl.b[j]))
                    cc = max(abs(pv.c[j]), abs(sl.c[j]))
                    vm = self.viscous[j] * max(abs(pv.dq[j]), abs(sl.dq[j]))
                    num = keep * self.tau_max[j] - cc - self.coulomb[j]
                    if num > 0.0:
                        r = xroot(bb, vm, -num)
                        X = min(X, r)
                        pv.x_max = min(pv.x_max, r)
        # keep the lower bounds that are the largest somewhere on [0, sqrt(X)]
        sl.bA, sl.bB, sl.bC = [], [], []
        r = sqrt0(X)
        for i in range(cols):
            dominated = False
            for p in range(cols):
                if p == i:
                    continue
                dB, dG, dD = lB[p] - lB[i], lG[p] - lG[i], lD[p] - lD[i]
                if dB == 0.0 and dG == 0.0 and dD == 0.0:
                    ok = p < i
                else:
                    ok = dD >= 0.0 and dB * r * r + dG * r + dD >= 0.0
                    if ok and dB > 0.0:
                        kv = -dG / (2.0 * dB)
                        if 0.0 < kv < r:
                            ok = dB * kv * kv + dG * kv + dD >= 0.0
                dominated = dominated or ok
            if not dominated:
                sl.bA.append(1.0 + 2.0 * ds * lB[i])
                sl.bB.append(2.0 * ds * lG[i])
                sl.bC.append(2.0 * ds * lD[i])
        sl.x_max = X
        sl.x_safe = 0.0
        sl.x_try = sl.x_plan = 0.0     # the fastest-stop plan's x here (0: at rest)
        sl.u_try = sl.u_plan = 0.0     # and its u on the segment from here
        # for the constant-deceleration plan: its ramp rate may use half of what the jerk
        # limits allow for this q' (vp); the deceleration every limit allows at rest (dr)
        sl.vp, sl.dr = BIG, BIG
        for j in range(n):
            dq = abs(sl.dq[j])
            if self.j_max[j] is not None and dq > 0.0:
                sl.vp = min(sl.vp, 0.5 * keep * self.j_max[j] / dq)
            if abs(sl.a[j]) > 0.0:
                room = keep * self.tau_max[j] - abs(sl.c[j]) - self.coulomb[j]
                sl.dr = min(sl.dr, max(room, 0.0) / abs(sl.a[j]))
            if dq > 0.0:
                sl.dr = min(sl.dr, keep * self.a_max[j] / dq)
        self.box_rows(sl, keep)
        sl.jb = [[0.0] * n for _ in range(3)]    # |q'|, |q''|, |q'''| bounds on the segment from here
        sl.jr = [0.0, 0.0, 0.0]                 # their largest ratios to the jerk limits
        if self.window:
            self.window[-1].jb, self.window[-1].jr = self.seg_bounds(self.window[-1], sl)
        self.window.append(sl)
        self.pushed += 1
        self.dirty = True

    # ---- the safe curve
    def backward_pass(self):
        """Xs = 0 at the window's last sample; before it, per sample, the largest x <= X
        from which braking at this sample's lower bound reaches the next Xs and whose
        straight line in (s, x) to the next Xs also respects the next sample's lower
        bound (limits hold at both ends of every segment of the safe curve)."""
        w = self.window
        if not w:
            return
        w[-1].x_safe = 0.0
        X1 = 0.0
        nxt = w[-1]
        for i in range(len(w) - 1, 0, -1):
            sl = w[i - 1]
            best = sl.x_max
            k1 = sqrt0(X1)
            L1 = -BIG                       # 2 ds times the next sample's lower bound at X1
            for A, B, C in zip(sl.bA, sl.bB, sl.bC):
                best = min(best, xroot(A, B, C - X1))
            for A, B, C in zip(nxt.bA, nxt.bB, nxt.bC):
                L1 = max(L1, (A - 1.0) * X1 + B * k1 + C)
            best = min(best, max(X1 - L1, 0.0))
            sl.x_safe = best
            X1 = best
            nxt = sl
        self.dirty = False

    def safety_cap(self, x, plan=False):
        """Largest u whose constant-u motion over this cycle ends under the safe curve:
        on window segment j, x + 2 u d(u) <= Xs_j + m_j (sigma + d(u) - S_j) with
        d(u) = kappa dt + dt^2 u / 2, a quadratic in u."""
        dt, ds, w = self.dt, self.ds, self.window
        e0, e1 = self.kappa * dt, 0.5 * dt * dt
        cap = -self.kappa / dt                 # stopping within the cycle is always safe
        for j in range(self.pieces):
            if j + 1 < len(w):
                Sj = j * ds
                if plan:        # plan P's line on this segment (it may reach 0 inside)
                    Xa, mj = w[j].x_plan, 2.0 * w[j].u_plan
                else:
                    Xa, Xb = w[j].x_safe, w[j + 1].x_safe
                    mj = (Xb - Xa) / ds
                A = 2.0 * e1
                B = 2.0 * e0 - mj * e1
                C = x - Xa - mj * (self.sigma + e0 - Sj)
                disc = B * B - 4.0 * A * C
                if disc >= 0.0:
                    sq = sqrt0(disc)
                    qq = -0.5 * (B + sq) if B >= 0.0 else -0.5 * (B - sq)
                    r1 = qq / A if qq != 0.0 else 0.0
                    r2 = C / qq if qq != 0.0 else 0.0
                    rp, rm = max(r1, r2), min(r1, r2)
                    ulo = (Sj - self.sigma - e0) / e1
                    uhi = (Sj + ds - self.sigma - e0) / e1
                    if max(rm, ulo) <= min(rp, uhi):
                        cap = max(cap, min(rp, uhi))
        return cap


    # ---- (b) with (c): the braking plans that vouch for a step
    def brake_u(self, sl, x):
        """The smallest admissible u at sample sl for x (twice the margin)."""
        k, L = sqrt0(x), -BIG
        for A, B, C in zip(sl.bA, sl.bB, sl.bC):
            L = max(L, ((A - 1.0) * x + B * k + C) / (2.0 * self.ds))
        return L

    def jerk_ok(self, sl, x, u, v):
        keep2 = 1.0 - 2.0 * self.margin
        k = sqrt0(x)
        for j in range(self.n):
            if self.j_max[j] is not None:
                J = sl.dddq[j] * x * k + 3.0 * sl.ddq[j] * k * u + sl.dq[j] * v
                if abs(J) > keep2 * self.j_max[j]:
                    return False
        return True

    def jump_ok(self, i, pos, x, u0, u1):
        """The joint jerk limits (twice the margin) for a change of u from u0 to u1 in one
        cycle at pos (in window segment i), with the path's q', q'', q''' there."""
        if not self.any_jerk:
            return True
        keep2 = 1.0 - 2.0 * self.margin
        k, v = sqrt0(x), (u1 - u0) / self.dt
        H = hermite_basis(min(max(pos / self.ds - i, 0.0), 1.0))
        for j in range(self.n):
            if self.j_max[j] is not None:
                d1, d2, d3 = self.path_d123(i, H, j)
                for uu in (u0, u1):
                    if abs(d3 * x * k + 3.0 * d2 * k * uu + d1 * v) > keep2 * self.j_max[j]:
                        return False
        return True

    def plan_brake(self, sig, kap, u, h):
        """Plan P: brake at each sample's smallest admissible u (the fastest stop, what the
        safe curve assumes) from (sig, kappa) after a cycle at u; the changes of u at the
        samples and the last one, to rest, must each fit in one cycle's rate of rate h.
        Writes the plan's x per sample into x_try (0 after rest); True if it holds."""
        w, ds, dt = self.window, self.ds, self.dt
        last = len(w) - 1
        i = i0 = int(sig / ds)
        if i >= last:
            return False
        for sl in w:
            sl.x_try = sl.u_try = 0.0
        x, pos, up, first = kap * kap, sig, u, True
        while True:
            s0, s1 = w[i], w[i + 1]
            d = (i + 1) * ds - pos
            L = self.brake_u(s0, x)
            if first:
                L = max(L, self.brake_u(s1, x))
            for _ in range(3):                 # admissible at the segment's end too
                L1 = self.brake_u(s1, max(x + 2.0 * d * L, 0.0))
                if L1 <= L:
                    break
                L = L1
            xe = x + 2.0 * d * L
            # the change of u here, at the anchor or at the sample (where the cycle that
            # crosses it starts, up to kappa dt before: both ends)
            if abs(L - up) > h:
                return False
            if first:
                if not self.jump_ok(i, pos, x, up, L):
                    return False
            elif not (self.jump_ok(i, pos, x, up, L)
                      and self.jump_ok(i - 1, pos - sqrt0(x) * dt, x, up, L)):
                return False
            if not self.jump_ok(i, pos, x, L, L):      # holding L from the segment's start
                return False
            # the first cycle may cross into this segment: from u to a u between the
            # first two segments' (affine rows: checking both ends covers it)
            if i == i0 + 1 and (abs(L - u) > h or not self.jump_ok(i, pos, x, u, L)
                                or not self.jump_ok(i - 1, pos - sqrt0(x) * dt, x, u, L)):
                return False
            s0.x_try = x - 2.0 * L * (pos - i * ds)
            s0.u_try = L
            if xe <= 0.0:
                return abs(L) <= h
            if (i + 1 >= last or xe > s1.x_max or self.brake_u(s1, xe) > L + 1e-9 * (1.0 + abs(L))
                    or not self.jerk_ok(s1, xe, L, 0.0)):
                return False
            s1.x_try = xe
            x, up, pos, first = xe, L, (i + 1) * ds, False
            i += 1

    def ramp_need(self, u, Vp):
        """kappa used up while u < 0 steps back to 0 by Vp dt per cycle."""
        h = Vp * self.dt
        m = math.floor(-u / h) if u < 0.0 else 0
        return self.dt * (m * (-u) - h * m * (m + 1) / 2.0)

    def plan_action(self, kap, u, D, Vp):
        """Plan D's u for the next cycle: u ramps at -Vp to -D, holds, and ramps back at
        +Vp to reach rest (u changes by at most Vp dt a cycle)."""
        dt, h = self.dt, Vp * self.dt
        if kap <= 0.0:
            return 0.0
        if kap <= h * dt and kap <= D * dt and u - h <= -kap / dt <= u + h:
            return -kap / dt                      # rest at the end of this cycle
        d = max(u - h, -D) if u > -D else min(u + h, -D)
        kn = kap + d * dt
        if kn > 0.0 and kn >= self.ramp_need(d, Vp):
            return d
        return min(u + h, 0.0)

    @staticmethod
    def stop_length(k, u, D, V):
        """Path length plan D covers to rest in continuous time (u ramps at -V to -D or
        less, holds, ramps back at +V) and its duration: quick tests before its cycles
        are simulated."""
        D = max(D, -u)
        F = k + u * abs(u) / (2.0 * V)        # kappa once u is ramped to 0 (u < 0: less)
        if F <= 0.0:
            return 0.0, 0.0
        um = -D if F >= D * D / V else -sqrt0(V * F)
        phases = (((u - um) / V, -V), ((F - um * um / V) / -um, 0.0), (-um / V, V))  # hold at um
        s = 0.0
        for T, v in phases:
            s += k * T + 0.5 * u * T * T + v * T * T * T / 6.0
            k += u * T + 0.5 * v * T * T
            u += v * T
        return s, phases[0][0] + phases[1][0] + phases[2][0]

    def path_d123(self, i, H, j):
        """q', q'' and q''' of joint j in window segment i where the Hermite basis is H
        (the step's quintic interpolation)."""
        ds = self.ds
        P = hermite_points(self.window[i], self.window[i + 1], j, ds)
        v = [hermite_row(Hr, P) for Hr in H[1:]]
        return v[0] / ds, v[1] / (ds * ds), v[2] / (ds * ds * ds)

    def seg_poly(self, i):
        """q' and q'' of every jerk-limited joint over window segment i as polynomials in
        th (coefficients, constant term first): the quintic Hermite expanded,
        q(th) = p0 + v0 th + w0 th^2 / 2 + a3 th^3 + a4 th^4 + a5 th^5."""
        ds = self.ds
        i1 = 1.0 / ds
        i2 = i1 * i1
        c1, c2 = {}, {}
        for j in range(self.n):
            if self.j_max[j] is None:
                continue
            p0, v0, w0, w1, v1, p1 = hermite_points(self.window[i], self.window[i + 1], j, ds)
            a3, a4, a5 = hermite_a345(p0, v0, w0, w1, v1, p1)
            c1[j] = (v0 * i1, w0 * i1, 3.0 * a3 * i1, 4.0 * a4 * i1, 5.0 * a5 * i1)
            c2[j] = (w0 * i2, 6.0 * a3 * i2, 12.0 * a4 * i2, 20.0 * a5 * i2)
        return c1, c2

    def held_stop_length(self, k, u, D, V, hold):
        """stop_length of plan D from (k, u) when it first repeats u for `hold` cycles
        (rest within them: the length to rest at that u) and its duration."""
        if hold == 0:
            return self.stop_length(k, u, D, V)
        T = hold * self.dt
        kh = k + u * T
        if u < 0.0 and kh <= 0.0:
            return k * k / (-2.0 * u), k / -u
        length, duration = self.stop_length(kh, u, D, V)
        return k * T + 0.5 * u * T * T + length, duration + T

    def stop_gap(self, uc, D, Vp, hold):
        """How far plan D (repeating u `hold` cycles first) from the state after a cycle
        at u overshoots the window's end by its continuous stop length (<= 0: it fits; rest
        within the cycle fits, -ds)."""
        dt, send = self.dt, (len(self.window) - 1) * self.ds
        kc = self.kappa + uc * dt
        sc = self.sigma + self.kappa * dt + 0.5 * dt * dt * uc
        if uc < 0.0 and kc <= 0.0:
            return -self.ds
        return sc + self.held_stop_length(kc, uc, D, Vp, hold)[0] - send

    def stop_fit_u(self, ua, ub, D, Vp, hold):
        """The largest u in [ua, ub] after which plan D (deceleration D, ramps at Vp)
        stops inside the window by its continuous stop length (ua if none does): what a
        full check of plan D can accept at most. The gap grows with u: its root is
        bracketed and found by the Illinois variant of the false position (a halving
        where a step would leave the bracket), to the width FIT_ITER halvings would
        leave, in at most FIT_ITER steps."""
        fb = self.stop_gap(ub, D, Vp, hold)
        if fb <= 0.0:
            return ub
        fa = self.stop_gap(ua, D, Vp, hold)
        if fa > 0.0:
            return ua                      # none fits
        w = (ub - ua) / float(1 << FIT_ITER)
        side, it = 0, 0
        while it < FIT_ITER and ub - ua > w:
            m = ua - fa * ((ub - ua) / (fb - fa))
            if not ua < m < ub:
                m = 0.5 * (ua + ub)
            fm = self.stop_gap(m, D, Vp, hold)
            if fm <= 0.0:
                ua, fa = m, fm
                if side < 0:
                    fb *= 0.5
                side = -1
            else:
                ub, fb = m, fm
                if side > 0:
                    fa *= 0.5
                side = 1
            it += 1
        return ua

    def seg_bounds(self, s0, s1):
        """Bounds of |q'|, |q''|, |q'''| of every jerk-limited joint on the segment from
        s0 to s1: sums of the absolute coefficients of each polynomial in th on [0, 1];
        and the largest ratio of each bound to its joint's jerk limit (twice the margin)."""
        ds = self.ds
        keep2 = 1.0 - 2.0 * self.margin
        jr = [0.0, 0.0, 0.0]
        i1 = 1.0 / ds
        i2 = i1 * i1
        i3 = i2 * i1
        jb = [[0.0] * self.n for _ in range(3)]
        for j in range(self.n):
            if self.j_max[j] is None:
                continue
            p0, v0, w0, w1, v1, p1 = hermite_points(s0, s1, j, ds)
            a3, a4, a5 = hermite_a345(p0, v0, w0, w1, v1, p1)
            jb[0][j] = (abs(v0) + abs(w0) + abs(3.0 * a3) + abs(4.0 * a4) + abs(5.0 * a5)) * i1
            jb[1][j] = (abs(w0) + abs(6.0 * a3) + abs(12.0 * a4) + abs(20.0 * a5)) * i2
            jb[2][j] = (abs(6.0 * a3) + abs(24.0 * a4) + abs(60.0 * a5)) * i3
            jm = keep2 * self.j_max[j]
            jr = [max(jr[t], jb[t][j] / jm) for t in range(3)]
        return jb, jr

    def seg_of(self, s):
        """The window segment of progress s (the last one past the end)."""
        return min(int(s / self.ds), len(self.window) - 2)

    def cycle_qdd(self, c):
        """The command's qdd = q'' kappa^2 + q' u of the jerk-limited joints at a plan D
        cycle c = (s, kappa, u) (the path's interpolation)."""
        s, k, u = c
        i = self.seg_of(s)
        th = s / self.ds - i
        c1, c2 = self.seg_poly(i)
        qn = {}
        for j in c1:
            a, b = c1[j], c2[j]
            dq = (((a[4] * th + a[3]) * th + a[2]) * th + a[1]) * th + a[0]
            ddq = ((b[3] * th + b[2]) * th + b[1]) * th + b[0]
            qn[j] = ddq * k * k + dq * u
        return qn

    def jerk_step_ok(self, qa, qb):
        """|qb - qa| <= the jerk limit times dt for every jerk-limited joint (twice the margin)."""
        keep2 = 1.0 - 2.0 * self.margin
        return all(abs(qb[j] - qa[j]) <= keep2 * self.j_max[j] * self.dt
                   for j in range(self.n) if self.j_max[j] is not None)

    def seg_jerk_safe(self, a, box, Vp):
        """Does the jerk bound cover every change of qdd between a cycle starting in
        segment a and the next (in a or a + 1)? With the bounds B1, B2, B3 of |q'|,
        |q''|, |q'''| over both segments and the largest kappa and |u| of their boxes,
        the change over a cycle at constant u whose next u differs by at most Vp dt is at
        most dt (B3 kappa^3 + 3 B2 kappa |u| + B1 Vp), since
        d/dt (q'' kappa^2 + q' u) = q''' kappa^3 + 3 q'' kappa u + q' du/dt."""
        keep2 = 1.0 - 2.0 * self.margin
        w, nseg = self.window, len(self.window) - 1
        b = box[a]
        kk, uu = b[1], max(abs(b[2]), abs(b[3]))
        if a + 1 < nseg and a + 1 in box:
            c = box[a + 1]
            kk, uu = max(kk, c[1]), max(uu, max(abs(c[2]), abs(c[3])))
        r1, r2, r3 = w[a].jr
        if a + 1 < nseg:
            r1, r2, r3 = max(r1, w[a + 1].jr[0]), max(r2, w[a + 1].jr[1]), max(r3, w[a + 1].jr[2])
        # the largest ratios of all joints at once: where they fit, every joint does
        if r3 * kk * kk * kk + 3.0 * r2 * kk * uu + r1 * Vp * (1.0 + 1e-9) <= 1.0:
            return True
        for j in range(self.n):
            if self.j_max[j] is None:
                continue
            B1, B2, B3 = w[a].jb[0][j], w[a].jb[1][j], w[a].jb[2][j]
            if a + 1 < nseg:
                B1, B2, B3 = max(B1, w[a + 1].jb[0][j]), max(B2, w[a + 1].jb[1][j]), max(B3, w[a + 1].jb[2][j])
            if B3 * kk * kk * kk + 3.0 * B2 * kk * uu + B1 * Vp * (1.0 + 1e-9) > keep2 * self.j_max[j]:
                return False
        return True

    def decel_cycles(self, sig, kap, u, D, Vp, box, safe=None, hold=0):
        """Plan D's cycles from (sig, kappa > 0, u), the middle of a hold as one block.
        The first pass (safe None) records the per-segment boxes; the second checks the
        joint jerk exactly wherever the segments' bound does not cover it (segments not
        in safe), at most EXACT_CYCLES cycles (more: the plan is not vouched for).
        Returns None if the plan fails, else (first cycle, last cycle, whether a cycle
        steps over a whole segment). Its first `hold` cycles repeat u."""
        ds, dt = self.ds, self.dt
        send = (len(self.window) - 1) * ds
        s, k, uu = sig, kap, u
        cycles, exact, ip, wide = 0, 0, 0, False
        first = prev = None
        while k > 0.0:
            if uu == -D and first is not None and hold == 0:   # holding -D: the middle as one block
                m, last = self.hold_block(s, k, D, Vp)
                skip = m > 0
                i = self.seg_of(s)
                if skip and safe is not None:
                    # only where the bound covers every change in it and into it
                    skip = (ip in safe and i <= ip + 1 and k * dt < ds
                            and all(a in safe for a in range(i, self.seg_of(last[0]) + 1)))
                if skip:
                    wide = wide or i > ip + 1 or k * dt >= ds   # a step over a whole segment
                    if safe is None:
                        self.hold_boxes(s, k, D, last[0], box)
                    cycles += m
                    s += m * k * dt - 0.5 * D * dt * dt * m * m
                    k -= m * D * dt
                    prev = last
                    ip = self.seg_of(last[0])
                    continue
            cycles += 1
            if cycles > MAX_PLAN_CYCLES or s > send:
                return None
            if hold > 0:                 # the cycles that repeat u first
                un = uu
                hold -= 1
            else:
                un = self.plan_action(k, uu, D, Vp)
            i = self.seg_of(s)
            if first is None:
                first = (s, k, un)
            else:
                wide = wide or i > ip + 1
                if safe is not None and not (ip in safe and i <= ip + 1):
                    # pass 2: the change from the cycle before, exactly (within a budget)
                    exact += 1
                    if exact > EXACT_CYCLES or not self.jerk_step_ok(self.cycle_qdd(prev),
                                                                     self.cycle_qdd((s, k, un))):
                        return None
            prev = (s, k, un)
            ip = i
            if safe is None:     # the box of kappa and u (this cycle's and the one before)
                box_join(box, i, k, k, min(uu, un), max(uu, un))
            if un < 0.0 and k + un * dt <= 0.0:
                if -un > Vp * dt * (1.0 + 1e-9):     # u drops to 0 at rest: one cycle's change
                    return None
                s += k * k / (-2.0 * un)
                k = uu = 0.0
            else:
                s += k * dt + 0.5 * dt * dt * un
                k += un * dt
                uu = un
        if s > send:
            return None
        return first, prev, wide

    def plan_decel(self, sig, kap, u, D, Vp, qdd0, hold=0):
        """Does plan D from (sig, kappa, u) meet every limit and rest inside the window?
        Its cycles are simulated; per window segment the box of its cycle states is
        tested at both ends (rows interpolate linearly between samples); the joint jerk
        per cycle, from qdd0 (the command before the plan) to rest, by the segments'
        bound where it covers it, else exactly (q' and q'' of the path's interpolation)."""
        w = self.window
        nseg = len(w) - 1
        length, duration = self.held_stop_length(kap, u, D, Vp, hold)
        if sig + length > nseg * self.ds:
            return False                       # it cannot rest inside the window
        if not duration <= self.dt * MAX_PLAN_CYCLES:
            return False                       # nor within the cycles it may simulate
        zero = [0.0] * self.n
        if kap <= 0.0:                         # at rest already: the command's qdd is 0
            return not self.any_jerk or self.jerk_step_ok(qdd0, zero)
        box = {}
        run = self.decel_cycles(sig, kap, u, D, Vp, box, hold=hold)
        if run is None:
            return False
        first, last, wide = run
        # each sample once, with the box joining the two segments it ends (rows are
        # affine between samples: both ends of a segment cover it)
        for i in range(nseg + 1):
            near = [box[m] for m in (i - 1, i) if m in box]
            if near:
                kl, kh = min(b[0] for b in near), max(b[1] for b in near)
                ul, uh = min(b[2] for b in near), max(b[3] for b in near)
                if not self.box_fits(w[i], kl, kh, ul, uh):
                    return False
        if not self.any_jerk:
            return True
        # the first cycle from the command before the plan; at rest the command's qdd is 0
        if not self.jerk_step_ok(qdd0, self.cycle_qdd(first)):
            return False
        if not self.jerk_step_ok(zero, self.cycle_qdd(last)):
            return False
        safe = {i for i in sorted(box) if self.seg_jerk_safe(i, box, Vp)}
        if len(safe) == len(box) and not wide:
            return True
        return self.decel_cycles(sig, kap, u, D, Vp, box, safe, hold) is not None

    def hold_block(self, s, k, D, Vp):
        """Plan D holding u = -D from (s, kappa): the cycles up to two before the ramp
        back, as one block (x is affine in s along them: x = kappa^2 - 2 D (s' - s)).
        Returns their number (0: none worth a block) and the last of them."""
        dt = self.dt
        m = math.floor(min((k - self.ramp_need(-D, Vp)) / (D * dt), 1e9)) - 2
        if m < 2:
            return 0, None
        last = (s + (m - 1) * k * dt - 0.5 * D * dt * dt * (m - 1) * (m - 1),
                k - (m - 1) * D * dt, -D)
        if last[0] > (len(self.window) - 1) * self.ds:
            return 0, None                     # beyond the window: the cycles say so
        return m, last

    def hold_boxes(self, s, k, D, s_last, box):
        """The boxes of a hold block from (s, kappa) to its last cycle at s_last join the
        segments' (first pass of decel_cycles)."""
        ds, x0 = self.ds, k * k
        for i in range(self.seg_of(s), self.seg_of(s_last) + 1):
            lo_s, hi_s = max(s, i * ds), min(s_last, (i + 1) * ds)
            kh = sqrt0(x0 - 2.0 * D * (lo_s - s))
            kl = sqrt0(x0 - 2.0 * D * (hi_s - s))
            box_join(box, i, kl, kh, -D, -D)

    def box_rows(self, sl, keep):
        """What the box tests of plan D need at sample sl (limits reduced by keep): the
        room of each torque row above and below (limit less c and Coulomb friction), the
        viscous term gv = viscous q', where b < 0 the kappa of the largest
        b kappa^2 + gv kappa (else -1) and that value, the largest kappa every velocity
        limit allows."""
        n = self.n
        sl.thi, sl.tlo, sl.gv, sl.kv, sl.fv = ([0.0] * n for _ in range(5))
        sl.k_vel = BIG
        for j in range(n):
            fc = self.coulomb[j] * sgn(sl.dq[j])
            tm, b = keep * self.tau_max[j], sl.b[j]
            gv = self.viscous[j] * sl.dq[j]
            sl.thi[j] = tm - sl.c[j] - max(fc, 0.0)
            sl.tlo[j] = -tm - sl.c[j] - min(fc, 0.0)
            sl.gv[j], sl.kv[j], sl.fv[j] = gv, -1.0, 0.0
            if b < 0.0:
                kv = -gv / (2.0 * b)
                sl.kv[j], sl.fv[j] = kv, b * (kv * kv) + gv * kv
            if abs(sl.dq[j]) > 0.0:
                sl.k_vel = min(sl.k_vel, keep * self.v_max[j] / abs(sl.dq[j]))

    def box_fits(self, sl, kl, kh, ul, uh):
        """Every limit of sample sl (twice the margin) over the box of states. Each row
        is a sum of a term in u and one in kappa, so its extremes over the box are the
        sums of theirs: a u at ul, uh; b x + gv kappa at kl, kh and, where b < 0, its
        interior maximum. (The C core also keeps per sample a box known to fit and
        accepts a box inside it untested: the same answer, up to rounding.)"""
        keep2 = 1.0 - 2.0 * self.margin
        xl, xh = kl * kl, kh * kh
        if xh > sl.x_max or kh > sl.k_vel:
            return False
        for j in range(self.n):
            dq, ddq, a, b, gv = sl.dq[j], sl.ddq[j], sl.a[j], sl.b[j], sl.gv[j]
            am = keep2 * self.a_max[j]
            f0, f1 = b * xl + gv * kl, b * xh + gv * kh
            fhi = max(f0, f1)
            if kl < sl.kv[j] < kh:
                fhi = max(fhi, sl.fv[j])                  # interior maximum of b x + gv kappa
            u0, u1 = a * ul, a * uh
            if max(u0, u1) + fhi > sl.thi[j] or min(u0, u1) + min(f0, f1) < sl.tlo[j]:
                return False
            e0, e1, v0, v1 = ddq * xl, ddq * xh, dq * ul, dq * uh
            if max(e0, e1) + max(v0, v1) > am or min(e0, e1) + min(v0, v1) < -am:
                return False
        return True

    def vouch(self, uc, Vp, Dr, every=True, hold=0):
        """The braking plan that vouches for applying uc this cycle, or None: the fastest
        stop (P) if its changes of u fit the rate of rate, else a constant deceleration:
        the stored one, Dr, Dr/2, Dr/4 (every=False: the first two of these); plan D
        repeats u `hold` cycles before it brakes."""
        dt, kap = self.dt, self.kappa
        h = self.V * dt
        kc = kap + uc * dt
        if uc < 0.0 and kc <= 0.0:                 # rest within this cycle
            if -uc <= h and self.sigma + kap * kap / (-2.0 * uc) <= (len(self.window) - 1) * self.ds:
                return ("rest",)
            return None
        sc = self.sigma + kap * dt + 0.5 * dt * dt * uc
        x = kap * kap
        qdd0 = [self.d2[j] * x + self.d1[j] * uc for j in range(self.n)]
        if self.plan_brake(sc, kc, uc, h):
            return ("P",)
        Ds = [self.plan[1]] if self.plan is not None and self.plan[0] == "D" else []
        Ds = (Ds + [Dr, 0.5 * Dr, 0.25 * Dr])[:4 if every else 2]
        for c, D in enumerate(Ds):
            if D in Ds[:c]:
                continue                    # tried already (the stored D is often Dr)
            if D > 0.0 and self.plan_decel(sc, kc, uc, D, Vp, qdd0, hold):
                return ("D", D, Vp)
        return None

    def keep_plan(self, plan, hold=0):
        """Store an accepted plan (P: its x per sample; D: the cycles it repeats u
        first) and return it."""
        if plan is not None:
            self.plan = plan
            self.hold_left = hold if plan[0] == "D" else 0
            if plan[0] == "P":
                for sl in self.window:
                    sl.x_plan, sl.u_plan = sl.x_try, sl.u_try
        return plan

    def plan_step(self, x):
        """The stored plan's own u for this cycle."""
        p, h, dt = self.plan, self.V * self.dt, self.dt
        if p is None or p[0] == "rest" or self.kappa <= 0.0:
            return 0.0 if self.kappa <= 0.0 else -self.kappa / self.dt
        if p[0] == "D":
            return self.u if self.hold_left > 0 else self.plan_action(self.kappa, self.u, p[1], p[2])
        # plan P: its u on this segment (the state is on its line), the landing on the
        # next segment's line where the cycle crosses a sample
        u0 = self.window[0].u_plan
        if self.sigma + self.kappa * dt + 0.5 * dt * dt * u0 < self.ds or self.kappa + u0 * dt <= 0.0:
            return u0
        u1 = self.window[1].u_plan
        if self.kappa + u1 * dt <= 0.0:
            return u1
        return min(max(self.safety_cap(x, plan=True), self.u - h), self.u + h)

    # ---- one control cycle
    def step(self, override_cmd):
        if not self.window:
            raise GovernorError("FFWD_E_ARG", "step: no sample pushed")
        if not math.isfinite(override_cmd):
            raise GovernorError("FFWD_E_NONFINITE", "step: the override command is not finite")
        n, dt, ds, U, V, keep = self.n, self.dt, self.ds, self.U, self.V, self.keep
        cmd = min(max(float(override_cmd), 0.0), self.override_max)
        if self.dirty:
            self.backward_pass()
        w = self.window
        s0 = w[0]
        if len(w) < 2:                          # at the window's last sample: hold still
            q = np.array(s0.q)
            out = dict(q=q, qd=np.zeros(n), qdd=np.zeros(n),
                       tau=inverse_dynamics(self.robot, q, np.zeros(n), np.zeros(n)),
                       s=self.base * ds, override=0.0, rate=0.0, rate_rate=-self.u / dt,
                       safe_override=0.0, flags=AT_REST | (DONE if self.finished else STARVED))
            self.kappa = self.u = self.u_last = self.sigma = 0.0
            self.qdd_prev = [0.0] * n
            return out
        s1 = w[1]
        th = self.sigma / ds
        H = hermite_basis(th)
        q, d1, d2 = ([0.0] * n for _ in range(3))
        for j in range(n):                       # the path between the two samples
            P = hermite_points(s0, s1, j, ds)
            val = [hermite_row(Hr, P) for Hr in H[:3]]
            q[j] = P[0] + val[0]
            d1[j] = val[1] / ds
            d2[j] = val[2] / (ds * ds)
        kap = self.kappa
        x = kap * kap
        flags = 0
        self.d1, self.d2 = d1, d2            # for the plan checks
        # the torque at this point is affine in u: tau = tau0 + a u, with tau0 the inverse
        # dynamics at (q, q' kappa, q'' x) and a = M q' = ID(q, 0, q') - g (exact, friction
        # included, no interpolation between samples)
        qa = np.array(q)
        qd = np.array([d1[j] * kap for j in range(n)])
        tau0 = np.asarray(self.inv(qa, qd, np.array([d2[j] * x for j in range(n)])), dtype=float)
        ta = np.asarray(self.inv(qa, np.zeros(n), np.array(d1)), dtype=float)
        gq = np.asarray(self.grav(qa), dtype=float)
        # (a) limits at the current point: an interval [lo, hi] of u
        lo, hi = -U, U
        xss = BIG
        for k in range(2 * n):
            j = k if k < n else k - n
            if k < n:
                fc = self.coulomb[j] * sgn(d1[j])
                tau = keep * self.tau_max[j]
                cc = s0.c[j] + th * (s1.c[j] - s0.c[j])
                al = s0.a[j] + th * (s1.a[j] - s0.a[j])
                be = s0.b[j] + th * (s1.b[j] - s0.b[j])
                ga = self.viscous[j] * d1[j]
                dp = cc + max(fc, 0.0) - tau
                dm = -cc - min(fc, 0.0) - tau
            else:
                al, be, ga = d1[j], d2[j], 0.0
                dp = -(keep * self.a_max[j])
                dm = dp
            ev = be * x + ga * kap
            # largest x at which holding the speed (u = 0) is admissible here
            xss = min(xss, min(xroot(be, ga, dp), xroot(-be, -ga, dm)))
            if k < n:       # the exact torque rows: a u + tau0 within +-tau_max
                al = float(ta[j]) - float(gq[j])
                ev = float(tau0[j])
                dp = -(keep * self.tau_max[j])
                dm = dp
            if abs(al) <= ALPHA_TOL * (1.0 + abs(dp) + abs(dm)):
                if ev + dp > REST_TOL or -ev + dm > REST_TOL:
                    flags |= CONFLICT
            elif al > 0.0:
                hi = min(hi, (-dp - ev) / al)
                lo = max(lo, (dm - ev) / al)
            else:
                lo = max(lo, (-dp - ev) / al)
                hi = min(hi, (dm - ev) / al)
        # velocity limits at the end of this cycle (q' there predicted to first order)
        for j in range(n):
            d1n = abs(d1[j] + d2[j] * kap * dt)
            vq = keep * self.v_max[j]
            if d1n * 1e-15 < vq:
                hi = min(hi, (vq / max(d1n, vq * 1e-15) - kap) / dt)
        # (c) under the safe curve at the end of this cycle
        cap = self.safety_cap(x)
        # tracker target: the command, or the lowest point of the safe curve over the
        # distance covered while u swings through its range (jerk-bounded anticipation)
        look = self.sigma + kap * (max(self.u, 0.0) / V + dt)
        xa = s0.x_safe + th * (s1.x_safe - s0.x_safe)
        for k in range(1, self.H):
            if k < len(w) and (k - 1) * ds < look:   # (later k add nothing: as in C)
                Sk = k * ds
                Xk = w[k].x_safe
                if Sk <= look:
                    xa = min(xa, Xk)
                elif Sk - ds < look:
                    Xp = w[k - 1].x_safe
                    xa = min(xa, Xp + (look - (Sk - ds)) / ds * (Xk - Xp))
        kt = min(cmd, sqrt0(min(xa, xss)))
        if kt < cmd:
            flags |= CAPPED
        # (b), (d): jerk-bounded approach of the target
        e = kt - kap
        Vp = min([self.V] + [sl.vp for sl in self.window])     # ramp rate of plan D
        Dr = min([self.U] + [sl.dr for sl in self.window])     # its largest deceleration
        # largest |u| that still lets u ramp back to 0 at rate Vp (what the joint jerk
        # limits allow in the window, at most V) without passing the target
        ud = min(U, 2.0 * abs(e) / (sqrt0(dt * dt + 2.0 * abs(e) / Vp) + dt))
        ud = ud if e >= 0.0 else -ud
        vlo, vhi = -V, V
        if self.u_last != self.u:    # it came to rest within the last cycle at u_last: within h of that too
            vlo = max(vlo, (self.u_last - V * dt - self.u) / dt)
            vhi = min(vhi, (self.u_last + V * dt - self.u) / dt)
        jerk_bad = False
        for j in range(n):
            if self.j_max[j] is not None:
                jm = keep * self.j_max[j]
                # the command's jerk over this cycle, exactly: J0 + q' du/dt
                J0 = (d2[j] * x + d1[j] * self.u - self.qdd_prev[j]) / dt
                al = d1[j]
                if abs(al) > ALPHA_TOL:
                    va, vb = (-jm - J0) / al, (jm - J0) / al
                    vlo = max(vlo, min(va, vb))
                    vhi = min(vhi, max(va, vb))
                elif abs(J0) > jm:
                    jerk_bad = True
        if vlo > vhi:
            jerk_bad = True
            vlo, vhi = -V, V
        v = min(max((ud - self.u) / dt, vlo), vhi)
        utr = self.u + v * dt
        hic = min(hi, cap)
        if lo > hic:
            unew = hic
            flags |= CONFLICT
        else:
            unew = min(max(utr, lo), hic)
        # (b) with (c): the step is kept only if a braking plan from where it leads meets
        # every limit with the rate of rate bounded; else the largest u towards it that
        # has one (halvings), else the stored plan's own u. Where the stored plan D repeats
        # u this cycle (vouched for last cycle, where the window held the speed), that u
        # unless the step asks for less.
        tol = 1e-9
        def fits(uc):
            vc = (uc - self.u) / dt
            return (lo - tol * (1.0 + abs(lo)) <= uc <= hi + tol * (1.0 + abs(hi))
                    and vlo - tol * (1.0 + abs(vlo)) <= vc <= vhi + tol * (1.0 + abs(vhi))
                    and not jerk_bad)
        held = self.hold_left > 0   # (only an accepted plan D sets it)
        got = None
        if not (held and unew >= self.u) and fits(unew) and not (flags & CONFLICT):
            got = self.keep_plan(self.vouch(unew, Vp, Dr))
        if got is None:
            # the stored plan's u (held: u again), or else the largest u towards the step's
            # with a plan D that repeats it HOLD cycles before it brakes: where the window
            # holds the speed, one full check every HOLD + 1 cycles
            ufb = self.plan_step(x)
            a, b = ufb, unew
            # first the largest u whose plan D stop fits the window (its continuous stop
            # length, for the largest D tried): usually what the window allows
            Dm = max(Dr, self.plan[1]) if self.plan is not None and self.plan[0] == "D" else Dr
            if not held and ufb < unew and Dm > 0.0:
                uw = self.stop_fit_u(ufb, unew, Dm, Vp, HOLD)
                if ufb < uw < unew:
                    b = uw
                    if fits(uw):
                        got = self.keep_plan(self.vouch(uw, Vp, Dr, False, HOLD), HOLD)
                        if got is not None:
                            a = uw
            for _ in range(0 if got is not None or held else NBISECT):
                mid = 0.5 * (a + b)
                r = self.keep_plan(self.vouch(mid, Vp, Dr, False, HOLD), HOLD) if fits(mid) else None
                if r is None:
                    b = mid
                else:
                    a, got = mid, r
            if got is None:
                if held:
                    self.hold_left -= 1
                if not (lo - tol * (1.0 + abs(lo)) <= ufb <= hi + tol * (1.0 + abs(hi))):
                    flags |= CONFLICT
            else:
                ufb = a
            if ufb < unew:
                flags |= CAPPED
            unew = ufb
        vact = (unew - self.u) / dt
        if (jerk_bad or vact < vlo - 1e-9 * (1.0 + abs(vlo))
                or vact > vhi + 1e-9 * (1.0 + abs(vhi))):
            flags |= JERK
        qdd = np.array([d2[j] * x + d1[j] * unew for j in range(n)])
        tau = np.array([float(tau0[j]) + (float(ta[j]) - float(gq[j])) * unew for j in range(n)])
        out = dict(q=qa, qd=qd, qdd=qdd, tau=tau,
                   s=self.base * ds + self.sigma, override=kap, rate=unew, rate_rate=vact,
                   safe_override=sqrt0(s0.x_safe + th * (s1.x_safe - s0.x_safe)),
                   flags=flags | (AT_REST if kap == 0.0 else 0))
        # advance by one cycle at constant u
        if unew < 0.0 and kap + unew * dt <= 0.0:
            sig = self.sigma + x / (-2.0 * unew)
            kn = 0.0
            unew = 0.0
        else:
            sig = self.sigma + kap * dt + 0.5 * dt * dt * unew
            kn = kap + unew * dt
        send = (len(w) - 1) * ds
        # at rest, commanded on, short of the path's end by less than the smallest move the
        # joint jerk limits allow (a few Vp dt^3, Vp from them): there (q moves by at most
        # 4 j_max dt^3)
        if (sig > send or send - sig <= 1e-9 * ds
                or (kn == 0.0 and self.finished and cmd > 0.0 and Vp < V
                    and send - sig <= 8.0 * Vp * dt * dt * dt)):
            sig = send
        for _ in range(self.pieces + 1):
            if len(w) > 1 and sig >= ds:
                sig -= ds
                w.pop(0)
                self.base += 1
        self.sigma, self.kappa, self.u = sig, kn, unew
        self.u_last = out["rate"]
        self.qdd_prev = [float(v) for v in qdd]
        return out
