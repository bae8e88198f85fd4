"""The identification workflow: log -> filtered rows -> base parameters -> estimate ->
physically consistent model, with validation on a held-out log."""
import math
from dataclasses import dataclass

import numpy as np

from .backend import dynamics_for
from .base import base_parameters
from .consistent import nearest_consistent
from .estimate import least_squares
from .logs import Log, prepare, read_log

MAX_COND = 1e4     # default limit on the condition number of the stacked base regressor
CHUNK = 500


def _regressor_rows(dyn, q, qd, qdd, progress, desc):
    """Regressor at many states in chunks, with a progress bar when asked."""
    n = len(q)
    parts = []
    bar = None
    if progress and n > CHUNK:
        from tqdm import tqdm
        bar = tqdm(total=n, desc=desc, unit="sample", leave=False)
    for k in range(0, n, CHUNK):
        parts.append(dyn.regressor(q[k:k + CHUNK], qd[k:k + CHUNK], qdd[k:k + CHUNK]))
        if bar is not None:
            bar.update(min(CHUNK, n - k))
    if bar is not None:
        bar.close()
    return np.concatenate(parts)


@dataclass(frozen=True)
class Rows:
    """A prepared log with its base regressor: fit rows and working-rate rows."""
    samples: object           # logs.Samples
    Wb_fit: np.ndarray        # (n_fit, dof, nb) filtered base regressor at the fit rows
    tau_fit: np.ndarray       # (n_fit, dof) filtered torque at the fit rows
    Y_work: np.ndarray        # (n, dof, P) unfiltered full regressor at the working rows


def build_rows(robot, base, samples, dyn, progress=False):
    s = samples
    Y = _regressor_rows(dyn, s.q, s.qd, s.qdd, progress, "regressor")
    Wf = s.lowpass(base.base_regressor(Y))    # same filter as the torque (parallel filtering)
    return Rows(s, Wf[s.keep], s.tau[s.keep], Y)


def _excitation_check(path, base, Wb, max_cond):
    W = Wb.reshape(-1, base.count)
    _, sv, Vt = np.linalg.svd(W, full_matrices=False)
    cond = float(sv[0] / sv[-1]) if sv[-1] > 0 else math.inf
    if cond <= max_cond:
        return cond
    labels = base.labels()
    weak = [labels[k] for k in np.argsort(-np.abs(Vt[-1]))[:3]]
    raise ValueError(f"{path}: the log does not excite the robot enough: condition number "
                     f"{cond:.3g} of the stacked base regressor (limit {max_cond:.3g}); least "
                     f"excited: {', '.join(weak)}; move every joint over more of its range "
                     "with varied speed and acceleration (e.g. an 'ffwd identify excite' "
                     "trajectory), or record longer")


@dataclass(frozen=True)
class Validation:
    """Torque prediction error on a log, per joint (N m or N)."""
    path: str
    rms: np.ndarray               # measured (unfiltered) torque - prediction, estimate
    rms_consistent: np.ndarray    # ... with the physically consistent parameters
    rms_filtered: np.ndarray      # filtered torque - prediction, estimate
    t: np.ndarray
    tau: np.ndarray               # measured torque at the working rows
    predicted: np.ndarray         # prediction from the estimate
    predicted_consistent: np.ndarray


class Identification:
    """Result of from_log: base parameters, estimates, consistent model, validation."""

    def __init__(self, robot, base, rows, fit, fit_ols, consistent, dyn, validation=None):
        self.robot = robot                      # the catalogue model the log was fitted to
        self.base = base                        # BaseParameters
        self.rows = rows
        self.fit = fit                          # the reported fit (WLS unless asked for OLS)
        self.fit_ols = fit_ols
        self.consistent = consistent            # ConsistentSet or None
        self._dyn = dyn
        self.backend = getattr(dyn, "name", "?")     # the dynamics backend used
        self.theta_prior = robot.parameter_vector()
        self.validation = validation
        self.fit_validation = self.validate_rows(rows)
        self.model = robot.with_parameters(consistent.theta) if consistent is not None else None

    # -- values
    @property
    def theta(self):
        """The estimated base parameters."""
        return self.fit.theta

    def table(self):
        """One dict per base parameter: name, expression, prior, estimate, sd,
        rel_sd (%), consistent (base value of the consistent set or None)."""
        prior = self.base.project(self.theta_prior)
        cons = None if self.consistent is None else self.base.project(self.consistent.theta)
        out = []
        for k, (lab, expr) in enumerate(zip(self.base.labels(), self.base.expressions())):
            out.append({"name": lab, "expression": expr, "prior": float(prior[k]),
                        "estimate": float(self.fit.theta[k]), "sd": float(self.fit.std[k]),
                        "rel_sd": float(self.fit.rel_std[k]),
                        "consistent": None if cons is None else float(cons[k])})
        return out

    # -- prediction
    def predict(self, q, qd, qdd, which="estimate"):
        """Joint torques at one state (dof,) or a batch (N, dof). which: "estimate" (the
        base parameters) or "consistent" (the physically consistent model)."""
        q, qd, qdd = (np.asarray(a, dtype=float) for a in (q, qd, qdd))
        single = q.ndim == 1
        q, qd, qdd = (np.atleast_2d(a) for a in (q, qd, qdd))
        for name, a in (("q", q), ("qd", qd), ("qdd", qdd)):
            if a.shape[1] != self.robot.dof or not np.all(np.isfinite(a)):
                raise ValueError(f"{name}: need finite values of shape ({self.robot.dof},) or "
                                 f"(N, {self.robot.dof}), got {a.shape}")
        Y = self._dyn.regressor(q, qd, qdd)
        tau = self._apply(Y, which)
        return tau[0] if single else tau

    def _apply(self, Y, which):
        if which == "estimate":
            return self.base.base_regressor(Y) @ self.fit.theta
        if which == "consistent":
            if self.consistent is None:
                raise ValueError("no physically consistent set was computed")
            return Y @ self.consistent.theta
        raise ValueError(f"which must be 'estimate' or 'consistent', got {which!r}")

    # -- validation
    def validate_rows(self, rows):
        s = rows.samples
        est = self._apply(rows.Y_work, "estimate")
        cons = self._apply(rows.Y_work, "consistent") if self.consistent is not None else est
        k = slice(s.keep[0], s.keep[-1] + 1)      # every working row between the trimmed ends
        rms = lambda e: np.sqrt(np.mean(e[k] ** 2, axis=0))  # noqa: E731
        return Validation(s.path, rms(s.tau_raw - est), rms(s.tau_raw - cons),
                          rms(s.tau - est), s.t, s.tau_raw, est, cons)

    def validate(self, log, cutoff=None, progress=False, torque_constants=None, max_gap=None):
        """Validation on another log (a path or a Log) with this fit's filter settings."""
        if not isinstance(log, Log):
            log = read_log(log, self.robot, torque_constants, max_gap)
        s0 = self.rows.samples
        s = prepare(log, cutoff=cutoff or s0.cutoff, order=s0.order)
        return self.validate_rows(build_rows(self.robot, self.base, s, self._dyn, progress))

    # -- output
    def write_model(self, path):
        """The identified model as a native TOML file (payload folded into the last body)."""
        if self.model is None:
            raise ValueError("no physically consistent model to write (fit with consistent=True)")
        from .tomlout import dump_toml
        dump_toml(self.model, path)

    def write_report(self, directory):
        """report.md and PNG figures in `directory`; returns the markdown path."""
        from .report import write_report
        return write_report(self, directory)


def from_log(robot, csv_path, *, holdout=None, cutoff=None, order=4, decimation=None,
             weighted=True, consistent=True, torque_constants=None, max_gap=None,
             max_cond=MAX_COND, backend=None, progress=False, reg=1e-3):
    """Identify the base parameters of `robot` from a log CSV (see docs/identify.md).

    holdout: a second log for validation; cutoff: low-pass cutoff in Hz (default from
    the data); decimation: fit-row spacing in working rows (default ~2.5x cutoff);
    weighted: WLS (else OLS); consistent: also solve for the nearest physically
    consistent parameters (the .model); torque_constants: k_t for current columns;
    max_cond: largest accepted condition number of the stacked base regressor."""
    log = read_log(csv_path, robot, torque_constants, max_gap)
    samples = prepare(log, cutoff=cutoff, order=order, decimation=decimation)
    dyn = dynamics_for(robot, backend)
    base = base_parameters(robot, backend=backend)
    need = 4 * base.count
    rows_have = len(samples.keep) * robot.dof
    if rows_have < need:
        dur = log.t[-1] - log.t[0]
        raise ValueError(f"{log.path}: log too short: {dur:.3g} s give {len(samples.keep)} "
                         f"samples x {robot.dof} joints = {rows_have} equations after "
                         f"filtering at {samples.cutoff:.3g} Hz, need {need} "
                         f"(4 x {base.count} base parameters); record a longer log")
    rows = build_rows(robot, base, samples, dyn, progress)
    _excitation_check(log.path, base, rows.Wb_fit, max_cond)
    rho = samples.noise_correlation()
    fit_ols = least_squares(rows.Wb_fit, rows.tau_fit, weighted=False, rho=rho)
    fit = least_squares(rows.Wb_fit, rows.tau_fit, weighted=True, rho=rho) if weighted \
        else fit_ols
    cons = None
    if consistent:
        cons = nearest_consistent(base, fit.theta, fit.cov, robot.parameter_vector(),
                                  robot.dof, reg=reg)
    ident = Identification(robot, base, rows, fit, fit_ols, cons, dyn)
    if holdout is not None:
        ident.validation = ident.validate(holdout, progress=progress,
                                          torque_constants=torque_constants, max_gap=max_gap)
    return ident
