"""The C governor (ffwd._governor) and its Python twin give the same command, cycle by
cycle, on random robots, paths and override commands. The twin is fed the inverse
dynamics and gravity of the C core, so the comparison is of the governor alone (the dynamics are compared
by tests/test_equivalence.py); the output torque is the twin's own inverse dynamics."""
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ffwd import Dynamics
from ffwd.scaling import Governor, Path
from ffwd.scaling.governor import _c_available
from test_governor import random_arm, require_build, steps, with_feasible_limits


@pytest.fixture(scope="module", autouse=True)
def need_c():
    if not _c_available():
        require_build("ffwd._governor is not importable (run `make install`)")


@st.composite
def small_scenarios(draw):
    dof = draw(st.integers(1, 3))
    robot, rng = random_arm(draw(st.integers(0, 2 ** 31 - 1)), dof)
    times = np.array([0.0, rng.uniform(0.1, 0.3), rng.uniform(0.35, 0.5)])
    path = Path.from_waypoints(times, rng.uniform(-1, 1, (3, dof)))
    robot = with_feasible_limits(robot, path, rng, jerk=draw(st.booleans()))
    t_steps = [0.0, rng.uniform(0.05, 0.3)]
    k_steps = [draw(st.sampled_from([0.5, 1.0, 1.5])), draw(st.sampled_from([0.0, 0.3, 1.0]))]
    k_steps[-1] = max(k_steps[-1], 0.3)
    return robot, path, t_steps, k_steps, draw(st.sampled_from([4, 16, 40]))


@settings(deadline=None, max_examples=15)
@given(small_scenarios())
def test_c_equals_twin(scenario):
    robot, path, t_steps, k_steps, horizon = scenario
    runs = {}
    for backend in ("c", "twin"):
        gov = Governor(robot, path, horizon=horizon, dt=0.004, ds=0.01, override_max=1.5,
                       backend=backend, dynamics=Dynamics(robot, backend="c"))
        runs[backend] = gov.run(steps(t_steps, k_steps))
    c, t = runs["c"], runs["twin"]
    assert len(c.t) == len(t.t)
    np.testing.assert_array_equal(c.flags, t.flags)
    for name in ("s", "override", "rate", "rate_rate", "safe_override", "q", "qd", "qdd"):
        a, b = getattr(c, name), getattr(t, name)
        np.testing.assert_allclose(a, b, rtol=1e-8, atol=1e-9 * max(1.0, np.abs(b).max()),
                                   err_msg=name)
    np.testing.assert_allclose(c.tau, t.tau, rtol=1e-8, atol=1e-8 * max(1.0, np.abs(t.tau).max()))
