"""Excitation trajectories (ffwd/identify/excitation.py)."""
import dataclasses

import numpy as np
import pytest

from ffwd.identify import design_excitation, random_excitation, two_link_arm, write_excitation
from ffwd.identify.excitation import limit_use
from ffwd.model import Limits
from ffwd.trajio import read_trajectory


def test_fourier_series_starts_and_ends_at_rest():
    robot = two_link_arm()
    tr = random_excitation(robot, period=6.0, harmonics=4, seed=3)
    q, qd, qdd = tr.evaluate([0.0, tr.period])
    np.testing.assert_allclose(q[0], q[1], atol=1e-12)
    np.testing.assert_allclose(qd, 0.0, atol=1e-12)
    np.testing.assert_allclose(qdd, 0.0, atol=1e-12)
    # qd and qdd are the derivatives of q (central differences as reference)
    t = np.linspace(0.5, 5.5, 11)
    h = 1e-5
    qp, _, _ = tr.evaluate(t + h)
    qm, _, _ = tr.evaluate(t - h)
    _, v, a = tr.evaluate(t)
    np.testing.assert_allclose((qp - qm) / (2 * h), v, atol=1e-6)
    _, vp, _ = tr.evaluate(t + h)
    _, vm, _ = tr.evaluate(t - h)
    np.testing.assert_allclose((vp - vm) / (2 * h), a, atol=1e-5)


@pytest.fixture(scope="module")
def designed():
    robot = two_link_arm()
    res = design_excitation(robot, period=6.0, harmonics=3, samples=30, max_iter=4, seed=2)
    return robot, res


def test_optimised_trajectory_respects_every_limit(designed):
    robot, res = designed
    use = limit_use(robot, res.trajectory, points=20000)
    for kind, frac in use.items():
        assert np.all(frac <= 1.0 + 1e-9), (kind, frac)
    q, qd, qdd = res.trajectory.evaluate(np.linspace(0, res.trajectory.period, 20001))
    lo = np.array([j.limits.position[0] for j in robot.joints])
    hi = np.array([j.limits.position[1] for j in robot.joints])
    assert np.all(q >= lo) and np.all(q <= hi)
    assert np.all(np.abs(qd) <= [j.limits.velocity for j in robot.joints])
    assert np.all(np.abs(qdd) <= [j.limits.acceleration for j in robot.joints])


def test_optimised_condition_number_is_below_the_random_start(designed):
    _, res = designed
    assert res.cond < res.cond_start
    assert res.base_count == 11


def test_trajectory_csv_plays_from_rest(designed, tmp_path):
    robot, res = designed
    path = tmp_path / "traj.csv"
    write_excitation(path, robot, res.trajectory, rate=200.0, periods=2)
    tr = read_trajectory(path, robot.joint_names)
    assert tr.t[-1] == pytest.approx(2 * res.trajectory.period)
    np.testing.assert_allclose(tr.qd[[0, -1]], 0.0, atol=1e-9)
    np.testing.assert_allclose(tr.qdd[[0, -1]], 0.0, atol=1e-9)


def test_missing_limit_is_named():
    robot = two_link_arm()
    j = robot.joints[1]
    robot = dataclasses.replace(robot, joints=(robot.joints[0], dataclasses.replace(
        j, limits=Limits((-1.0, 1.0), None, 5.0))))
    with pytest.raises(ValueError, match="joint 'j2': no velocity limit"):
        random_excitation(robot)
