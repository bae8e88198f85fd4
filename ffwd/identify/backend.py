"""Batched regressor and inverse dynamics for identification.

Uses ffwd.Dynamics(robot, backend="c") when the compiled core is importable, else the
"twin" backend, else a loop over the twin functions. Every function here takes and
returns batches: q, qd, qdd of shape (N, dof).
"""
import warnings

import numpy as np

from .. import twin


class _TwinLoop:
    """Batch adapter over the single-sample twin functions."""
    name = "twin (loop)"

    def __init__(self, robot):
        self.robot = robot

    def regressor(self, q, qd, qdd):
        return np.array([twin.regressor(self.robot, a, b, c) for a, b, c in zip(q, qd, qdd)])

    def inverse_dynamics(self, q, qd, qdd):
        return np.array([twin.inverse_dynamics(self.robot, a, b, c)
                         for a, b, c in zip(q, qd, qdd)])


def dynamics_for(robot, backend=None):
    """An object with batched .regressor(q, qd, qdd) -> (N, dof, 13 dof) and
    .inverse_dynamics(q, qd, qdd) -> (N, dof), and a .name for reports.
    backend None tries "c", then "twin"; "loop" forces the plain twin loop."""
    if backend == "loop":
        return _TwinLoop(robot)
    tries = [backend] if backend is not None else ["c", "twin"]
    last = None
    for b in tries:
        try:
            from ..dynamics import Dynamics
            dyn = _Named(Dynamics(robot, backend=b), b)
            z = np.zeros((1, robot.dof))
            dyn.regressor(z, z, z)             # probe: a core without the regressor fails here
        except (ImportError, OSError, RuntimeError, AttributeError) as exc:
            last = exc
            continue
        except ValueError as exc:
            if backend is not None:
                raise
            # the compiled core refused a model the Python checks accepted: say so, go on
            warnings.warn(f"dynamics backend {b!r} refused robot {robot.name!r} ({exc}); "
                          "using the next backend", RuntimeWarning, stacklevel=2)
            last = exc
            continue
        return dyn
    if backend is not None:
        raise ValueError(f"dynamics backend {backend!r} is not available ({last})")
    return _TwinLoop(robot)


class _Named:
    def __init__(self, dyn, name):
        self._dyn, self.name = dyn, name

    def regressor(self, q, qd, qdd):
        return np.asarray(self._dyn.regressor(q, qd, qdd)).reshape(len(q), q.shape[1], -1)

    def inverse_dynamics(self, q, qd, qdd):
        return np.asarray(self._dyn.inverse_dynamics(q, qd, qdd)).reshape(q.shape)


def regressor_batch(robot, q, qd, qdd, backend=None):
    """(N, dof, 13 dof) regressor at N states."""
    q, qd, qdd = (np.atleast_2d(np.asarray(a, dtype=float)) for a in (q, qd, qdd))
    return dynamics_for(robot, backend).regressor(q, qd, qdd)
