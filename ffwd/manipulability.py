"""Dynamic manipulability: the tool accelerations an arm at rest can reach.

At rest (qd = 0) the tool-origin acceleration is xdd = Jv qdd (the Jdot qd term is zero)
and qdd = M^-1 (tau - g), with Jv the linear rows of the tool Jacobian, M the mass matrix
(armature included) and g the gravity torque; friction is zero at qd = 0. Torques
tau = W u with |u| <= 1 (W = 1, or W = diag(torque limits) when normalised) give
    xdd = c + A u,     c = -Jv M^-1 g  (the zero-torque acceleration: the arm falling),
                       A = Jv M^-1 W,
an ellipsoid centred on c with axes from the SVD of A: lengths sigma_k, directions the
left singular vectors. Its quadratic form is (xdd - c)^T (A A^T)^+ (xdd - c) <= 1.
The dynamic manipulability ellipsoid is due to Yoshikawa 1985 (Dynamic manipulability of
robot manipulators, from memory); this module uses the image of the torque ball, which for
a redundant arm (more joints than the tool space) is every reachable acceleration, each
reached with least torque by u = A^+ (xdd - c) (Moore-Penrose pseudo-inverse). At a
singular pose (A A^T rank-deficient) the ellipsoid is flat: some axes have length 0 and the
quadratic form uses the pseudo-inverse.

`down` and `up` are the largest accelerations straight along gravity and straight against
it: the largest s with s*(unit gravity) resp. -s*(unit gravity) in the ellipsoid (no
sideways component). None when no such pure motion exists (e.g. the pose is singular
for that direction, or there is no gravity); `up` is negative when the arm cannot even
hold itself and can at best slow its fall.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import ModelError

__all__ = ["AccelerationEllipsoid", "acceleration_ellipsoid", "ellipsoids_along",
           "torque_weights", "dynamics_for"]

RANK_TOL = 1e-10   # singular values below RANK_TOL * largest count as zero


@dataclass(frozen=True)
class AccelerationEllipsoid:
    """Reachable tool-origin accelerations at rest, in the base frame [m/s^2]."""
    centre: np.ndarray       # (3,) acceleration at zero torque (gravity only)
    lengths: np.ndarray      # (3,) semi-axis lengths, largest first (0 where flat)
    directions: np.ndarray   # (3, 3) unit axis directions as columns, same order
    shape: np.ndarray        # (3, 3) A A^T; the quadratic form is its pseudo-inverse
    down: float | None       # largest acceleration straight along gravity
    up: float | None         # largest acceleration straight against gravity
    normalised: bool         # torques scaled by their limits

    @property
    def ratio(self):
        """down / up (None when either is missing; inf when up <= 0)."""
        if self.down is None or self.up is None:
            return None
        return float("inf") if self.up <= 0 else self.down / self.up

    @property
    def form(self):
        """The quadratic form Q: (x - centre)^T Q (x - centre) <= 1 on the ellipsoid."""
        return np.linalg.pinv(self.shape, rcond=RANK_TOL, hermitian=True)

    def holds_still(self):
        """True if zero acceleration is reachable (the arm can hold this pose)."""
        return _contains(self, np.zeros(3))


def dynamics_for(robot, backend=None):
    """ffwd.Dynamics for `backend`; None: the C core if built, else the twin."""
    from .dynamics import Dynamics
    if backend is not None:
        return Dynamics(robot, backend=backend)
    try:
        return Dynamics(robot, backend="c")
    except (ImportError, OSError, RuntimeError):
        return Dynamics(robot, backend="twin")


def torque_weights(robot, normalise):
    """W's diagonal: 1 per joint, or each joint's torque limit (which must be given)."""
    if not normalise:
        return np.ones(robot.dof)
    w = []
    for joint in robot.joints:
        if joint.limits.torque is None:
            raise ModelError("a torque limit is needed to normalise torques",
                             file=robot.source, joint=joint.name, field="limits.torque")
        w.append(joint.limits.torque)
    return np.array(w)


def acceleration_ellipsoid(robot, q, normalise=False, dynamics=None):
    """The AccelerationEllipsoid of `robot` at rest at q (see the module doc)."""
    dyn = dynamics if dynamics is not None else dynamics_for(robot)
    q = np.asarray(q, dtype=float)
    M = dyn.mass_matrix(q)
    g = dyn.gravity(q)
    Jv = dyn.tool_jacobian(q)[:3]
    W = torque_weights(robot, normalise)
    A = Jv @ np.linalg.solve(M, np.diag(W))
    centre = -Jv @ np.linalg.solve(M, g)
    U, sigma, _ = np.linalg.svd(A, full_matrices=True)
    lengths = np.zeros(3)
    lengths[:len(sigma)] = sigma
    lengths[lengths <= RANK_TOL * max(lengths[0], 1e-300)] = 0.0
    shape = A @ A.T
    gravity = np.asarray(robot.gravity, dtype=float)
    down = up = None
    if np.linalg.norm(gravity) > 0:
        e = gravity / np.linalg.norm(gravity)
        down = _reach_along(U, lengths, centre, e)
        up = _reach_along(U, lengths, centre, -e)
    return AccelerationEllipsoid(centre, lengths, U, shape, down, up, bool(normalise))


def _reach_along(U, lengths, centre, e):
    """Largest s with s*e in the ellipsoid {centre + U diag(lengths) z : |z| <= 1}."""
    live = lengths > 0
    # s*e - centre must lie in the ellipsoid's span; the centre does (it is A W^-1 (-g))
    off = U[:, ~live].T @ e
    if np.any(np.abs(off) > 1e-9):
        return None
    a = (U[:, live].T @ e) / lengths[live]        # z(s) = s a - b must satisfy |z| <= 1
    b = (U[:, live].T @ centre) / lengths[live]
    aa, ab, bb = a @ a, a @ b, b @ b
    disc = ab * ab - aa * (bb - 1.0)
    if aa == 0 or disc < 0:
        return None
    return float((ab + np.sqrt(disc)) / aa)


def _contains(ell, x, tol=1e-9):
    d = x - ell.centre
    return float(d @ ell.form @ d) <= 1.0 + tol


def ellipsoids_along(robot, q_samples, normalise=False, backend=None, progress=True):
    """AccelerationEllipsoid at every row of q_samples (N, dof), with a progress bar."""
    from tqdm import tqdm
    dyn = dynamics_for(robot, backend)
    rows = np.atleast_2d(np.asarray(q_samples, dtype=float))
    return [acceleration_ellipsoid(robot, q, normalise, dyn)
            for q in tqdm(rows, desc="ellipsoids", unit="pose", disable=not progress,
                          leave=False)]
