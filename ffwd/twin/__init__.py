"""The twin: a plain-numpy reference of every ffwd C core function, written for reading.

Single-sample functions, each taking a `Robot` first (DEVELOPERS.md). Spatial vectors and
6x6 matrices in Featherstone's notation; the C core uses (R, p) transforms and must agree
with these results to 1e-9.
"""
from .aba import forward_dynamics
from .crba import mass_matrix
from .kinematics import tool_jacobian, tool_pose
from .regressor import regressor
from .rnea import gravity_torque, inverse_dynamics, torque_parts

__all__ = ["inverse_dynamics", "gravity_torque", "torque_parts", "mass_matrix",
           "forward_dynamics", "tool_pose", "tool_jacobian", "regressor"]
