"""Base parameters: the independent combinations of the standard parameters.

The joint torque is linear in the 13 standard parameters per joint (10 inertial, then
armature, viscous, Coulomb; see csrc/include/ffwd.h), but some columns of the regressor
are zero or linear combinations of others, so only combinations of the parameters can
be identified. QR decomposition with column pivoting of the regressor stacked at random
states finds them (Gautier, 1990, Numerical calculation of the base inertial parameters
of robots, J. Robotic Systems 7(4)):

    W P = Q [R1 R2],   R1 (r x r) with |R1_ii| above the rank tolerance
    W theta = W1 (theta1 + beta theta2),   beta = R1^-1 R2

so the r base parameters are theta_b = theta1 + beta theta2 = K theta, and the base
regressor is W1, the columns of the r independent parameters.
"""
from dataclasses import dataclass

import numpy as np
from scipy.linalg import qr, solve_triangular

PARAM_NAMES = ("m", "mcx", "mcy", "mcz", "Ixx", "Ixy", "Ixz", "Iyy", "Iyz", "Izz",
               "armature", "viscous", "coulomb")
RANK_TOL = 1e-8   # |R_ii| / |R_00| below this counts as zero


def standard_names(joint_names):
    """Names of the 13*dof standard parameters, e.g. 'Izz_j2'."""
    return [f"{p}_{j}" for j in joint_names for p in PARAM_NAMES]


@dataclass(frozen=True)
class BaseParameters:
    """Base parameters theta_b = K @ theta of the standard parameters theta."""
    independent: np.ndarray   # (r,) standard-parameter index that stands for each base parameter
    dependent: np.ndarray     # (P - r,) the other indices
    beta: np.ndarray          # (r, P - r): theta_b = theta[independent] + beta @ theta[dependent]
    K: np.ndarray             # (r, P)
    names: tuple              # (P,) standard parameter names
    rank_tol: float

    @property
    def count(self):
        return len(self.independent)

    def base_regressor(self, Y):
        """Columns of the independent parameters of a regressor (..., P) -> (..., r)."""
        return np.asarray(Y)[..., self.independent]

    def project(self, theta):
        """Base parameters of a standard parameter vector."""
        return self.K @ np.asarray(theta, dtype=float)

    def labels(self):
        """Short label of each base parameter: the name of its independent parameter,
        with 'R' appended when other parameters are grouped into it."""
        out = []
        for i, k in enumerate(self.independent):
            grouped = np.any(self.beta[i] != 0)
            out.append(self.names[k] + ("R" if grouped else ""))
        return out

    def expressions(self, digits=6):
        """Each base parameter written in the standard parameters,
        e.g. 'Izz_j1 + armature_j1 + 0.25 m_j2'."""
        out = []
        for i, k in enumerate(self.independent):
            terms = [self.names[k]]
            for c, d in sorted(zip(self.beta[i], self.dependent), key=lambda cd: cd[1]):
                if c == 0:
                    continue
                mag = abs(c)
                coef = "" if abs(mag - 1) < 10 ** -digits else f"{mag:.{digits}g} "
                terms.append(f"{'-' if c < 0 else '+'} {coef}{self.names[d]}")
            out.append(" ".join(terms))
        return out

    def unidentifiable(self):
        """Standard parameters that appear in no base parameter (zero columns)."""
        used = np.any(self.beta != 0, axis=0)
        return sorted((self.names[d] for d, u in zip(self.dependent, used) if not u),
                      key=self.names.index)


def base_parameters_of(W, names=None, rank_tol=RANK_TOL):
    """Base parameters of a stacked regressor W (m x P, m >= P): QR with column pivoting."""
    W = np.asarray(W, dtype=float)
    m, P = W.shape
    if m < P:
        raise ValueError(f"stacked regressor has {m} rows for {P} parameters; "
                         "stack more samples (need rows >= parameters)")
    if names is None:
        names = tuple(f"p{k}" for k in range(P))
    _, R, perm = qr(W, mode="economic", pivoting=True)
    d = np.abs(np.diag(R))
    if d[0] == 0:
        raise ValueError("the stacked regressor is zero: nothing can be identified")
    r = int(np.sum(d > rank_tol * d[0]))
    beta = solve_triangular(R[:r, :r], R[:r, r:]) if r < P else np.zeros((r, 0))
    scale = np.max(np.abs(beta)) if beta.size else 0.0
    beta = np.where(np.abs(beta) < 1e-9 * max(scale, 1.0), 0.0, beta)
    ind, dep = perm[:r], perm[r:]
    K = np.zeros((r, P))
    K[np.arange(r), ind] = 1.0
    K[:, dep] = beta
    order = np.argsort(ind)            # list base parameters in standard-parameter order
    return BaseParameters(independent=ind[order], dependent=dep, beta=beta[order],
                          K=K[order], names=tuple(names), rank_tol=rank_tol)


def random_states(robot, n, rng):
    """n random (q, qd, qdd) within the joint limits (or +-pi, 2 rad/s, 10 rad/s^2)."""
    lo, hi, vmax, amax = [], [], [], []
    for j in robot.joints:
        L = j.limits
        p = L.position or ((-np.pi, np.pi) if j.type == "revolute" else (-0.5, 0.5))
        lo.append(p[0])
        hi.append(p[1])
        vmax.append(L.velocity or 2.0)
        amax.append(L.acceleration or 10.0)
    dof = robot.dof
    q = rng.uniform(lo, hi, size=(n, dof))
    qd = rng.uniform(-1, 1, size=(n, dof)) * vmax
    qdd = rng.uniform(-1, 1, size=(n, dof)) * amax
    return q, qd, qdd


def base_parameters(robot, samples=None, seed=0, backend=None):
    """Base parameters of a robot from its regressor stacked at random states."""
    from .backend import regressor_batch
    P = 13 * robot.dof
    n = samples or max(50, 3 * P // robot.dof + 20)
    q, qd, qdd = random_states(robot, n, np.random.default_rng(seed))
    W = regressor_batch(robot, q, qd, qdd, backend).reshape(-1, P)
    return base_parameters_of(W, standard_names(robot.joint_names))
