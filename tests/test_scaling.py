"""Offline time-optimal scaling: limits kept, active limits named, bad input located."""
import dataclasses

import numpy as np
import pytest

from ffwd import ModelError
from ffwd.model import Drive, Joint, Limits, Link, Robot
from ffwd.scaling import InfeasiblePath, Path, time_optimal
from ffwd.scaling.check import violations

Y = np.array([0.0, 1.0, 0.0])


def arm(torque=(60.0, 20.0), velocity=(2.0, 2.5), acceleration=(8.0, 12.0), friction=True,
        position=(None, None)):
    """Two revolute joints about y, links along +x, gravity -z (invented numbers)."""
    def link(m, l):
        return Link(m, [l / 2, 0.0, 0.0], np.diag([0.01, m * l * l / 12, m * l * l / 12]))
    drive = Drive(gear_ratio=50.0, rotor_inertia=1e-5, viscous=0.5, coulomb=1.0,
                  coulomb_band=0.02) if friction else Drive()
    js = []
    for i, (m, l, x0) in enumerate(((3.0, 0.5, 0.0), (2.0, 0.4, 0.5))):
        js.append(Joint(f"j{i + 1}", "revolute", i - 1, np.eye(3), np.array([x0, 0.0, 0.0]), Y,
                        link(m, l), drive,
                        Limits(position[i], velocity[i], acceleration[i], None, torque[i])))
    return Robot("arm", np.array([0.0, 0.0, -9.81]), tuple(js))


PATH = Path.from_waypoints([0.0, 1.0, 2.0], [[0.0, 0.3], [0.8, -0.4], [1.5, 0.6]])


def test_plan_keeps_every_limit_and_is_consistent():
    robot = arm()
    plan = time_optimal(robot, PATH, grid=300, backend="twin")
    assert plan.duration > 0 and plan.t[-1] == pytest.approx(plan.duration)
    assert plan.sd[0] == 0.0 and plan.sd[-1] == 0.0
    v = violations(robot, plan.q, plan.qd, plan.qdd, dynamics=None)
    assert v["torque_worst"] <= 1 + 1e-9 and v["velocity_worst"] <= 1 + 1e-9
    assert v["acceleration_worst"] <= 1 + 1e-9
    # some limit is reached: time optimality leaves no slack everywhere
    assert max(v["torque_worst"], v["velocity_worst"], v["acceleration_worst"]) > 0.999
    assert len(plan.active) == len(plan.s) - 1
    assert {a["how"] for a in plan.active} <= {"accelerating", "braking", "at speed limit", "end"}
    # times follow from the speeds: dt = 2 ds / (sd_k + sd_k+1)
    ds = plan.s[1] - plan.s[0]
    np.testing.assert_allclose(np.diff(plan.t), 2 * ds / (plan.sd[:-1] + plan.sd[1:]))


def test_faster_limits_give_a_shorter_plan():
    slow = time_optimal(arm(), PATH, grid=200, backend="twin")
    fast = time_optimal(arm(torque=(120.0, 40.0), velocity=(4.0, 5.0), acceleration=(16.0, 24.0)),
                        PATH, grid=200, backend="twin")
    assert fast.duration < slow.duration


def test_boundary_speeds():
    robot = arm()
    plan = time_optimal(robot, PATH, grid=200, end_speed=0.0, start_speed=0.0, backend="twin")
    with pytest.raises(InfeasiblePath, match="start speed"):
        time_optimal(robot, PATH, grid=200, start_speed=1e6, backend="twin")
    assert plan.sd[0] == 0.0


def test_gravity_over_torque_limit_is_located():
    # holding the arm out horizontally needs ~ 9.81 * (3 * 0.25 + 2 * 0.7) = 21 N m at j1
    robot = arm(torque=(15.0, 20.0))
    with pytest.raises(InfeasiblePath) as info:
        time_optimal(robot, PATH, grid=100, backend="twin")
    err = info.value
    assert err.joint == "j1" and err.limit == "torque" and err.index == 0
    assert "grid index 0" in str(err) and "j1" in str(err)


def test_position_limit_is_located():
    robot = arm(position=((-0.5, 1.0), None))
    with pytest.raises(InfeasiblePath) as info:
        time_optimal(robot, PATH, grid=100, backend="twin")
    err = info.value
    assert err.joint == "j1" and err.limit == "position"
    assert PATH.q(err.s)[0] > 1.0 and PATH.q(PATH.grid(100)[err.index - 1])[0] <= 1.0


def test_missing_limit_is_a_model_error():
    robot = arm()
    j = dataclasses.replace(robot.joints[1], limits=Limits(None, 2.0, None, None, 20.0))
    bad = Robot("arm", robot.gravity, (robot.joints[0], j))
    with pytest.raises(ModelError, match="j2.*limits.acceleration"):
        time_optimal(bad, PATH, grid=50, backend="twin")


def test_margin_reduces_speed():
    a = time_optimal(arm(), PATH, grid=200, backend="twin")
    b = time_optimal(arm(), PATH, grid=200, margin=0.1, backend="twin")
    assert b.duration > a.duration
    v = violations(arm(), b.q, b.qd, b.qdd)
    assert v["torque_worst"] <= 0.9 + 1e-6 and v["acceleration_worst"] <= 0.9 + 1e-6


def test_jerk_pass_keeps_the_other_limits_and_reports():
    robot = arm()
    js = tuple(dataclasses.replace(j, limits=dataclasses.replace(j.limits, jerk=jm))
               for j, jm in zip(robot.joints, (100.0, 150.0)))
    robot = Robot("arm", robot.gravity, js)
    fast = time_optimal(robot, PATH, grid=150, jerk=False, backend="twin")
    plan = time_optimal(robot, PATH, grid=150, backend="twin")     # jerk limits: pass applied
    rep = plan.jerk
    assert rep["method"].startswith("jerk-bounded")
    assert plan.duration >= fast.duration and rep["duration_increase"] >= 0
    # the governor's jerk gate: every cycle's joint jerk (difference quotient of qdd)
    assert rep["worst_jerk_ratio"] <= 1.0 and rep["jerk_flagged_cycles"] == 0
    v = violations(robot, plan.q, plan.qd, plan.qdd)
    assert v["torque"] == 0 and v["velocity"] == 0 and v["acceleration"] == 0
