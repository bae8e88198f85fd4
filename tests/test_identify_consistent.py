"""The physically consistent parameter set (ffwd/identify/consistent.py)."""
import numpy as np
import pytest

from ffwd.identify import base_parameters, two_link_arm
from ffwd.identify.consistent import (is_consistent, nearest_consistent,
                                      params_of_pseudo_inertia, pseudo_inertia)


def test_pseudo_inertia_round_trip_and_consistency():
    robot = two_link_arm()
    for p in robot.body_params():
        np.testing.assert_allclose(params_of_pseudo_inertia(pseudo_inertia(p)), p, atol=1e-15)
        assert is_consistent(p)
    # a body whose principal moments break the triangle inequality about its com:
    # J is not positive definite (Wensing, Kim and Slotine 2017)
    bad = np.array([1.0, 0, 0, 0, 0.01, 0, 0, 0.01, 0, 0.05])
    assert not is_consistent(bad)
    assert not is_consistent(np.array([-1.0, 0, 0, 0, 0.1, 0, 0, 0.1, 0, 0.1]))


@pytest.fixture(scope="module")
def setup():
    robot = two_link_arm()
    base = base_parameters(robot)
    truth = base.project(robot.parameter_vector())
    cov = np.diag((1e-3 * np.maximum(np.abs(truth), 1e-2)) ** 2)
    return robot, base, truth, cov


def test_consistent_estimate_is_kept(setup):
    robot, base, truth, cov = setup
    res = nearest_consistent(base, truth, cov, robot.parameter_vector(), robot.dof)
    assert res.solver in ("CLARABEL", "SCS")
    assert res.max_sigma < 1e-2
    robot.with_parameters(res.theta)          # a valid model (raises if not)


def test_inconsistent_estimate_is_projected(setup):
    robot, base, truth, cov = setup
    labels = base.labels()
    bad = truth.copy()
    bad[labels.index("Izz_j2")] = -0.02       # no body has a negative moment of inertia
    bad[labels.index("armature_j2")] = -0.01  # nor a negative reflected rotor inertia
    res = nearest_consistent(base, bad, cov, robot.parameter_vector(), robot.dof)
    for j in range(robot.dof):
        assert is_consistent(res.theta[13 * j:13 * j + 10])
        assert np.all(res.theta[13 * j + 10:13 * j + 13] >= 0)
    fixed = base.project(res.theta)
    assert fixed[labels.index("Izz_j2")] > 0
    assert fixed[labels.index("armature_j2")] >= 0
    assert res.max_sigma > 3                  # it had to move
    model = robot.with_parameters(res.theta)
    assert model.joints[1].link.mass > 0
