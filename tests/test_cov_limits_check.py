"""ffwd/limits_check.py: the stretches of a sampled trajectory where a limit is exceeded.
Expected values are worked out by hand from the made-up samples (common practice, no source)."""
import os

import numpy as np
import pytest

import ffwd
from ffwd.limits_check import _intervals, exceedances

ROBOT = os.path.join(os.path.dirname(__file__), "..", "examples", "robots", "planar3_vertical.toml")


@pytest.fixture(scope="module")
def robot():
    # limits: j1 position [-2.8, 2.8], velocity 3, acceleration 12, torque 200;
    #         j2 [-2.6, 2.6], 4, 16, 80; j3 [-2.6, 2.6], 6, 30, 20
    return ffwd.load(ROBOT)


@pytest.mark.parametrize("mask, runs", [
    ([0, 0, 0], []),
    ([1, 1, 1], [(0, 2)]),
    ([1, 0, 0, 1], [(0, 0), (3, 3)]),
    ([0, 1, 1, 0, 1, 1, 1], [(1, 2), (4, 6)]),
])
def test_intervals(mask, runs):
    got = [(int(a), int(b)) for a, b in _intervals(np.array(mask, dtype=bool))]
    assert got == runs


def test_position_stretches_and_worst_value(robot):
    t = np.linspace(0.0, 0.9, 10)
    q = np.zeros((10, 3))
    q[2:5, 0] = [2.9, 3.1, 2.85]       # over the top of j1 at samples 2..4, worst 3.1
    q[9, 1] = -2.7                     # under the bottom of j2 at the last sample
    found = exceedances(robot, t, q)
    assert len(found) == 2
    a, b = found
    assert a["joint"] == "j1" and a["limit"] == "position"
    assert a["t_start"] == pytest.approx(0.2) and a["t_end"] == pytest.approx(0.4)
    assert a["worst_value"] == 3.1 and a["limit_value"] == [-2.8, 2.8]
    assert b["joint"] == "j2" and b["worst_value"] == -2.7
    assert b["t_start"] == b["t_end"] == pytest.approx(0.9)


def test_values_at_the_limit_are_not_exceedances(robot):
    t = np.arange(4) * 0.1
    q = np.full((4, 3), 2.6)
    q[:, 0] = 2.8
    qd = np.tile([3.0, -4.0, 6.0], (4, 1))         # exactly at the velocity limits
    assert exceedances(robot, t, q, qd) == []
    qd[1, 2] = 6.0 * (1 + 1e-6)
    found = exceedances(robot, t, q, qd)
    assert [(f["joint"], f["limit"]) for f in found] == [("j3", "velocity")]
    assert found[0]["limit_value"] == 6.0


def test_each_kind_is_checked_only_when_given(robot):
    t = np.arange(3) * 0.5
    q = np.zeros((3, 3))
    big = np.full((3, 3), 1e3)
    assert exceedances(robot, t, q) == []                       # no qd, qdd, tau
    kinds = {(f["joint"], f["limit"]) for f in exceedances(robot, t, q, big, big, big)}
    assert kinds == {(j, k) for j in ("j1", "j2", "j3")
                     for k in ("velocity", "acceleration", "torque")}
    # negative side: the worst value keeps its sign
    tau = np.zeros((3, 3))
    tau[1, 2] = -25.0
    (f,) = exceedances(robot, t, q, tau=tau)
    assert (f["joint"], f["limit"], f["worst_value"]) == ("j3", "torque", -25.0)


def test_unset_limits_are_ignored(robot):
    bare = ffwd.Robot("bare", robot.gravity,
                      tuple(__import__("dataclasses").replace(j, limits=ffwd.Limits())
                            for j in robot.joints))
    t = np.arange(3) * 0.5
    huge = np.full((3, 3), 1e6)
    assert exceedances(bare, t, huge, huge, huge, huge) == []
