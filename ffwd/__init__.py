"""ffwd: real-time torque feedforward for robot arms.

`ffwd.load(path)` reads a robot model; `ffwd.Dynamics(robot)` computes with the C core
(or the numpy twin, or any libffwd shared library through cffi).
"""
from .errors import ModelError
from .model import Drive, Joint, Limits, Link, Payload, Robot, Tool
from .formats import load

__all__ = ["load", "Robot", "Joint", "Link", "Drive", "Limits", "Payload", "Tool",
           "ModelError", "Dynamics"]


def __getattr__(name):
    # Dynamics pulls in the compiled core; import it only when asked for.
    if name == "Dynamics":
        from .dynamics import Dynamics
        return Dynamics
    raise AttributeError(f"module 'ffwd' has no attribute {name!r}")
