"""A physically consistent full parameter set nearest to the base-parameter estimate.

Each body's 10 inertial parameters are held as its pseudo-inertia matrix
    J = [[S, h], [h^T, m]],   S = tr(I)/2 * 1 - I,   h = m c
(I the inertia about the joint-frame origin). A body is physically consistent (a
non-negative mass density can produce it: positive mass, positive-definite inertia
about the centre of mass, triangle inequality of the principal moments) exactly when
J is positive definite (Wensing, Kim and Slotine, 2017, Linear matrix inequalities for
physically consistent inertial parameter identification: a statistical perspective on
the mass distribution, IEEE Robotics and Automation Letters 3(1)).

The semidefinite program (cvxpy; Clarabel, else SCS):
    minimise  (K theta - theta_b)^T C^-1 (K theta - theta_b)            C: covariance
              + lambda * sum_j |J_j - J0_j|_F^2 / |J0_j|_F^2               J0: catalogue
              + lambda * sum_j |d_j - d0_j|^2 / (|d0_j|^2 + s_j^2)
        d: armature, viscous, Coulomb; s = (1e-3, 1e-2, 1e-2) keeps zero catalogue values usable
    subject to J_j - eps_j * 1 positive semidefinite, d_j >= 0.
The first term keeps the base parameters within their confidence region; the small
regulariser fixes the parts the data cannot see (the null space of K) near the catalogue.
"""
import warnings
from dataclasses import dataclass

import numpy as np

SOLVERS = ("CLARABEL", "SCS")


def pseudo_inertia(p):
    """4x4 pseudo-inertia matrix of the 10 parameters m, mc, Ixx, Ixy, Ixz, Iyy, Iyz, Izz."""
    m, h = p[0], np.asarray(p[1:4])
    I = np.array([[p[4], p[5], p[6]], [p[5], p[7], p[8]], [p[6], p[8], p[9]]])
    S = 0.5 * np.trace(I) * np.eye(3) - I
    J = np.zeros((4, 4))
    J[:3, :3], J[:3, 3], J[3, :3], J[3, 3] = S, h, h, m
    return J


def params_of_pseudo_inertia(J):
    """Inverse of pseudo_inertia (numpy or cvxpy expressions): a list of 10 entries."""
    S = J[:3, :3]
    return [J[3, 3], J[0, 3], J[1, 3], J[2, 3],
            S[1, 1] + S[2, 2], -S[0, 1], -S[0, 2],
            S[0, 0] + S[2, 2], -S[1, 2], S[0, 0] + S[1, 1]]


def is_consistent(p, tol=0.0):
    """True when the 10 parameters have a positive-definite pseudo-inertia."""
    return bool(np.linalg.eigvalsh(pseudo_inertia(p))[0] > tol)


def _valid_body(p):
    """The model's own check of a body (what Robot.with_parameters will do)."""
    from ..errors import ModelError
    from ..model import Link, _from_params10
    if not (p[0] > 0 and is_consistent(p)):
        return False
    try:
        Link(*_from_params10(p))
    except ModelError:
        return False
    return True


@dataclass(frozen=True)
class ConsistentSet:
    theta: np.ndarray        # (13 dof,) full physically consistent standard parameters
    solver: str
    status: str
    distance: float          # sqrt of (K theta - theta_b)^T C^-1 (...): in standard deviations
    max_sigma: float         # largest |K theta - theta_b|_k / sd_k


def nearest_consistent(base, theta_b, cov, prior_theta, dof, reg=1e-3, eps=1e-6):
    """Solve the SDP of the module doc. base: BaseParameters; theta_b, cov: the estimate
    and its covariance; prior_theta: catalogue standard parameters (13 dof,)."""
    import cvxpy as cp

    prior = np.asarray(prior_theta, dtype=float)
    P = 13 * dof
    theta = []
    cons = []
    reg_terms = []
    for j in range(dof):
        p0 = prior[13 * j:13 * j + 13]
        J0 = pseudo_inertia(p0[:10])
        scale = max(np.linalg.norm(J0), 1e-9)
        J = cp.Variable((4, 4), symmetric=True)
        d = cp.Variable(3)
        cons += [J - eps * scale * np.eye(4) >> 0, d >= 0]
        theta += params_of_pseudo_inertia(J) + [d[0], d[1], d[2]]
        reg_terms.append(cp.sum_squares(J - J0) / scale ** 2)
        s = np.array([1e-3, 1e-2, 1e-2])
        wd = 1 / np.sqrt(p0[10:] ** 2 + s ** 2)
        reg_terms.append(cp.sum_squares(cp.multiply(d - p0[10:], wd)))
    th = cp.hstack(theta)
    # whitening: |L^T x|^2 = x^T C^-1 x
    Ci = np.linalg.inv(0.5 * (cov + cov.T))
    L = np.linalg.cholesky(0.5 * (Ci + Ci.T))
    fit = cp.sum_squares(L.T @ (base.K @ th - theta_b))
    problem = cp.Problem(cp.Minimize(fit + reg * cp.sum(cp.hstack(reg_terms))), cons)
    out, solver, status, last = None, None, None, None
    for name in SOLVERS:
        if name not in cp.installed_solvers():
            continue
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")   # "inaccurate" is checked below instead
                problem.solve(solver=name)
        except cp.error.SolverError as exc:
            last = exc
            continue
        if problem.status not in ("optimal", "optimal_inaccurate") or th.value is None:
            last = problem.status
            continue
        cand = np.asarray(th.value, dtype=float).reshape(P)
        for j in range(dof):       # round-off of the drive parameters
            cand[13 * j + 10:13 * j + 13] = np.maximum(cand[13 * j + 10:13 * j + 13], 0.0)
        if all(_valid_body(cand[13 * j:13 * j + 10]) for j in range(dof)):
            out, solver, status = cand, name, problem.status
            break
        last = f"{name} returned a body that is not physically consistent ({problem.status})"
    if out is None:
        raise ValueError(f"the physically consistent fit failed: no SDP solver succeeded "
                         f"({last}); install cvxpy with Clarabel or SCS")
    diff = base.K @ out - theta_b
    sd = np.sqrt(np.diag(cov))
    return ConsistentSet(out, solver, status, float(np.sqrt(diff @ Ci @ diff)),
                         float(np.max(np.abs(diff) / sd)))
