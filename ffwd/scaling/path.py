"""A geometric path q(s) through joint space, parameterised by its nominal time s.

Speed scaling changes how fast the robot moves along the path, never where: the
joint command is q(s(t)) for a progress s(t) that the solvers choose. s runs over
[0, duration] in seconds of the nominal timing (override 1 reproduces it).

    path = Path.from_waypoints(times, q)           # C2 cubic (default) or quintic
    path = Path.from_csv("move.csv", robot)          # t, q_<joint> columns
    path.q(s), path.dq(s), path.ddq(s), path.dddq(s) # (len(s), dof) or (dof,)
"""
from __future__ import annotations

import numpy as np
from scipy.interpolate import CubicSpline, make_interp_spline

__all__ = ["Path"]


def _real_array(name, value):
    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name}: expected real numbers, got {value!r:.60}") from None


def _waypoint_arrays(times, q):
    t = _real_array("times", times)
    q = _real_array("q", q)
    if t.ndim != 1:
        raise ValueError(f"times: expected a 1-D array, got shape {t.shape}")
    if q.ndim == 1:
        q = q[:, None]
    if q.ndim != 2 or q.shape[0] != t.shape[0]:
        raise ValueError(f"q: expected shape ({t.shape[0]}, dof) to match times, got {q.shape}")
    if t.shape[0] < 2:
        raise ValueError(f"times: a path needs at least 2 waypoints, got {t.shape[0]}")
    for name, a in (("times", t), ("q", q)):
        bad = np.argwhere(~np.isfinite(a))
        if len(bad):
            idx = tuple(int(i) for i in bad[0])
            raise ValueError(f"{name}{list(idx)}: value {a[idx]} is not finite")
    steps = np.diff(t)
    if np.any(steps <= 0):
        i = int(np.argmax(steps <= 0))
        raise ValueError(f"times[{i + 1}] = {t[i + 1]} does not increase (times[{i}] = {t[i]})")
    return t, q


class Path:
    """A joint-space path q(s) with s in [0, duration] (nominal time, seconds).

    Built by `from_waypoints` or `from_csv`; `kind` says how it interpolates."""

    def __init__(self, spline, s0, s1, joint_names=None, kind="cubic"):
        self._spline = spline
        self._d = [spline.derivative(k) for k in (1, 2, 3)]
        self._s0 = float(s0)
        self.duration = float(s1) - float(s0)
        self.dof = int(np.asarray(spline(s0)).shape[-1])
        self.joint_names = tuple(joint_names) if joint_names is not None else tuple(
            f"j{i + 1}" for i in range(self.dof))
        self.kind = kind

    # ---- construction
    @classmethod
    def from_waypoints(cls, times, q, kind="cubic", joint_names=None):
        """Spline through joint waypoints q[i] reached at nominal times[i], at rest at
        both ends. kind "cubic": C2 cubic spline with zero end velocities;
        "quintic": C4 quintic spline with zero end velocities and accelerations."""
        t, q = _waypoint_arrays(times, q)
        if kind == "cubic":
            spline = CubicSpline(t, q, axis=0, bc_type="clamped")
        elif kind == "quintic":
            if t.shape[0] < 2:
                raise ValueError("quintic path needs at least 2 waypoints")
            zero = [(1, np.zeros(q.shape[1])), (2, np.zeros(q.shape[1]))]
            spline = make_interp_spline(t, q, k=5, bc_type=(zero, zero), axis=0)
        else:
            raise ValueError(f"kind: expected 'cubic' or 'quintic', got {kind!r}")
        return cls(spline, t[0], t[-1], joint_names, kind)

    @classmethod
    def from_csv(cls, path, robot, kind="cubic"):
        """Path through the samples of a trajectory CSV (`t` and one `q_<joint>` column
        per joint of `robot`), timed by its `t` column, at rest at both ends."""
        from ..trajio import read_trajectory
        traj = read_trajectory(path, robot.joint_names)
        try:
            return cls.from_waypoints(traj.t, traj.q, kind=kind, joint_names=robot.joint_names)
        except ValueError as exc:
            raise ValueError(f"{path}: {exc}") from None

    # ---- evaluation
    def _eval(self, fn, s):
        s = np.asarray(s, dtype=float)
        return np.asarray(fn(s + self._s0), dtype=float)

    def q(self, s):
        """Joint positions at nominal time s (scalar -> (dof,), array -> (N, dof))."""
        return self._eval(self._spline, s)

    def dq(self, s):
        """q' = dq/ds."""
        return self._eval(self._d[0], s)

    def ddq(self, s):
        """q'' = d2q/ds2."""
        return self._eval(self._d[1], s)

    def dddq(self, s):
        """q''' = d3q/ds3."""
        return self._eval(self._d[2], s)

    @property
    def range(self):
        """(0, duration): the interval of s."""
        return (0.0, self.duration)

    def grid(self, n=1000):
        """n + 1 equally spaced values of s from 0 to duration (n segments)."""
        if isinstance(n, bool) or not isinstance(n, (int, np.integer)):
            raise ValueError(f"grid: expected a whole number of segments, got {n!r:.60}")
        n = int(n)
        if n < 2:
            raise ValueError(f"grid: needs at least 2 segments, got {n}")
        return np.linspace(0.0, self.duration, n + 1)

    def samples(self, ds):
        """Equally spaced path samples from 0 to duration at a spacing of at most ds
        (shrunk so the last sample falls on the end): s, q, q', q'', q''' arrays."""
        if not (np.isfinite(ds) and ds > 0):
            raise ValueError(f"ds: expected a positive spacing, got {ds}")
        n = max(1, int(np.ceil(self.duration / ds - 1e-9)))
        s = np.linspace(0.0, self.duration, n + 1)
        return s, self.q(s), self.dq(s), self.ddq(s), self.dddq(s)

    def __repr__(self):
        return f"Path({self.kind}, {self.dof} joints, duration {self.duration:g} s)"
