"""A payload given as a point mass (zero inertia about its centre of mass) is a valid body:
the C core must accept it and agree with the twin."""
import numpy as np
import pytest

import ffwd

EXAMPLE = "examples/robots/six_axis.toml"


def test_point_mass_payload_c_matches_twin():
    pytest.importorskip("ffwd._core")
    robot = ffwd.load(EXAMPLE).with_payload(2.0, (0.0, 0.0, 0.1), np.zeros((3, 3)))
    rng = np.random.default_rng(3)
    q, qd, qdd = (rng.uniform(-1, 1, robot.dof) for _ in range(3))
    c = ffwd.Dynamics(robot, backend="c").inverse_dynamics(q, qd, qdd)
    t = ffwd.Dynamics(robot, backend="twin").inverse_dynamics(q, qd, qdd)
    np.testing.assert_allclose(c, t, rtol=1e-9, atol=1e-9)


def test_point_mass_payload_set_at_run_time():
    pytest.importorskip("ffwd._core")
    robot = ffwd.load(EXAMPLE)
    dyn = ffwd.Dynamics(robot, backend="c")
    dyn.set_payload(2.0, (0.0, 0.0, 0.1), np.zeros((3, 3)))
    ref = ffwd.Dynamics(robot.with_payload(2.0, (0.0, 0.0, 0.1), np.zeros((3, 3))), backend="twin")
    q = np.linspace(-0.5, 0.5, robot.dof)
    np.testing.assert_allclose(dyn.gravity(q), ref.gravity(q), rtol=1e-9, atol=1e-9)
