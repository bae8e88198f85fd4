"""`ffwd.scaling.Governor`: the online speed-override governor on a whole path.

    gov = Governor(robot, path, horizon=64, dt=0.001)
    run = gov.run(1.0)                         # constant command
    run = gov.run(lambda t: 1.0 if t < 0.5 else 0.2)
    run = gov.run(np.array([...]))             # one command per cycle (the last one holds)
    run.t, run.q, run.qd, run.qdd, run.tau, run.override, run.command, run.flags

backend "c" runs csrc/governor.c through the extension ffwd._governor; "twin" runs
ffwd/twin/governor.py. Both are fed the path samples at spacing ds as the window
frees up, and are stepped once per cycle until the end of the path is reached at rest.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import ModelError
from ..twin import governor as twin_gov
from .constraints import InfeasiblePath, required_limits

__all__ = ["Governor", "GovernorRun", "MAX_HORIZON"]

MAX_HORIZON = 256          # FFWD_GOV_MAX_HORIZON of the default build
FLAG_NAMES = {1: "at_rest", 2: "done", 4: "capped", 8: "jerk", 16: "conflict", 32: "starved"}
_LIMIT_NAMES = {1: "position", 2: "velocity", 4: "acceleration", 8: "jerk", 16: "torque"}
_STATUS = {1: "FFWD_E_ARG", 2: "FFWD_E_NONFINITE", 3: "FFWD_E_MODEL", 4: "FFWD_E_SINGULAR",
           5: "FFWD_E_LIMIT", 6: "FFWD_E_INFEASIBLE"}


@dataclass
class GovernorRun:
    """The governor's command, one row per control cycle."""
    t: np.ndarray
    s: np.ndarray
    q: np.ndarray
    qd: np.ndarray
    qdd: np.ndarray
    tau: np.ndarray
    override: np.ndarray      # applied
    command: np.ndarray       # commanded
    rate: np.ndarray
    rate_rate: np.ndarray
    safe_override: np.ndarray
    flags: np.ndarray
    done: bool                # the end of the path was reached at rest
    window_end: np.ndarray = field(default=None)   # s of the window's last sample per cycle

    @property
    def duration(self):
        return float(self.t[-1]) if len(self.t) else 0.0

    def flag_counts(self):
        return {name: int(np.count_nonzero(self.flags & bit)) for bit, name in FLAG_NAMES.items()}


def _c_available():
    try:
        from .. import _governor  # noqa: F401
    except ImportError:
        return False
    return True


class Governor:
    """Online speed-override governor for `path` on `robot` (see the module doc).

    horizon: window length in samples (2 .. MAX_HORIZON); dt: control period [s];
    ds: sample spacing in nominal time (default dt); override_max: largest override;
    rate_max [1/s], rate_rate_max [1/s^2]: bounds on the override's rate and its rate;
    margin: fraction of every limit held back (covers the interpolation between samples);
    backend: "c", "twin" or None (C when the extension is built); dynamics: for the
    twin, an ffwd.Dynamics whose inverse dynamics and gravity it uses (default: the twin's)."""

    def __init__(self, robot, path, horizon=64, dt=0.001, ds=None, override_max=1.0,
                 rate_max=20.0, rate_rate_max=1000.0, margin=0.02, backend=None, dynamics=None):
        for name, v in (("dt", dt), ("override_max", override_max), ("rate_max", rate_max),
                        ("rate_rate_max", rate_rate_max)):
            if not (isinstance(v, (int, float, np.floating)) and math.isfinite(v) and v > 0):
                raise ValueError(f"{name}: expected a positive number, got {v!r}")
        if not (isinstance(horizon, (int, np.integer)) and 2 <= horizon <= MAX_HORIZON):
            raise ValueError(f"horizon: expected an integer from 2 to {MAX_HORIZON} "
                             f"(FFWD_GOV_MAX_HORIZON), got {horizon!r}")
        if not (isinstance(margin, (int, float, np.floating)) and 0 <= margin < 0.5):
            raise ValueError(f"margin: expected a fraction in [0, 0.5), got {margin!r}")
        ds = dt if ds is None else ds
        if not (isinstance(ds, (int, float, np.floating)) and math.isfinite(ds) and ds > 0):
            raise ValueError(f"ds: expected a positive number, got {ds!r}")
        if path.dof != robot.dof:
            raise ValueError(f"path has {path.dof} joints, robot {robot.name!r} has {robot.dof}")
        required_limits(robot)                     # ModelError naming the joint
        self.robot, self.path = robot, path
        self.samples = path.samples(ds)
        s = self.samples[0]
        self.ds = float(s[1] - s[0])
        self.dt, self.horizon = float(dt), int(horizon)
        self.override_max, self.rate_max, self.rate_rate_max = (
            float(override_max), float(rate_max), float(rate_rate_max))
        self.margin = float(margin)
        if backend is None:
            backend = "c" if _c_available() else "twin"
        if backend not in ("c", "twin"):
            raise ValueError(f"backend: expected 'c' or 'twin', got {backend!r}")
        self.backend = backend
        self._dynamics = dynamics

    # ---- the engines
    def _config(self):
        return dict(dt=self.dt, ds=self.ds, horizon=self.horizon, override_max=self.override_max,
                    rate_max=self.rate_max, rate_rate_max=self.rate_rate_max, margin=self.margin)

    def _new_engine(self):
        if self.backend == "twin":
            return _TwinEngine(self.robot, self._config(), self._dynamics)
        return _CEngine(self.robot, self._config())

    def _infeasible(self, fault):
        index, joint, limit = fault
        s = self.samples[0][index]
        jname = self.robot.joint_names[joint] if joint is not None and joint >= 0 else None
        return InfeasiblePath("the limit cannot be met even at rest" if limit != 1
                              else f"q = {self.samples[1][index][joint]:.6g} outside the limits",
                              index=index, s=float(s), joint=jname,
                              limit=_LIMIT_NAMES.get(limit, "override rate"))

    def _command(self, override):
        if callable(override):
            return lambda i, t: float(override(t))
        try:
            arr = np.atleast_1d(np.asarray(override, dtype=float))
        except (TypeError, ValueError):
            raise ValueError(f"override: expected a number, a 1-D array or a function of "
                             f"time, got {override!r:.60}") from None
        if arr.ndim != 1 or len(arr) == 0:
            raise ValueError("override: expected a number, a 1-D array or a function of time")
        if not np.all(np.isfinite(arr)):
            raise ValueError("override: contains a non-finite value")
        return lambda i, t: float(arr[min(i, len(arr) - 1)])

    def run(self, override=1.0, max_time=None, progress=False):
        """Step the governor from rest at the start until the end is reached at rest
        (or max_time, default 60 s + 20 x the nominal duration, has passed)."""
        cmd_of = self._command(override)
        s, Q, DQ, DDQ, DDDQ = self.samples
        N = len(s)
        eng = self._new_engine()
        max_time = 60.0 + 20.0 * self.path.duration if max_time is None else float(max_time)
        max_cycles = int(math.ceil(max_time / self.dt)) + 1
        rows = {k: [] for k in ("s", "q", "qd", "qdd", "tau", "override", "command", "rate",
                                "rate_rate", "safe", "flags", "wend")}
        if self.backend == "c" and not progress:
            return self._run_c(eng, cmd_of, max_cycles)
        k, done = 0, False
        bar = None
        if progress:
            from tqdm import tqdm
            bar = tqdm(total=N, unit="sample", desc="govern", leave=False)
        for i in range(max_cycles):
            while k < N and eng.room() > 0:
                n_pushed, fault = eng.push_from(Q, DQ, DDQ, DDDQ, k)
                k += n_pushed
                if fault is not None:
                    raise self._infeasible(fault)
                if k == N:
                    eng.finish()
            c = cmd_of(i, i * self.dt)
            if not math.isfinite(c):
                raise ValueError(f"override: non-finite command at t = {i * self.dt:g} s")
            out = eng.step(c)
            rows["s"].append(out["s"])
            for key in ("q", "qd", "qdd", "tau"):
                rows[key].append(out[key])
            rows["override"].append(out["override"])
            rows["command"].append(c)
            rows["rate"].append(out["rate"])
            rows["rate_rate"].append(out["rate_rate"])
            rows["safe"].append(out["safe_override"])
            rows["flags"].append(out["flags"])
            rows["wend"].append(eng.window_end(self.ds))
            if bar is not None:
                bar.n = min(int(out["s"] / self.ds), N)
                bar.refresh()
            if out["flags"] & twin_gov.DONE:
                done = True
                break
        if bar is not None:
            bar.close()
        n = len(rows["s"])
        return GovernorRun(
            t=np.arange(n) * self.dt, s=np.array(rows["s"]), q=np.array(rows["q"]),
            qd=np.array(rows["qd"]), qdd=np.array(rows["qdd"]), tau=np.array(rows["tau"]),
            override=np.array(rows["override"]), command=np.array(rows["command"]),
            rate=np.array(rows["rate"]), rate_rate=np.array(rows["rate_rate"]),
            safe_override=np.array(rows["safe"]), flags=np.array(rows["flags"], dtype=np.uint32),
            done=done, window_end=np.array(rows["wend"]))


    def _run_c(self, eng, cmd_of, max_cycles):
        """The whole run inside the extension (commands sampled at the cycle times)."""
        s, Q, DQ, DDQ, DDDQ = self.samples
        cmds = np.array([cmd_of(i, i * self.dt) for i in range(max_cycles)], dtype=float)
        bad = np.flatnonzero(~np.isfinite(cmds))
        if len(bad):
            raise ValueError(f"override: non-finite command at t = {bad[0] * self.dt:g} s")
        st, fault, d = eng.g.run(Q, DQ, DDQ, DDDQ, cmds)
        if st == 6:
            raise self._infeasible(fault)
        if st != 0:
            raise ValueError(f"governor: {eng.m.status_str(st)}")
        sc, flags = d["scalars"], d["flags"]
        n = len(flags)
        return GovernorRun(
            t=np.arange(n) * self.dt, s=sc[:, 0].copy(), q=d["q"], qd=d["qd"], qdd=d["qdd"],
            tau=d["tau"], override=sc[:, 1].copy(), command=cmds[:n].copy(), rate=sc[:, 2].copy(),
            rate_rate=sc[:, 3].copy(), safe_override=sc[:, 4].copy(), flags=flags.astype(np.uint32),
            done=bool(n and flags[-1] & twin_gov.DONE), window_end=sc[:, 5].copy())


class _TwinEngine:
    def __init__(self, robot, cfg, dynamics=None):
        self.g = twin_gov.GovernorTwin(robot, **cfg, dynamics=dynamics)

    def room(self):
        return self.g.room()

    def push_from(self, Q, DQ, DDQ, DDDQ, start):
        k = start
        try:
            while k < len(Q) and self.g.room() > 0:
                self.g.push(Q[k], DQ[k], DDQ[k], DDDQ[k])
                k += 1
        except twin_gov.GovernorError as exc:
            if exc.status == "FFWD_E_INFEASIBLE":
                return k - start, exc.fault
            raise ValueError(str(exc)) from None
        return k - start, None

    def finish(self):
        self.g.finish()

    def step(self, cmd):
        return self.g.step(cmd)

    def window_end(self, ds):
        return (self.g.base + len(self.g.window) - 1) * ds


class _CEngine:
    def __init__(self, robot, cfg):
        from .. import _governor
        from ..pack import model_fields
        f = model_fields(robot)
        if f.dof > _governor.MAX_DOF:
            raise ValueError(f"robot: {f.dof} joints, the core was built with FFWD_MAX_DOF "
                             f"{_governor.MAX_DOF}")
        if cfg["horizon"] > _governor.MAX_HORIZON:
            raise ValueError(f"horizon: {cfg['horizon']} is over FFWD_GOV_MAX_HORIZON "
                             f"{_governor.MAX_HORIZON} of this build")
        self.m = _governor
        self.g = _governor.Governor(**f.as_dict(), **cfg)
        if self.g.init_status != 0:
            why = _governor.status_str(self.g.init_status)
            if self.g.init_status == 5:
                j = self.g.fault_joint
                raise ModelError(f"the governor needs this limit ({why})", joint=robot.joint_names[j],
                                 field=f"limits.{_LIMIT_NAMES.get(self.g.fault_limit, '?')}")
            raise ValueError(f"governor: {why}")
        self.pushed_rows = 0
        self.finished = False

    def room(self):
        return self.g.room()

    def push_from(self, Q, DQ, DDQ, DDDQ, start):
        n, st = self.g.push_from(Q, DQ, DDQ, DDDQ, start)
        self.pushed_rows += n
        if st == 6:
            return n, (self.g.fault_index, self.g.fault_joint, self.g.fault_limit)
        if st != 0:
            raise ValueError(f"governor push at sample {start + n}: {self.m.status_str(st)}")
        return n, None

    def finish(self):
        self.g.finish()

    def step(self, cmd):
        st, q, qd, qdd, tau, s, ov, rate, rr, safe, flags = self.g.step(cmd)
        if st != 0:
            raise ValueError(f"governor step: {self.m.status_str(st)}")
        return dict(q=q, qd=qd, qdd=qdd, tau=tau, s=s, override=ov, rate=rate, rate_rate=rr,
                    safe_override=safe, flags=flags)

    def window_end(self, ds):
        # samples pushed so far minus one: the window's last sample
        return (self.pushed_rows - 1) * ds
