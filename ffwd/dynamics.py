"""`ffwd.Dynamics`: the dynamics of one robot through the C core, the twin or any libffwd.

    dyn = ffwd.Dynamics(robot)                      # C core through the pybind11 extension
    dyn = ffwd.Dynamics(robot, backend="twin")      # the numpy reference (ffwd.twin)
    dyn = ffwd.Dynamics(robot, backend="native")    # the package's libffwd.so through cffi
    dyn = ffwd.Dynamics(robot, backend="/path/to/libffwd.so")   # any libffwd through cffi

Every method takes one sample (arrays of shape (n,)) or a batch (shape (N, n)) and
returns the matching shape. Wrong shapes, wrong DOF, non-numeric values, NaN and Inf
raise ValueError naming the argument and the problem.
"""
from __future__ import annotations

import os
from typing import NamedTuple

import numpy as np

from .pack import model_fields, payload_entries

__all__ = ["Dynamics", "TorqueParts"]


class TorqueParts(NamedTuple):
    """The four parts of the inverse dynamics torque; they sum to it."""
    inertial: np.ndarray   # M(q) qdd, armature included
    velocity: np.ndarray   # C(q, qd) qd
    gravity: np.ndarray    # g(q)
    friction: np.ndarray   # viscous and Coulomb friction at qd


_F64 = np.dtype(np.float64)


def _as_state(name, value, n):
    """`value` as a float64 array of shape (n,) or (N, n); ValueError naming `name`.
    A float64 ndarray passes unchanged (the cores copy a non-contiguous one)."""
    if type(value) is np.ndarray and value.dtype is _F64:
        a = value
    else:
        a = np.asarray(value)
        if a.dtype.kind not in "iuf":
            raise ValueError(f"{name}: expected real numbers, got dtype {a.dtype}")
        a = np.asarray(a, dtype=np.float64)
    shape = a.shape
    if not (len(shape) == 1 or len(shape) == 2) or shape[-1] != n:
        raise ValueError(f"{name}: expected shape ({n},) or (N, {n}), got {shape}")
    return a


def _q_max():
    """The C core's bound on |q| (FFWD_Q_MAX_ in csrc/spatial.h; beyond it sin/cos lose
    accuracy and the core returns FFWD_E_ARG), as the extension exports it. Without the
    extension: the double-precision build's 2^20."""
    global _Q_MAX
    if _Q_MAX is None:
        try:
            from ._core import Q_MAX as q_max
        except ImportError:
            q_max = 2.0 ** 20
        _Q_MAX = float(q_max)
    return _Q_MAX


_Q_MAX = None


def _nonfinite_message(names, arrays):
    """'q[3, 2] is nan' for the first non-finite entry (or joint position out of the
    core's range), or None. (The extension ffwd._core words it the same way itself.)"""
    q_max = _q_max()
    for name, a in zip(names, arrays):
        bad = ~np.isfinite(a)
        if name == "q":
            bad |= np.abs(np.nan_to_num(a)) >= q_max
        if bad.any():
            idx = tuple(int(i) for i in np.argwhere(bad)[0])
            where = ", ".join(str(i) for i in idx)
            if np.isfinite(a[idx]):
                return f"{name}[{where}] = {a[idx]:g} is out of range (|q| < {q_max:g})"
            return f"{name}[{where}] is {a[idx]}"
    return None


class _TwinCore:
    """The twin behind the same interface as the compiled cores (loops over batches)."""

    def __init__(self, robot):
        from . import twin
        self._twin = twin
        self.robot = robot
        self.dof = robot.dof

    def _map(self, fn, arrays, parts=1):
        if arrays[0].ndim == 1:
            out = fn(self.robot, *arrays)
            if parts == 1:
                return np.asarray(out, dtype=float)
            return tuple(np.asarray(o, dtype=float) for o in out)
        rows = [fn(self.robot, *xs) for xs in zip(*arrays)]
        if not rows:   # empty batch: the shape of one result, with 0 rows
            one = fn(self.robot, *(np.zeros(self.dof) for _ in arrays))
            if parts == 1:
                return np.zeros((0,) + np.shape(one))
            return tuple(np.zeros((0,) + np.shape(o)) for o in one)
        if parts == 1:
            return np.array(rows, dtype=float)
        return tuple(np.array([r[k] for r in rows], dtype=float) for k in range(parts))

    def inverse_dynamics(self, q, qd, qdd):
        return self._map(self._twin.inverse_dynamics, (q, qd, qdd))

    def gravity(self, q):
        return self._map(self._twin.gravity_torque, (q,))

    def torque_parts(self, q, qd, qdd):
        return self._map(self._twin.torque_parts, (q, qd, qdd), parts=4)

    def mass_matrix(self, q):
        return self._map(self._twin.mass_matrix, (q,))

    def forward_dynamics(self, q, qd, tau):
        return self._map(self._twin.forward_dynamics, (q, qd, tau))

    def tool_pose(self, q):
        return self._map(self._twin.tool_pose, (q,))

    def tool_jacobian(self, q):
        return self._map(self._twin.tool_jacobian, (q,))

    def regressor(self, q, qd, qdd):
        return self._map(self._twin.regressor, (q, qd, qdd))

    def set_payload(self, mass, com, inertia):
        pass   # Dynamics replaces the robot (and so this core) instead


_SIGNATURES = {   # the computations and the names of their arguments
    "inverse_dynamics": ("q", "qd", "qdd"), "gravity": ("q",), "torque_parts": ("q", "qd", "qdd"),
    "mass_matrix": ("q",), "forward_dynamics": ("q", "qd", "tau"), "tool_pose": ("q",),
    "tool_jacobian": ("q",), "regressor": ("q", "qd", "qdd"),
}


class _CheckedFront:
    """The argument checks of ffwd.Dynamics made in Python, for the cores that do not make
    them themselves: the twin (checked before computing) and the cffi NativeModel
    (whose status codes are turned into the located message). The extension ffwd._core
    makes the same checks in C++ and is called directly.

    Each computation is an attribute. With a core that has a one-sample entry
    (NativeModel.single), that entry is the attribute: it computes a float64 sample of
    shape (n,) at once and hands anything else (and a refused sample) to the checks."""

    def __init__(self, core, dof, check_first):
        self._core = core
        self._n = dof
        self._check_first = check_first
        single = getattr(core, "single", None)
        for fn, names in _SIGNATURES.items():
            def call(*values, fn=fn, names=names):
                return self._call(fn, names, values)
            if single is not None:
                call = single(fn, call)
            setattr(self, fn, call)

    def _call(self, method, names, values):
        n = self._n
        arrays = [_as_state(name, v, n) for name, v in zip(names, values)]
        shape = arrays[0].shape
        for name, a in zip(names[1:], arrays[1:]):
            if a.shape != shape:
                raise ValueError(f"{name}: expected shape {shape} like {names[0]}, "
                                 f"got {a.shape}")
        if self._check_first:
            msg = _nonfinite_message(names, arrays)
            if msg is not None:
                raise ValueError(msg)
        try:
            return getattr(self._core, method)(*arrays)
        except ValueError:
            msg = _nonfinite_message(names, arrays)
            if msg is not None:
                raise ValueError(msg) from None
            raise
        except (FloatingPointError, ArithmeticError, np.linalg.LinAlgError) as exc:
            msg = _nonfinite_message(names, arrays)
            raise ValueError(msg or f"{method}: {exc}") from None


_DIRECT = ("inverse_dynamics", "gravity", "mass_matrix", "forward_dynamics", "tool_pose",
           "tool_jacobian", "regressor")   # all but torque_parts (wrapped in TorqueParts)


class _Entries:
    """The computations of one ffwd._core.Model as plain attributes (Model.entries():
    fast-call functions that check their arguments in C++)."""
    __slots__ = tuple(_SIGNATURES)

    def __init__(self, entries):
        for name in _SIGNATURES:
            setattr(self, name, entries[name])


class Dynamics:
    """Inverse/forward dynamics, mass matrix, tool kinematics and regressor of `robot`.

    backend: "c" (the compiled extension ffwd._core), "twin" (numpy reference),
    "native" (the package's libffwd shared library through cffi) or the path of a
    libffwd shared library (through cffi)."""

    def __init__(self, robot, backend="c"):
        from .model import Robot
        if not isinstance(robot, Robot):
            raise ValueError(f"robot: expected an ffwd.Robot, got {type(robot).__name__}")
        self._robot = robot
        if not isinstance(backend, (str, os.PathLike)):
            raise ValueError("backend: expected 'c', 'twin', 'native' or the path of a libffwd "
                             f"shared library, got {backend!r}")
        self.backend = os.fspath(backend)
        self.dof = robot.dof
        self._core = self._make_core(robot)
        self._set_front(self._make_front())

    @property
    def robot(self):
        """The robot, carrying the payload last given to set_payload."""
        return self._robot

    def _make_core(self, robot):
        b = self.backend
        if b == "twin":
            return _TwinCore(robot)
        if b == "c":
            try:
                from . import _core
            except ImportError as exc:
                raise ImportError(
                    f"backend 'c': the compiled extension ffwd._core is not available ({exc}); "
                    "build the package (make install), or use backend='native' or 'twin'") from None
            f = model_fields(robot)
            if f.dof > _core.MAX_DOF:
                raise ValueError(f"robot: {f.dof} joints, the core was built with "
                                 f"FFWD_MAX_DOF {_core.MAX_DOF}")
            return _core.Model(**f.as_dict())
        from . import native
        lib = native.load_library(None if b == "native" else b)
        return lib.model(robot)

    def _make_front(self):
        """What the methods call: ffwd._core.Model checks its arguments itself (C++);
        the twin and cffi cores get the checks in Python."""
        if self.backend == "c":
            from . import _core
            if getattr(_core, "CHECKS_ARGUMENTS", False):   # an older build does not
                entries = getattr(self._core, "entries", None)
                return self._core if entries is None else _Entries(entries())
        return _CheckedFront(self._core, self.dof, check_first=self.backend == "twin")

    def _set_front(self, front):
        """Use `front`. Each computation that returns the front's result as it is also
        becomes an attribute of this object, the front's own entry: a call then skips the
        method of this class (one Python call less per sample). The methods below stay as
        the documented interface; one a subclass overrides is left to it."""
        self._front = front
        for name in _DIRECT:
            if getattr(type(self), name) is getattr(Dynamics, name):
                setattr(self, name, getattr(front, name))

    def __repr__(self):
        return f"Dynamics({self._robot.name!r}, {self.dof} joints, backend={self.backend!r})"

    # -- the computations
    def inverse_dynamics(self, q, qd, qdd):
        """Joint torques tau = M(q) qdd + C(q, qd) qd + g(q) + friction(qd)."""
        return self._front.inverse_dynamics(q, qd, qdd)

    def gravity(self, q):
        """Gravity torques g(q)."""
        return self._front.gravity(q)

    def torque_parts(self, q, qd, qdd):
        """TorqueParts(inertial, velocity, gravity, friction); they sum to inverse_dynamics."""
        return TorqueParts._make(self._front.torque_parts(q, qd, qdd))

    def mass_matrix(self, q):
        """Joint-space mass matrix (n, n) (or (N, n, n)), armature on the diagonal."""
        return self._front.mass_matrix(q)

    def forward_dynamics(self, q, qd, tau):
        """Joint accelerations qdd from torques tau, friction included."""
        return self._front.forward_dynamics(q, qd, tau)

    def tool_pose(self, q):
        """4x4 homogeneous transform of the tool frame in the base frame."""
        return self._front.tool_pose(q)

    def tool_jacobian(self, q):
        """(6, n) rows vx vy vz wx wy wz: tool-origin linear and angular velocity, base frame."""
        return self._front.tool_jacobian(q)

    def regressor(self, q, qd, qdd):
        """(n, 13 n) Y with Y @ robot.parameter_vector() = inverse_dynamics(q, qd, qdd)."""
        return self._front.regressor(q, qd, qdd)

    def set_payload(self, mass, com=(0.0, 0.0, 0.0), inertia=None):
        """Swap the payload: mass (0 removes it), com in the tool frame, inertia about the
        com in tool-frame axes (3x3 or xx, xy, xz, yy, yz, zz; default zero)."""
        if inertia is None:
            inertia = np.zeros((3, 3))
        robot = self._robot.with_payload(mass, com, inertia)   # validates (ModelError)
        p = robot.payload
        if self.backend == "twin":
            self._core = _TwinCore(robot)
            self._set_front(self._make_front())
        else:
            self._core.set_payload(p.mass, np.asarray(p.com, dtype=float),
                                   payload_entries(p.inertia))
        self._robot = robot
