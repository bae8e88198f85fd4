"""ffwd.Dynamics: shapes in and out, and clear errors for bad arguments, on every backend."""
import glob
import os

import numpy as np
import pytest

import ffwd
from ffwd import Dynamics

ROBOTS = sorted(glob.glob(os.path.join(os.path.dirname(__file__), "..", "examples", "robots", "*.toml")))


@pytest.fixture(scope="module")
def robot():
    return ffwd.load(os.path.join(os.path.dirname(__file__), "..", "examples", "robots",
                                  "six_axis.toml"))


@pytest.fixture(scope="module", params=["c", "native", "twin"])
def dyn(request, robot):
    if request.param == "c":
        request.getfixturevalue("core")
    if request.param == "native":
        request.getfixturevalue("shipped_library")
    return Dynamics(robot, request.param)


def test_single_and_batch_shapes(dyn):
    n = dyn.dof
    rng = np.random.default_rng(1)
    q, qd, qdd = rng.uniform(-1, 1, (3, 5, n))
    cases = {
        "inverse_dynamics": ((q, qd, qdd), (n,)),
        "gravity": ((q,), (n,)),
        "mass_matrix": ((q,), (n, n)),
        "forward_dynamics": ((q, qd, qdd), (n,)),
        "tool_pose": ((q,), (4, 4)),
        "tool_jacobian": ((q,), (6, n)),
        "regressor": ((q, qd, qdd), (n, 13 * n)),
    }
    for name, (args, shape) in cases.items():
        f = getattr(dyn, name)
        assert f(*(a[0] for a in args)).shape == shape, name
        assert f(*args).shape == (5,) + shape, name
        assert f(*(a[:0] for a in args)).shape[0] == 0, name
    parts = dyn.torque_parts(q, qd, qdd)
    assert parts._fields == ("inertial", "velocity", "gravity", "friction")
    assert all(p.shape == (5, n) for p in parts)
    # the parts sum to the inverse dynamics (ffwd.h: torque_parts)
    np.testing.assert_allclose(sum(parts), dyn.inverse_dynamics(q, qd, qdd), rtol=1e-12, atol=1e-9)
    # plain lists and integer arrays are accepted too
    assert dyn.gravity(list(q[0])).shape == (n,)
    assert dyn.gravity(np.zeros(n, dtype=int)).shape == (n,)


def test_wrong_shapes_name_the_argument(dyn):
    n = dyn.dof
    z = np.zeros(n)
    with pytest.raises(ValueError, match=rf"qd: expected shape \({n},\) or \(N, {n}\), got \({n - 1},\)"):
        dyn.inverse_dynamics(z, np.zeros(n - 1), z)
    with pytest.raises(ValueError, match=r"q: expected shape .* got \(2, 3, 6\)"):
        dyn.gravity(np.zeros((2, 3, n)))
    with pytest.raises(ValueError, match=r"q: expected shape .* got \(\)"):
        dyn.mass_matrix(1.0)
    with pytest.raises(ValueError, match=r"qdd: expected shape \(3, 6\) like q, got \(2, 6\)"):
        dyn.regressor(np.zeros((3, n)), np.zeros((3, n)), np.zeros((2, n)))
    with pytest.raises(ValueError, match=r"tau: expected shape"):
        dyn.forward_dynamics(z, z, np.zeros(n + 1))


def test_non_numbers_are_refused(dyn):
    n = dyn.dof
    z = np.zeros(n)
    with pytest.raises(ValueError, match=r"q: expected real numbers, got dtype <U"):
        dyn.gravity(["a"] * n)
    with pytest.raises(ValueError, match=r"qd: expected real numbers, got dtype complex128"):
        dyn.inverse_dynamics(z, z + 1j, z)
    with pytest.raises(ValueError, match=r"qdd: expected real numbers, got dtype bool"):
        dyn.inverse_dynamics(z, z, z > 0)
    with pytest.raises(ValueError, match=r"q: expected real numbers, got dtype object"):
        dyn.tool_pose([None] * n)


def test_nan_and_inf_are_located(dyn):
    n = dyn.dof
    q = np.zeros((4, n))
    q[3, 2] = np.nan
    with pytest.raises(ValueError, match=r"^q\[3, 2\] is nan$"):
        dyn.gravity(q)
    qd = np.zeros(n)
    qd[1] = -np.inf
    with pytest.raises(ValueError, match=r"^qd\[1\] is -inf$"):
        dyn.inverse_dynamics(np.zeros(n), qd, np.zeros(n))
    tau = np.zeros(n)
    tau[0] = np.inf
    with pytest.raises(ValueError, match=r"^tau\[0\] is inf$"):
        dyn.forward_dynamics(np.zeros(n), np.zeros(n), tau)


def test_set_payload_changes_gravity_and_robot(dyn, robot):
    q = np.linspace(-0.5, 0.5, dyn.dof)
    d = Dynamics(robot, dyn.backend)
    before = d.gravity(q)
    d.set_payload(2.0, [0.0, 0.0, 0.1], np.diag([0.01, 0.01, 0.02]))
    assert d.robot.payload.mass == 2.0
    after = d.gravity(q)
    assert np.max(np.abs(after - before)) > 1e-3   # 2 kg at the tool: gravity torques change
    ref = Dynamics(robot.with_payload(2.0, [0.0, 0.0, 0.1], np.diag([0.01, 0.01, 0.02])), "twin")
    np.testing.assert_allclose(after, ref.gravity(q), rtol=1e-9, atol=1e-9)
    d.set_payload(0.0)
    np.testing.assert_allclose(d.gravity(q), Dynamics(robot.with_payload(0.0), "twin").gravity(q),
                               rtol=1e-9, atol=1e-9)
    with pytest.raises(ffwd.ModelError, match="mass"):
        d.set_payload(-1.0)


def test_unknown_backend_and_bad_robot(robot):
    with pytest.raises(ValueError, match="no such library"):
        Dynamics(robot, "/nonexistent/libffwd.so")
    with pytest.raises(ValueError, match="robot: expected an ffwd.Robot"):
        Dynamics("six_axis.toml")


@pytest.mark.parametrize("path", ROBOTS, ids=os.path.basename)
def test_example_robots_agree_across_backends(path, core, shipped_library):
    """Every example robot: C and cffi give the twin's torques at a few states."""
    robot = ffwd.load(path)
    rng = np.random.default_rng(7)
    q, qd, qdd = rng.uniform(-1.5, 1.5, (3, 10, robot.dof))
    want = Dynamics(robot, "twin").inverse_dynamics(q, qd, qdd)
    for b in ("c", "native"):
        got = Dynamics(robot, b).inverse_dynamics(q, qd, qdd)
        np.testing.assert_allclose(got, want, rtol=1e-9, atol=1e-9 * (1 + np.abs(want).max()))


def test_q_bound_comes_from_the_core_and_is_enforced(robot, core):
    # the bound is the C core's FFWD_Q_MAX_ (2^20 rad in the double build, DESIGN rule);
    # Dynamics takes it from the extension and every backend refuses |q| at the bound
    from ffwd import dynamics as dmod
    assert core.Q_MAX == 2.0 ** 20
    assert dmod._q_max() == core.Q_MAX
    n = robot.dof
    z = np.zeros(n)
    for backend in ("c", "twin"):
        d = Dynamics(robot, backend)
        q = np.zeros(n)
        q[2] = core.Q_MAX
        with pytest.raises(ValueError, match=r"q\[2\]"):
            d.inverse_dynamics(q, z, z)
        q[2] = np.nextafter(core.Q_MAX, 0.0)
        assert np.all(np.isfinite(d.inverse_dynamics(q, z, z)))


def test_fast_entries_equal_the_model_methods(robot, core):
    # Dynamics(robot, "c") calls the plain functions of Model.entries(); they must give
    # exactly what the pybind11 methods give, single sample and batch
    d = Dynamics(robot, "c")
    rng = np.random.default_rng(7)
    n = robot.dof
    q, qd, qdd = rng.uniform(-1, 1, (3, 4, n))
    ref = Dynamics(robot, "twin")
    for i in range(4):
        np.testing.assert_allclose(d.inverse_dynamics(q[i], qd[i], qdd[i]),
                                   ref.inverse_dynamics(q[i], qd[i], qdd[i]), atol=1e-9)
    batch = d.inverse_dynamics(q, qd, qdd)
    single = np.array([d.inverse_dynamics(q[i], qd[i], qdd[i]) for i in range(4)])
    assert np.array_equal(batch, single)
