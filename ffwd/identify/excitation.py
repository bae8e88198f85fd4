"""Excitation trajectories: a finite Fourier series per joint whose coefficients are
optimised to make the stacked base regressor well conditioned (Swevers, Ganseman,
Tukel, De Schutter and Van Brussel, 1997, Optimal robot excitation and identification,
IEEE Trans. Robotics and Automation 13(5)).

Joint i follows, with w = 2 pi / period and L harmonics,
    q_i(t)   = q0_i + sum_l  a_il/(l w) sin(l w t) - b_il/(l w) cos(l w t)
    qd_i(t)  = sum_l a_il cos(l w t) + b_il sin(l w t)
    qdd_i(t) = sum_l -a_il l w sin(l w t) + b_il l w cos(l w t)
It is periodic, so it starts and ends at the same state. At rest there: qd(0) = 0 and
qdd(0) = 0 hold by construction, a_i1 = -sum_{l>1} a_il and b_i1 = -sum_{l>1} l b_il.
The free coefficients (q0_i, a_il, b_il for l >= 2) are found by scipy's SLSQP: minimise
log10 cond(W_b) of the base regressor stacked at sample times, subject to the position,
velocity and acceleration limits on a time grid (linear constraints in the coefficients).
"""
from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize

from .backend import dynamics_for
from .base import base_parameters


@dataclass(frozen=True)
class FourierTrajectory:
    """Periodic joint trajectory; q0 (dof,), a and b (dof, harmonics)."""
    period: float
    q0: np.ndarray
    a: np.ndarray
    b: np.ndarray

    @property
    def harmonics(self):
        return self.a.shape[1]

    def evaluate(self, t):
        """q, qd, qdd at times t, each (len(t), dof)."""
        t = np.atleast_1d(np.asarray(t, dtype=float))
        w = 2 * np.pi / self.period * np.arange(1, self.harmonics + 1)   # (L,)
        s, c = np.sin(np.outer(t, w)), np.cos(np.outer(t, w))           # (N, L)
        q = self.q0 + s @ (self.a / w).T - c @ (self.b / w).T
        qd = c @ self.a.T + s @ self.b.T
        qdd = -s @ (self.a * w).T + c @ (self.b * w).T
        return q, qd, qdd


def _coefficient_map(L):
    """M (1 + 2L, 2L - 1): free coefficients [q0, a_2..a_L, b_2..b_L] ->
    [q0, a_1..a_L, b_1..b_L] with the rest conditions built in."""
    M = np.zeros((1 + 2 * L, 2 * L - 1))
    M[0, 0] = 1.0
    for l in range(2, L + 1):
        ka, kb = l - 1, L - 1 + l - 1          # columns of a_l and b_l among the free ones
        M[l, ka] = 1.0                         # a_l
        M[1, ka] = -1.0                        # a_1 -= a_l
        M[L + l, kb] = 1.0                     # b_l
        M[L + 1, kb] = -float(l)               # b_1 -= l b_l
    return M


def _basis(t, period, L):
    """Rows giving q, qd, qdd at times t from [q0, a_1..a_L, b_1..b_L]."""
    w = 2 * np.pi / period * np.arange(1, L + 1)
    s, c = np.sin(np.outer(t, w)), np.cos(np.outer(t, w))
    one, zero = np.ones((len(t), 1)), np.zeros((len(t), 1))
    Bq = np.hstack([one, s / w, -c / w])
    Bqd = np.hstack([zero, c, s])
    Bqdd = np.hstack([zero, -s * w, c * w])
    return Bq, Bqd, Bqdd


def joint_limits(robot):
    """(lo, hi, vmax, amax) arrays; a missing limit is a ValueError naming the joint."""
    lo, hi, v, a = [], [], [], []
    for j in robot.joints:
        L = j.limits
        for name in ("position", "velocity", "acceleration"):
            if getattr(L, name) is None:
                raise ValueError(f"joint {j.name!r}: no {name} limit in the model; the "
                                 "excitation trajectory needs position, velocity and "
                                 "acceleration limits")
        lo.append(L.position[0])
        hi.append(L.position[1])
        v.append(L.velocity)
        a.append(L.acceleration)
    return tuple(np.array(x) for x in (lo, hi, v, a))


@dataclass(frozen=True)
class ExcitationResult:
    trajectory: FourierTrajectory
    start: FourierTrajectory
    cond_start: float          # condition number of the stacked base regressor, start
    cond: float                # ... optimised
    iterations: int
    limit_use: dict            # max |q - mid|/half range, |qd|/vmax, |qdd|/amax over a fine grid
    base_count: int
    message: str


class _Problem:
    def __init__(self, robot, period, harmonics, samples, grid, margin, backend,
                 need_base=True):
        self.robot, self.period, self.L = robot, period, harmonics
        self.dof = robot.dof
        self.M = _coefficient_map(harmonics)
        self.nfree = 2 * harmonics - 1
        self.lo, self.hi, self.vmax, self.amax = joint_limits(robot)
        self.margin = margin
        if need_base:
            self.base = base_parameters(robot, backend=backend)
            self.dyn = dynamics_for(robot, backend)
        ts = np.arange(samples) * (period / samples)
        self.S = [B @ self.M for B in _basis(ts, period, harmonics)]
        tg = np.arange(grid) * (period / grid)
        self.G = [B @ self.M for B in _basis(tg, period, harmonics)]

    def trajectory(self, x):
        X = x.reshape(self.dof, self.nfree)
        C = X @ self.M.T                                   # (dof, 1 + 2L)
        L = self.L
        return FourierTrajectory(self.period, C[:, 0].copy(), C[:, 1:L + 1].copy(),
                                 C[:, L + 1:].copy())

    def states(self, x, mats):
        X = x.reshape(self.dof, self.nfree)
        return [B @ X.T for B in mats]                     # each (N, dof)

    def cond(self, x):
        q, qd, qdd = self.states(x, self.S)
        Y = self.dyn.regressor(q, qd, qdd)
        Wb = self.base.base_regressor(Y).reshape(-1, self.base.count)
        s = np.linalg.svd(Wb, compute_uv=False)
        return np.inf if s[-1] <= 0 else float(s[0] / s[-1])

    def objective(self, x):
        c = self.cond(x)
        return 1e6 if not np.isfinite(c) else float(np.log10(c))

    def constraint_matrix(self):
        """A, b with A x <= b for every limit on the grid."""
        Gq, Gqd, Gqdd = self.G
        rows, rhs = [], []
        half = 0.5 * (self.hi - self.lo) * self.margin
        for j in range(self.dof):
            def block(G):
                Z = np.zeros((G.shape[0], self.dof * self.nfree))
                Z[:, j * self.nfree:(j + 1) * self.nfree] = G
                return Z
            v, a = self.vmax[j] * (1 - self.margin), self.amax[j] * (1 - self.margin)
            for G, up, low in ((Gq, self.hi[j] - half[j], self.lo[j] + half[j]),
                               (Gqd, v, -v), (Gqdd, a, -a)):
                Z = block(G)
                rows += [Z, -Z]
                rhs += [np.full(len(G), up), np.full(len(G), -low)]
        return np.vstack(rows), np.concatenate(rhs)

    def random_start(self, rng, fill=0.9):
        x = np.zeros((self.dof, self.nfree))
        x[:, 1:] = rng.normal(size=(self.dof, self.nfree - 1))
        Gq, Gqd, Gqdd = self.G
        for j in range(self.dof):
            dev = np.max(np.abs(Gq @ x[j]))
            v = np.max(np.abs(Gqd @ x[j]))
            a = np.max(np.abs(Gqdd @ x[j]))
            room = 0.5 * (self.hi[j] - self.lo[j]) * (1 - self.margin)
            s = fill * (1 - self.margin) * min(room / dev, self.vmax[j] / v, self.amax[j] / a)
            x[j, 1:] *= s
            x[j, 0] = 0.5 * (self.lo[j] + self.hi[j])     # q0: the mean position
        return x.ravel()


def limit_use(robot, traj, points=4000):
    """Largest fraction of each limit used on a fine grid: {'position', 'velocity',
    'acceleration'} -> (dof,) arrays; position: how far into [lo, hi] (1 = at a limit)."""
    lo, hi, vmax, amax = joint_limits(robot)
    t = np.linspace(0.0, traj.period, points)
    q, qd, qdd = traj.evaluate(t)
    mid, half = 0.5 * (lo + hi), 0.5 * (hi - lo)
    return {"position": np.max(np.abs(q - mid), axis=0) / half,
            "velocity": np.max(np.abs(qd), axis=0) / vmax,
            "acceleration": np.max(np.abs(qdd), axis=0) / amax}


def _shrink_to_limits(robot, traj):
    """Scale the motion about the mean position until every limit holds on a fine grid."""
    lo, hi, vmax, amax = joint_limits(robot)
    t = np.linspace(0.0, traj.period, 4000)
    q, qd, qdd = traj.evaluate(t)
    s = np.ones(robot.dof)
    for j in range(robot.dof):
        c = traj.q0[j]
        up = np.max(q[:, j] - c)
        down = np.max(c - q[:, j])
        cand = [1.0, vmax[j] / max(np.max(np.abs(qd[:, j])), 1e-300),
                amax[j] / max(np.max(np.abs(qdd[:, j])), 1e-300)]
        if up > 0:
            cand.append((hi[j] - c) / up)
        if down > 0:
            cand.append((c - lo[j]) / down)
        s[j] = min(cand) * (1 - 1e-9) if min(cand) < 1 else 1.0
    return FourierTrajectory(traj.period, traj.q0, traj.a * s[:, None], traj.b * s[:, None])


def random_excitation(robot, period=10.0, harmonics=5, margin=0.05, seed=0, fill=0.9):
    """A random Fourier trajectory (the optimiser's starting point): random coefficients
    scaled per joint so that the tightest of its limits is used to `fill`."""
    prob = _Problem(robot, float(period), int(harmonics), 1, 20 * int(harmonics) + 1,
                    float(margin), None, need_base=False)
    return prob.trajectory(prob.random_start(np.random.default_rng(seed), fill))


def design_excitation(robot, period=10.0, harmonics=5, samples=100, grid=None,
                      margin=0.05, max_iter=100, seed=0, backend=None, progress=False):
    """Optimise a Fourier excitation trajectory for `robot` (see the module doc).

    period: seconds of one period (base frequency 1/period); harmonics: L;
    samples: time points the regressor is stacked at; grid: points where the limits are
    enforced (default 20 per period of the highest harmonic); margin: fraction of each
    limit kept free. Returns an ExcitationResult; its trajectory respects every limit."""
    if harmonics < 2:
        raise ValueError("harmonics must be >= 2 (one is used up by the rest conditions)")
    grid = grid or 20 * harmonics + 1
    prob = _Problem(robot, float(period), int(harmonics), int(samples), int(grid),
                    float(margin), backend)
    rng = np.random.default_rng(seed)
    x0 = prob.random_start(rng)
    A, b = prob.constraint_matrix()
    f0 = prob.objective(x0)
    best = {"x": x0, "f": f0}

    def tracked(x):
        f = prob.objective(x)
        if f < best["f"] and np.all(A @ x <= b + 1e-9):
            best.update(x=x.copy(), f=f)
        return f

    bar = None
    if progress:
        from tqdm import tqdm
        bar = tqdm(total=max_iter, desc="excitation", unit="it", leave=False)
    iters = [0]

    def step(xk):
        iters[0] += 1
        if bar is not None:
            bar.update(1)
            bar.set_postfix(cond=f"{10 ** best['f']:.4g}")

    res = minimize(tracked, x0, method="SLSQP", callback=step,
                   constraints=[{"type": "ineq", "fun": lambda x: b - A @ x,
                                 "jac": lambda x: -A}],
                   options={"maxiter": int(max_iter), "ftol": 1e-6})
    if bar is not None:
        bar.close()
    tracked(res.x)
    traj = _shrink_to_limits(robot, prob.trajectory(best["x"]))
    start = prob.trajectory(x0)
    use = limit_use(robot, traj)
    return ExcitationResult(trajectory=traj, start=start, cond_start=10 ** f0,
                            cond=prob.cond(_free_of(prob, traj)), iterations=iters[0],
                            limit_use=use, base_count=prob.base.count, message=str(res.message))


def _free_of(prob, traj):
    """Free coefficients of a trajectory built by prob (inverse of prob.trajectory)."""
    L = prob.L
    x = np.zeros((prob.dof, prob.nfree))
    x[:, 0] = traj.q0
    x[:, 1:L] = traj.a[:, 1:]
    x[:, L:] = traj.b[:, 1:]
    return x.ravel()


def write_excitation(path, robot, traj, rate=500.0, periods=1):
    """Write the trajectory as a CSV the controller can play: t, q_*, qd_*, qdd_*,
    sampled at `rate` Hz over `periods` periods, first and last rows at rest."""
    from ..trajio import write_trajectory
    n = int(round(traj.period * periods * rate))
    t = np.arange(n + 1) / rate
    q, qd, qdd = traj.evaluate(t)
    write_trajectory(path, t, robot.joint_names, q, qd, qdd)
    return t, q, qd, qdd
