"""Synthetic logs: play a trajectory through a known model and add measurement noise.

Used by the tests, by `ffwd identify synth` and by the demo: the torques come from
the model's inverse dynamics (ffwd.Dynamics, C core or twin), plus Gaussian noise of a
given standard deviation per joint; positions may get noise too.
"""
import numpy as np

from ..trajio import write_trajectory
from .backend import dynamics_for


def two_link_arm(l1=0.5, gravity=(0.0, -9.81, 0.0), friction=True):
    """An invented two-link planar arm: both axes along z, link 1 of length l1 along x,
    gravity in the x-y plane. Used by the tests and the examples of docs/identify.md."""
    from ..model import Drive, Joint, Limits, Link, Robot
    lim = Limits((-2.5, 2.5), 2.0, 8.0, 100.0, 80.0)
    fr = (0.5, 1.0, 0.3, 0.6) if friction else (0.0, 0.0, 0.0, 0.0)
    z = np.array([0.0, 0.0, 1.0])
    j1 = Joint("j1", "revolute", -1, np.eye(3), np.zeros(3), z,
               Link(3.0, [0.2, 0.01, 0.0], np.diag([0.01, 0.05, 0.05])),
               Drive(50.0, 2e-5, fr[0], fr[1], 0.05), lim)
    j2 = Joint("j2", "revolute", 0, np.eye(3), np.array([l1, 0.0, 0.0]), z,
               Link(2.0, [0.15, -0.02, 0.0], np.diag([0.008, 0.03, 0.03])),
               Drive(50.0, 1e-5, fr[2], fr[3], 0.05), lim)
    return Robot("two_link", np.array(gravity, dtype=float), (j1, j2))


def _per_joint(value, dof, what):
    v = np.broadcast_to(np.asarray(value, dtype=float), (dof,)).copy()
    if not np.all(np.isfinite(v)) or np.any(v < 0):
        raise ValueError(f"{what} must be finite and >= 0 per joint, got {v.tolist()}")
    return v


def synthetic_log(robot, t, q, qd, qdd, tau_noise=0.0, q_noise=0.0, seed=0, backend=None):
    """(q_measured, tau_measured): inverse dynamics at (q, qd, qdd) plus N(0, tau_noise^2)
    per joint, and q plus N(0, q_noise^2). Returns arrays of shape (N, dof)."""
    q, qd, qdd = (np.asarray(a, dtype=float) for a in (q, qd, qdd))
    rng = np.random.default_rng(seed)
    dof = robot.dof
    tau = dynamics_for(robot, backend).inverse_dynamics(q, qd, qdd)
    tau = tau + rng.normal(size=tau.shape) * _per_joint(tau_noise, dof, "torque noise")
    qm = q + rng.normal(size=q.shape) * _per_joint(q_noise, dof, "position noise")
    return qm, tau


def write_synthetic_log(path, robot, t, q, qd, qdd, tau_noise=0.0, q_noise=0.0, seed=0,
                        backend=None, with_qd=False):
    """Write a log CSV (t, q_*, [qd_*], tau_*) of the trajectory played through robot."""
    qm, tau = synthetic_log(robot, t, q, qd, qdd, tau_noise, q_noise, seed, backend)
    names = robot.joint_names
    extra = {f"tau_{n}": tau[:, k] for k, n in enumerate(names)}
    write_trajectory(path, t, names, qm, qd if with_qd else None, None, extra=extra)
    return qm, tau
