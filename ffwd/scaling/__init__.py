"""Speed scaling along a path: offline time-optimal plans and the online override governor.

    path = Path.from_waypoints(times, q)
    plan = time_optimal(robot, path)            # fastest motion, with its active limits
    gov = Governor(robot, path); cmd = gov.run(override)
"""
from .constraints import InfeasiblePath
from .path import Path
from .topp import Plan, time_optimal


def __getattr__(name):
    if name == "Governor":
        from .governor import Governor
        return Governor
    raise AttributeError(f"module 'ffwd.scaling' has no attribute {name!r}")


__all__ = ["Path", "time_optimal", "Plan", "Governor", "InfeasiblePath"]
