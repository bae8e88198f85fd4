"""Base parameters by QR with column pivoting (ffwd/identify/base.py)."""
import os

import numpy as np
import pytest

import ffwd
from ffwd.identify import base_parameters, base_parameters_of, two_link_arm

ROBOTS = os.path.join(os.path.dirname(__file__), "..", "examples", "robots")


def test_known_dependencies_of_a_matrix():
    rng = np.random.default_rng(0)
    A = rng.normal(size=(40, 4))
    # columns: a0, a1, 2 a0 - a1, 0, a2, a3, a2 (duplicate)
    W = np.column_stack([A[:, 0], A[:, 1], 2 * A[:, 0] - A[:, 1], np.zeros(40), A[:, 2],
                         A[:, 3], A[:, 2]])
    b = base_parameters_of(W, names=list("abcdefg"))
    assert b.count == 4 == np.linalg.matrix_rank(W)
    theta = rng.normal(size=7)
    # W theta == W_b theta_b for any theta
    np.testing.assert_allclose(W @ theta, b.base_regressor(W) @ b.project(theta), atol=1e-12)
    assert "d" in b.unidentifiable()
    assert len(b.expressions()) == 4


def test_too_few_rows_is_an_error():
    with pytest.raises(ValueError, match="stack more samples"):
        base_parameters_of(np.ones((3, 5)))


def test_two_link_expressions_name_the_grouping():
    b = base_parameters(two_link_arm(l1=0.5))
    text = b.expressions()
    assert "mcx_j1 + 0.5 m_j2" in text
    assert "Izz_j1 + armature_j1 + 0.25 m_j2" in text


@pytest.mark.parametrize("name", ["planar3_vertical.toml", "six_axis.toml"])
def test_count_equals_numerical_rank_on_the_demo_robots(name):
    from ffwd.identify.backend import regressor_batch
    from ffwd.identify.base import random_states
    robot = ffwd.load(os.path.join(ROBOTS, name))
    b = base_parameters(robot)
    q, qd, qdd = random_states(robot, 60, np.random.default_rng(11))   # other states
    W = regressor_batch(robot, q, qd, qdd).reshape(-1, 13 * robot.dof)
    # numerical rank with numpy's default tolerance (numpy as reference)
    assert b.count == np.linalg.matrix_rank(W)
    theta = robot.parameter_vector()
    np.testing.assert_allclose(W @ theta, b.base_regressor(W) @ b.project(theta),
                               rtol=1e-9, atol=1e-9 * np.max(np.abs(W @ theta)))
