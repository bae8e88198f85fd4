"""Measurement logs: CSV import, checks, zero-phase filtering, differentiation, decimation.

A log is a CSV file with a header row and one row per sample:
    t            time in s, strictly increasing, evenly sampled (small jitter is resampled)
    q_<joint>    joint position (rad or m), one column per joint of the model
    qd_<joint>   optional joint velocity; if absent it is differentiated from q
    tau_<joint>  joint torque (N m or N) ...
    i_<joint>    ... or motor current (A): tau = k_t * gear_ratio * i, with the motor
                 torque constant k_t (N m/A) given by the caller and the gear ratio from
                 the model (an ideal gearbox; its losses show up as friction).
Errors are ValueError with one located line: file, column, line number, time.
"""
import os
from dataclasses import dataclass

import numpy as np
from scipy.signal import butter, filtfilt

from ..trajio import read_csv_rows

MIN_SAMPLES = 50          # raw rows a log needs before anything else is tried
JITTER_TOL = 0.01         # relative step jitter tolerated without resampling


@dataclass(frozen=True)
class Log:
    """A checked log at its recorded rate (evenly resampled if it jittered)."""
    path: str
    joint_names: tuple
    t: np.ndarray             # (N,)
    q: np.ndarray             # (N, dof)
    qd: np.ndarray | None     # (N, dof) or None
    tau: np.ndarray           # (N, dof) joint torque
    resampled: bool

    @property
    def rate(self):
        return (len(self.t) - 1) / (self.t[-1] - self.t[0])


def _kt_for(torque_constants, joint, path, column):
    if torque_constants is None:
        raise ValueError(f"{path}: column '{column}' is motor current: give the motor torque "
                         f"constant of joint {joint!r} (N m/A)")
    if isinstance(torque_constants, dict):
        if joint not in torque_constants:
            raise ValueError(f"{path}: column '{column}' is motor current: no torque constant "
                             f"given for joint {joint!r}")
        kt = torque_constants[joint]
    else:
        kt = torque_constants
    kt = float(kt)
    if not (np.isfinite(kt) and kt > 0):
        raise ValueError(f"{path}: torque constant of joint {joint!r} must be > 0, got {kt}")
    return kt


def read_log(path, robot, torque_constants=None, max_gap=None):
    """Read and check a log for `robot` (see the module doc).

    torque_constants: k_t in N m/A for logs with current columns (one number for all
    joints or {joint: k_t}). max_gap: the longest time step accepted, s (default 2.5x
    the median step); shorter irregular steps are evened out by linear interpolation."""
    path = os.fspath(path)
    header, lines = read_csv_rows(path)
    names = robot.joint_names
    col = {h: k for k, h in enumerate(header)}
    if "t" not in col:
        raise ValueError(f"{path}: missing column 't' (time in s)")
    missing = [f"q_{n}" for n in names if f"q_{n}" not in col]
    for n in names:
        if f"tau_{n}" not in col and f"i_{n}" not in col:
            missing.append(f"tau_{n}")
    if missing:
        raise ValueError(f"{path}: missing column '{missing[0]}'"
                         + (f" (and {len(missing) - 1} more)" if len(missing) > 1 else "")
                         + f"; the log needs t, q_<joint> and tau_<joint> (or i_<joint>) "
                         f"for joints {', '.join(names)}")
    have_qd = [f"qd_{n}" in col for n in names]
    if any(have_qd) and not all(have_qd):
        n = names[have_qd.index(False)]
        raise ValueError(f"{path}: missing column 'qd_{n}' (give qd for every joint or none)")
    if len(lines) < MIN_SAMPLES:
        raise ValueError(f"{path}: only {len(lines)} samples; a log needs at least "
                         f"{MIN_SAMPLES} (record a longer excitation run)")
    used = ["t"] + [f"q_{n}" for n in names]
    used += [f"qd_{n}" for n in names] if all(have_qd) else []
    used += [f"tau_{n}" if f"tau_{n}" in col else f"i_{n}" for n in names]
    data = np.empty((len(lines), len(used)))
    for r, (lineno, row) in enumerate(lines):
        if len(row) != len(header):
            raise ValueError(f"{path}: line {lineno}: {len(row)} fields, the header has "
                             f"{len(header)}")
        for c, name in enumerate(used):
            cell = row[col[name]].strip()
            try:
                v = float(cell)
            except ValueError:
                v = None
            if v is None or not np.isfinite(v):
                at = "" if name == "t" else _time_of(row, col)
                what = "empty" if cell == "" else ("not a number" if v is None or np.isnan(v)
                                                   else "not finite") + f" ({cell!r})"
                raise ValueError(f"{path}: line {lineno}{at}, column '{name}': {what}")
            data[r, c] = v
    t = data[:, 0]
    _check_time(path, t, [n for n, _ in lines], max_gap)
    dof = len(names)
    q = data[:, 1:1 + dof]
    qd = data[:, 1 + dof:1 + 2 * dof] if all(have_qd) else None
    raw = data[:, -dof:]
    tau = np.empty_like(raw)
    for k, (n, j) in enumerate(zip(names, robot.joints)):
        if f"tau_{n}" in col:
            tau[:, k] = raw[:, k]
        else:
            tau[:, k] = raw[:, k] * _kt_for(torque_constants, n, path, f"i_{n}") \
                * j.drive.gear_ratio
    steps = np.diff(t)
    resampled = bool(np.max(np.abs(steps - np.median(steps))) > JITTER_TOL * np.median(steps))
    if resampled:
        t, (q, qd, tau) = _even(t, (q, qd, tau))
    return Log(path, tuple(names), t, q, qd, tau, resampled)


def _time_of(row, col):
    try:
        return f" (t = {float(row[col['t']]):.6g} s)"
    except ValueError:
        return ""


def _check_time(path, t, linenos, max_gap):
    steps = np.diff(t)
    bad = np.flatnonzero(steps == 0)
    if len(bad):
        k = bad[0] + 1
        raise ValueError(f"{path}: line {linenos[k]}, column 't': time stamp {t[k]:.9g} s "
                         f"repeats line {linenos[k - 1]} (duplicated sample)")
    bad = np.flatnonzero(steps < 0)
    if len(bad):
        k = bad[0] + 1
        raise ValueError(f"{path}: line {linenos[k]}, column 't': time {t[k]:.9g} s goes "
                         f"backwards (line {linenos[k - 1]} has {t[k - 1]:.9g} s); time stamps "
                         "must increase")
    med = float(np.median(steps))
    limit = 2.5 * med if max_gap is None else float(max_gap)
    bad = np.flatnonzero(steps > limit)
    if len(bad):
        k = bad[0] + 1
        raise ValueError(f"{path}: line {linenos[k]}, column 't': gap of {steps[k - 1]:.6g} s "
                         f"between {t[k - 1]:.9g} s and {t[k]:.9g} s (median step {med:.6g} s, "
                         f"limit {limit:.6g} s); split the log there or allow a longer gap")


def _even(t, arrays):
    """Linear interpolation onto an even grid with the median step."""
    step = float(np.median(np.diff(t)))
    n = int(np.floor((t[-1] - t[0]) / step + 1e-9)) + 1
    te = t[0] + step * np.arange(n)
    out = []
    for a in arrays:
        out.append(None if a is None else
                   np.column_stack([np.interp(te, t, a[:, k]) for k in range(a.shape[1])]))
    return te, out


@dataclass(frozen=True)
class Samples:
    """A filtered log at a working rate of about 20x the cutoff (the full rate if lower).

    The regressor is nonlinear in the states (Coulomb friction above all), so it is
    computed at these rows from the filtered states and then low-passed with the same
    filter as the torque (`lowpass`) before the rows `keep` are picked for the fit."""
    path: str
    t: np.ndarray             # (n,) working-rate times
    q: np.ndarray             # (n, dof) filtered
    qd: np.ndarray
    qdd: np.ndarray
    tau: np.ndarray           # filtered torque
    tau_raw: np.ndarray       # measured torque at the same rows
    rate: float               # Hz, recorded rate
    work_rate: float          # Hz, rate of these rows
    cutoff: float             # Hz, low-pass cutoff used
    order: int
    decimation: int           # fit rows: every `decimation`-th working row
    keep: np.ndarray          # working-row indices used for the fit (ends trimmed)

    def noise_correlation(self, tol=1e-4, max_lags=200):
        """Correlation of white measurement noise after the filter, at lags of 0, 1, 2 ...
        fit rows: rho[m] = R(m D) / R(0), with R the autocorrelation of the filter's
        zero-phase impulse response and D the fit-row spacing in recorded samples."""
        D = int(round(self.rate / self.work_rate)) * self.decimation
        n = int(40 * self.rate / self.cutoff) + 2 * D * 4 + 1
        delta = np.zeros(n)
        delta[n // 2] = 1.0
        b, a = butter(self.order, self.cutoff / (0.5 * self.rate))
        g = filtfilt(b, a, delta, padlen=0)
        R = np.correlate(g, g, mode="full")[n - 1:]
        rho = [1.0]
        for m in range(1, max_lags + 1):
            if m * D >= n:
                break
            r = R[m * D] / R[0]
            if abs(r) < tol and m > 1:
                break
            rho.append(float(r))
        return np.array(rho)

    def lowpass(self, x):
        """The zero-phase low-pass at the working rate, along axis 0."""
        return _lowpass(x, self.cutoff, self.work_rate, self.order)


def _lowpass(x, fc, rate, order):
    b, a = butter(order, fc / (0.5 * rate))
    padlen = min(len(x) - 1, int(3 * rate / fc))
    return filtfilt(b, a, x, axis=0, padlen=padlen)


def choose_cutoff(q, rate, factor=5.0, power=0.999):
    """Low-pass cutoff from the data: `factor` times the frequency below which `power`
    of each joint's position signal power lies (mean removed, Hann window against
    leakage), the largest over the joints; kept within [0.02, 0.8] x Nyquist."""
    n = len(q)
    x = np.asarray(q, dtype=float).reshape(n, -1)
    x = (x - x.mean(axis=0)) * np.hanning(n)[:, None]
    P = np.abs(np.fft.rfft(x, axis=0)) ** 2
    f = np.fft.rfftfreq(n, 1.0 / rate)
    fsig = 0.0
    for k in range(P.shape[1]):
        total = P[1:, k].sum()
        if total <= 0:
            continue
        c = np.cumsum(P[1:, k]) / total
        fsig = max(fsig, f[1:][np.searchsorted(c, power)])
    nyq = 0.5 * rate
    return float(np.clip(factor * fsig, 0.02 * nyq, 0.8 * nyq))


def prepare(log, cutoff=None, order=4, decimation=None):
    """Zero-phase low-pass filter (Butterworth of `order`, run forward and backward with
    scipy.signal.filtfilt) of q, qd and tau with the same filter; qd and qdd by central
    differences of the filtered signals; rows thinned to a working rate of about 20x
    the cutoff; the fit rows `keep` with the ends trimmed by half a cutoff period and
    decimated to about 2.5x the cutoff (`decimation` working rows apart)."""
    rate = log.rate
    nyq = 0.5 * rate
    fc = choose_cutoff(log.q, rate) if cutoff is None else float(cutoff)
    if not 0 < fc < nyq:
        raise ValueError(f"{log.path}: cutoff {fc:g} Hz must be between 0 and the Nyquist "
                         f"frequency {nyq:g} Hz of the log")
    dt = 1.0 / rate
    q = _lowpass(log.q, fc, rate, order)
    qd = np.gradient(q, dt, axis=0) if log.qd is None else _lowpass(log.qd, fc, rate, order)
    qdd = np.gradient(qd, dt, axis=0)
    tau = _lowpass(log.tau, fc, rate, order)
    thin = max(1, int(rate / (20.0 * fc)))
    rows = slice(None, None, thin)
    work_rate = rate / thin
    n = len(log.t[rows])
    if decimation is None:
        decimation = max(1, int(work_rate / (2.5 * fc)))
    decimation = int(decimation)
    if decimation < 1:
        raise ValueError(f"decimation must be >= 1, got {decimation}")
    trim = min(int(0.5 * work_rate / fc), n // 10)
    keep = np.arange(trim, n - trim)[::decimation]
    return Samples(log.path, log.t[rows], q[rows], qd[rows], qdd[rows], tau[rows],
                   log.tau[rows], rate, work_rate, fc, int(order), decimation, keep)
