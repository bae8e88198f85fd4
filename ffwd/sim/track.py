"""Offline closed-loop runs: a joint PD controller, with or without inverse-dynamics
feedforward from the controller's model, drives the simulated arm along a reference.

Controller, once per cycle k (t_k = k / rate_hz), from the measured (q_m, qd_m):
    tau_k = Kp (q_ref,k - q_m) + Kd (qd_ref,k - qd_m) [+ ID_model(q_ref,k, qd_ref,k, qdd_ref,k)]
held constant over the cycle while the plant integrates. The tracking error is the
reference minus the true plant position at t_k (not the measured one).

Default gains (`default_gains`): per joint a critically damped second-order loop on the
largest diagonal entry of the model's mass matrix along the path,
    Kp_j = M_jj w^2,  Kd_j = 2 zeta w M_jj,   w = 2 pi * 8 Hz, zeta = 1.
"""
from dataclasses import dataclass, field

import numpy as np

from .flatmodel import mismatched
from .plant import Plant
from .reference import Reference, as_reference, demo_path

__all__ = ["TrackRun", "track", "compare", "default_gains", "model_dynamics"]


@dataclass(frozen=True)
class TrackRun:
    t: np.ndarray          # (N,) cycle times [s]
    q_ref: np.ndarray      # (N, dof) reference positions
    q: np.ndarray          # (N, dof) true plant positions at t
    qd: np.ndarray         # (N, dof) true plant velocities at t
    tau: np.ndarray        # (N, dof) torque applied by the plant (after saturation)
    tau_ff: np.ndarray     # (N, dof) feedforward part of the command (zeros without)
    feedforward: bool
    rate_hz: float
    kp: np.ndarray
    kd: np.ndarray
    saturated_steps: int
    options: dict = field(default_factory=dict)

    @property
    def error(self):
        """(N, dof) reference minus true position [rad or m]."""
        return self.q_ref - self.q

    @property
    def rms_error(self):
        """(dof,) root-mean-square tracking error per joint."""
        return np.sqrt(np.mean(self.error ** 2, axis=0))

    @property
    def rms_error_overall(self):
        """Root-mean-square over all joints and samples."""
        return float(np.sqrt(np.mean(self.error ** 2)))

    @property
    def max_error(self):
        return np.max(np.abs(self.error), axis=0)

    def summary(self, joint_names=None):
        names = joint_names or [f"j{i}" for i in range(self.q.shape[1])]
        return {
            "feedforward": self.feedforward,
            "rate_hz": self.rate_hz,
            "samples": int(len(self.t)),
            "rms_error": dict(zip(names, map(float, self.rms_error))),
            "rms_error_overall": self.rms_error_overall,
            "max_error": dict(zip(names, map(float, self.max_error))),
            "saturated_steps": self.saturated_steps,
            "kp": list(map(float, self.kp)),
            "kd": list(map(float, self.kd)),
            **self.options,
        }


class _TwinDynamics:
    """Batch wrapper over the twin when the compiled core is not available."""

    def __init__(self, robot):
        from .. import twin
        self.robot, self.twin = robot, twin

    def inverse_dynamics(self, q, qd, qdd):
        f = self.twin.inverse_dynamics
        return np.array([f(self.robot, a, b, c) for a, b, c in zip(q, qd, qdd)])

    def mass_matrix(self, q):
        return np.array([self.twin.mass_matrix(self.robot, a) for a in q])


def model_dynamics(robot, backend="auto"):
    """ffwd.Dynamics(robot) on the C core when it loads, else the twin (batched)."""
    if backend in ("auto", "c"):
        try:
            from ..dynamics import Dynamics
            return Dynamics(robot, backend="c")
        except (ImportError, OSError, RuntimeError):
            if backend == "c":
                raise
    return _TwinDynamics(robot)


def default_gains(robot, ref, bandwidth_hz=8.0, damping=1.0, dyn=None):
    """(kp, kd) per joint, see the module doc."""
    dyn = dyn or model_dynamics(robot)
    idx = np.linspace(0, len(ref.t) - 1, min(len(ref.t), 25)).astype(int)
    M = np.asarray(dyn.mass_matrix(ref.q[idx]))
    m = np.max(np.diagonal(M, axis1=1, axis2=2), axis=0)
    w = 2 * np.pi * bandwidth_hz
    return m * w ** 2, 2 * damping * w * m


def _with_settle(ref, settle):
    """The reference followed by `settle` seconds holding its last position."""
    extra = int(round(settle / ref.dt))
    if extra <= 0:
        return ref
    t = np.concatenate([ref.t, ref.t[-1] + ref.dt * np.arange(1, extra + 1)])
    hold = lambda a, v: np.vstack([a, np.repeat(v[None], extra, axis=0)])  # noqa: E731
    zero = np.zeros(ref.q.shape[1])
    return Reference(t, hold(ref.q, ref.q[-1]), hold(ref.qd, zero), hold(ref.qdd, zero))


def track(robot, path=None, feedforward=True, plant=None, mismatch=0.0, rate_hz=1000.0, *,
          gains=None, integrator="rk4", substeps=1, delay=0, counts_per_rev=0.0, noise_q=0.0,
          noise_qd=0.0, seed=1, saturate=True, settle=0.25, backend="auto", progress=False):
    """Closed-loop run of a PD (+ feedforward) controller on the simulated arm.

    robot: the controller's model. path: the reference (see as_reference), default the
    demo path. plant: the plant's model (default: robot); mismatch scales every inertial
    and drive parameter of the plant by (1 + mismatch). Plant options as in Plant.
    gains: (kp, kd) arrays, default default_gains. Returns a TrackRun."""
    rate_hz = float(rate_hz)
    if not (np.isfinite(rate_hz) and 1.0 <= rate_hz <= 100000.0):
        raise ValueError(f"rate_hz: must be in 1..100000, got {rate_hz}")
    ref = demo_path(robot, rate_hz) if path is None else as_reference(path, rate_hz)
    if ref.q.shape[1] != robot.dof:
        raise ValueError(f"path: has {ref.q.shape[1]} joints, the robot has {robot.dof}")
    ref = _with_settle(ref, settle)
    plant_robot = mismatched(plant if plant is not None else robot, mismatch)
    if plant_robot.dof != robot.dof:
        raise ValueError(f"plant: has {plant_robot.dof} joints, the model has {robot.dof}")
    dyn = model_dynamics(robot, "auto" if backend == "auto" else
                         ("c" if backend == "c" else "twin"))
    if gains is None:
        kp, kd = default_gains(robot, ref, dyn=dyn)
    else:
        kp, kd = (np.broadcast_to(np.asarray(g, float), (robot.dof,)).copy() for g in gains)
        if not (np.all(np.isfinite(kp)) and np.all(np.isfinite(kd))):
            raise ValueError("gains: must be finite")
    n_steps = len(ref.t)
    tau_ff = (np.asarray(dyn.inverse_dynamics(ref.q, ref.qd, ref.qdd)) if feedforward
              else np.zeros_like(ref.q))
    sim = Plant(plant_robot, 1.0 / rate_hz, integrator=integrator, substeps=substeps,
                delay=delay, saturate=saturate, counts_per_rev=counts_per_rev, noise_q=noise_q,
                noise_qd=noise_qd, seed=seed, q0=ref.q[0], qd0=ref.qd[0], backend=backend)
    q = np.empty_like(ref.q)
    qd = np.empty_like(ref.q)
    tau = np.empty_like(ref.q)
    steps = range(n_steps)
    if progress:
        from tqdm import tqdm
        steps = tqdm(steps, desc="closed loop" + (" +ff" if feedforward else ""), unit="cycle",
                     leave=False)
    for k in steps:
        q[k], qd[k] = sim.state()
        qm, qdm = sim.measure()
        u = kp * (ref.q[k] - qm) + kd * (ref.qd[k] - qdm) + tau_ff[k]
        sim.step(u)
        tau[k] = sim.tau
    opts = dict(integrator=integrator, substeps=int(substeps), delay=int(delay),
                counts_per_rev=float(counts_per_rev), noise_q=float(noise_q),
                noise_qd=float(noise_qd), seed=int(seed), mismatch=float(mismatch),
                plant_backend=sim.backend)
    return TrackRun(ref.t, ref.q, q, qd, tau, tau_ff, bool(feedforward), rate_hz, kp, kd,
                    sim.counters()["saturated_steps"], opts)


def compare(robot, path=None, **options):
    """track() with and without feedforward on the same plant: (run_pd, run_ff, ratio)
    where ratio = rms_error_overall of PD alone / PD plus feedforward."""
    pd = track(robot, path, feedforward=False, **options)
    ff = track(robot, path, feedforward=True, **options)
    return pd, ff, pd.rms_error_overall / max(ff.rms_error_overall, 1e-300)
