"""ffwd/identify/backend.py: every way of getting batched regressors gives the same numbers,
and Y(q, qd, qdd) @ theta is the inverse dynamics (the regressor's defining property)."""
import numpy as np
import pytest

from ffwd.identify.backend import dynamics_for, regressor_batch
from ffwd.identify.synthetic import two_link_arm


@pytest.fixture(scope="module")
def robot():
    return two_link_arm()


@pytest.fixture(scope="module")
def states():
    rng = np.random.default_rng(5)
    return tuple(rng.uniform(-1.5, 1.5, size=(6, 2)) for _ in range(3))


def test_loop_and_twin_agree_and_regressor_is_linear(robot, states):
    q, qd, qdd = states
    loop, tw = dynamics_for(robot, "loop"), dynamics_for(robot, "twin")
    assert (loop.name, tw.name) == ("twin (loop)", "twin")
    Yl, Yt = loop.regressor(q, qd, qdd), tw.regressor(q, qd, qdd)
    assert Yl.shape == Yt.shape == (6, 2, 26)
    np.testing.assert_allclose(Yl, Yt, rtol=1e-12, atol=1e-12)
    theta = robot.parameter_vector()
    np.testing.assert_allclose(Yl @ theta, loop.inverse_dynamics(q, qd, qdd), rtol=1e-10, atol=1e-10)
    np.testing.assert_allclose(tw.inverse_dynamics(q, qd, qdd), loop.inverse_dynamics(q, qd, qdd),
                               rtol=1e-12, atol=1e-12)


def test_default_prefers_the_c_core(robot, states, core):
    q, qd, qdd = states
    d = dynamics_for(robot)
    assert d.name == "c"
    np.testing.assert_allclose(d.regressor(q, qd, qdd),
                               dynamics_for(robot, "loop").regressor(q, qd, qdd),
                               rtol=1e-9, atol=1e-9)


def test_regressor_batch_accepts_one_sample(robot, states):
    q, qd, qdd = (a[0] for a in states)
    Y = regressor_batch(robot, q, qd, qdd, backend="twin")
    assert Y.shape == (1, 2, 26)
    np.testing.assert_allclose(Y[0], dynamics_for(robot, "loop").regressor(
        q[None], qd[None], qdd[None])[0], rtol=1e-12, atol=1e-12)


def test_named_backend_that_fails_is_an_error(robot):
    with pytest.raises(ValueError, match="nowhere"):
        dynamics_for(robot, "/nowhere/libffwd.so")
