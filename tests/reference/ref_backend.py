"""One interface for the reference checks, so they can run on any backend.

`dyn(robot, backend)` returns an object with the methods of ffwd.Dynamics for one sample:
inverse_dynamics, gravity, torque_parts, mass_matrix, forward_dynamics, tool_pose,
tool_jacobian, regressor. "twin" binds the numpy twin; any other name is passed to
ffwd.Dynamics(robot, backend=...) (the C core, or a libffwd path through cffi).
"""
import functools

import ffwd.twin as twin


class TwinDynamics:
    def __init__(self, robot):
        self.robot = robot
        for name in ("inverse_dynamics", "torque_parts", "mass_matrix", "forward_dynamics",
                     "tool_pose", "tool_jacobian", "regressor"):
            setattr(self, name, functools.partial(getattr(twin, name), robot))
        self.gravity = functools.partial(twin.gravity_torque, robot)


def dyn(robot, backend="twin"):
    if backend == "twin":
        return TwinDynamics(robot)
    import ffwd
    return ffwd.Dynamics(robot, backend=backend)
