"""The plant's sensor and brake semantics and the demo reference, on the numpy plant
(runs without a build) and on the C plant when it is built."""
import os

import numpy as np
import pytest

import ffwd
from ffwd.sim import Plant, demo_path, energy, quintic_moves
from ffwd.sim.plant import _have_c

HERE = os.path.dirname(__file__)
BACKENDS = ["twin"] + (["c"] if _have_c() else [])


@pytest.fixture(scope="module")
def arm():
    return ffwd.load(os.path.join(HERE, "..", "examples", "robots", "planar3_vertical.toml"))


@pytest.mark.parametrize("backend", BACKENDS)
def test_delay_quantisation_noise(arm, backend):
    n = arm.dof
    tau = np.linspace(1.0, 2.0, n)
    p = Plant(arm, 1e-3, delay=4, backend=backend)
    history = []
    for k in range(12):
        history.append(p.state()[0])
        q_meas, _ = p.measure()
        np.testing.assert_array_equal(q_meas, history[max(k - 4, 0)])
        p.step(tau)
    cpr = 1000.0
    p = Plant(arm, 1e-3, counts_per_rev=cpr, backend=backend, q0=np.full(n, 0.1234567))
    for _ in range(5):
        p.step(tau)
        q_meas, qd_meas = p.measure()
        q_true, qd_true = p.state()
        counts = q_meas / (2 * np.pi / cpr)
        np.testing.assert_allclose(counts, np.round(counts), atol=1e-9)
        assert np.all(np.abs(q_meas - q_true) <= 0.5 * 2 * np.pi / cpr + 1e-12)
        np.testing.assert_array_equal(qd_meas, qd_true)
    a = Plant(arm, 1e-3, noise_q=1e-3, seed=5, backend=backend)
    b = Plant(arm, 1e-3, noise_q=1e-3, seed=5, backend=backend)
    c = Plant(arm, 1e-3, noise_q=1e-3, seed=6, backend=backend)
    for x in (a, b, c):
        x.step(tau)
    assert np.array_equal(a.measure()[0], b.measure()[0])
    assert not np.array_equal(a.measure()[0], c.measure()[0])


@pytest.mark.parametrize("backend", BACKENDS)
def test_brake_holds_against_gravity(arm, backend):
    p = Plant(arm, 1e-3, backend=backend)
    zero = np.zeros(arm.dof)
    for _ in range(20):
        p.step(zero)
    q_before, qd_before = p.state()
    assert np.max(np.abs(qd_before)) > 0          # falling
    p.brake(True)
    for _ in range(10):
        p.step(zero)
    q, qd = p.state()
    np.testing.assert_array_equal(q, q_before)
    assert not np.any(qd)
    assert p.counters()["braked_steps"] == 10
    p.brake(False)
    p.step(zero)
    assert not np.array_equal(p.state()[0], q_before)


@pytest.mark.parametrize("backend", BACKENDS)
def test_saturation(arm, backend):
    p = Plant(arm, 1e-3, backend=backend)
    limits = np.array([j.limits.torque for j in arm.joints])
    p.step(10 * limits)
    np.testing.assert_array_equal(p.tau, limits)
    assert p.counters()["saturated_steps"] == 1
    p = Plant(arm, 1e-3, saturate=False, backend=backend)
    p.step(10 * limits)
    np.testing.assert_array_equal(p.tau, 10 * limits)


def test_short_energy_check_on_twin(arm):
    """RK4 keeps the energy of a frictionless pendulum chain far better than Euler
    (0.2 s on the numpy plant; the 10 s figures are in test_sim_track.py)."""
    import dataclasses
    joints = tuple(dataclasses.replace(j, drive=dataclasses.replace(j.drive, viscous=0.0,
                                                                      coulomb=0.0))
                   for j in arm.joints)
    free = dataclasses.replace(arm, joints=joints)
    drift = {}
    for integrator in ("rk4", "euler"):
        q0, qd0 = np.full(free.dof, 0.3), np.full(free.dof, 1.0)
        p = Plant(free, 1e-3, integrator=integrator, q0=q0, qd0=qd0, backend="twin")
        e0 = sum(energy(free, q0, qd0))
        worst = 0.0
        for _ in range(200):
            p.step(np.zeros(free.dof))
            worst = max(worst, abs(sum(energy(free, *p.state())) - e0))
        drift[integrator] = worst
    assert drift["rk4"] < 1e-3 * drift["euler"]


def test_demo_path_within_limits(arm):
    for robot in (arm, ffwd.load(os.path.join(HERE, "..", "examples", "robots", "six_axis.toml"))):
        ref = demo_path(robot, 1000.0)
        assert np.allclose(ref.qd[0], 0) and np.allclose(ref.qd[-1], 0)
        np.testing.assert_allclose(ref.q[0], ref.q[-1])
        for j, joint in enumerate(robot.joints):
            lim = joint.limits
            if lim.position:
                assert lim.position[0] <= ref.q[:, j].min() and ref.q[:, j].max() <= lim.position[1]
            if lim.velocity:
                assert np.max(np.abs(ref.qd[:, j])) <= 0.5 * lim.velocity + 1e-9
            if lim.acceleration:
                assert np.max(np.abs(ref.qdd[:, j])) <= 0.5 * lim.acceleration + 1e-9
        # derivatives consistent with the positions (central differences)
        dt = ref.dt
        np.testing.assert_allclose(np.gradient(ref.q, dt, axis=0)[1:-1], ref.qd[1:-1], atol=1e-3)


def test_quintic_rest_to_rest():
    ref = quintic_moves([[0.0], [1.0]], [1.0], 0.0, 100.0)
    assert ref.q[0, 0] == 0 and ref.q[-1, 0] == pytest.approx(1.0)
    # peak velocity of the quintic blend is 1.875 d / T (from 30 s^2 (1-s)^2 at s = 1/2)
    assert np.max(ref.qd) == pytest.approx(1.875, rel=1e-6)


def test_scaling_path_as_reference(arm):
    """A path from ffwd.scaling is sampled at its nominal timing."""
    from ffwd.scaling import Path
    from ffwd.sim import as_reference
    times = [0.0, 0.5, 1.0]
    q = np.array([[0.0] * arm.dof, [0.3] * arm.dof, [0.1] * arm.dof])
    ref = as_reference(Path.from_waypoints(times, q), 200.0)
    assert len(ref.t) == 201 and ref.t[-1] == pytest.approx(1.0)
    np.testing.assert_allclose(ref.q[0], q[0], atol=1e-12)
    np.testing.assert_allclose(ref.q[100], q[1], atol=1e-12)
    np.testing.assert_allclose(np.gradient(ref.q, ref.dt, axis=0)[1:-1], ref.qd[1:-1], atol=2e-2)


def test_c_plant_equals_twin_plant_on_random_robots():
    """Property: the C plant (ffwd._plant) and its numpy copy give the same sensor
    samples and states on random robots, integrators and sensor settings."""
    if not _have_c():
        from conftest import require_build
        require_build("ffwd._plant is not importable")
    from hypothesis import given, settings, strategies as st
    from strategies import robots

    @settings(max_examples=min(settings.default.max_examples, 30), deadline=None)
    @given(robot=robots(max_dof=5), integrator=st.sampled_from(["rk4", "euler"]),
           delay=st.integers(0, 3), cpr=st.sampled_from([0.0, 4096.0, 1e6]),
           noise=st.sampled_from([0.0, 1e-3]), seed=st.integers(0, 2 ** 64 - 1),
           data=st.data())
    def check(robot, integrator, delay, cpr, noise, seed, data):
        n = robot.dof
        q0 = np.array(data.draw(st.lists(st.floats(-1, 1), min_size=n, max_size=n)))
        tau = np.array(data.draw(st.lists(st.floats(-5, 5), min_size=n, max_size=n)))
        kw = dict(integrator=integrator, delay=delay, counts_per_rev=cpr, noise_q=noise,
                  noise_qd=noise, seed=seed, q0=q0)
        a = Plant(robot, 1e-3, backend="c", **kw)
        b = Plant(robot, 1e-3, backend="twin", **kw)
        for k in range(4):
            a.step(tau)
            b.step(tau)
        for x, y in zip(a.state() + a.measure(), b.state() + b.measure()):
            # quantisation can round a 1e-12 difference to the other count: allow one count
            step = 2 * np.pi / cpr if cpr else 0.0
            np.testing.assert_allclose(x, y, rtol=1e-8, atol=1e-9 + step)
        np.testing.assert_array_equal(a.tau, b.tau)

    check()
