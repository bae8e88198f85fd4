"""The online governor: limits at every cycle, stop-within-window, override steps,
bad input. Property tests run the C governor (ffwd._governor); a few small cases
run the twin too."""
import dataclasses
import os

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ffwd import ModelError
from ffwd.model import Drive, Joint, Limits, Link, Robot
from ffwd.scaling import Governor, InfeasiblePath, Path, time_optimal
from ffwd.scaling.check import can_stop, violations
from ffwd.scaling.governor import MAX_HORIZON, _c_available

Y = np.array([0.0, 1.0, 0.0])


def require_build(reason):
    """Skip without a build; fail under `make test` (FFWD_REQUIRE_BUILD=1)."""
    if os.environ.get("FFWD_REQUIRE_BUILD") == "1":
        pytest.fail(f"the package is not built: {reason}")
    pytest.skip(reason)


def arm(torque=(60.0, 20.0), velocity=(2.0, 2.5), acceleration=(8.0, 12.0), jerk=(None, None)):
    def link(m, l):
        return Link(m, [l / 2, 0.0, 0.0], np.diag([0.01, m * l * l / 12, m * l * l / 12]))
    drive = Drive(gear_ratio=50.0, rotor_inertia=1e-5, viscous=0.5, coulomb=1.0, coulomb_band=0.02)
    js = [Joint(f"j{i + 1}", "revolute", i - 1, np.eye(3), np.array([x0, 0.0, 0.0]), Y,
                link(m, l), drive, Limits(None, velocity[i], acceleration[i], jerk[i], torque[i]))
          for i, (m, l, x0) in enumerate(((3.0, 0.5, 0.0), (2.0, 0.4, 0.5)))]
    return Robot("arm", np.array([0.0, 0.0, -9.81]), tuple(js))


PATH = Path.from_waypoints([0.0, 0.5, 1.0], [[0.0, 0.3], [0.5, -0.2], [0.9, 0.4]])


@pytest.fixture(scope="module")
def c_backend():
    if not _c_available():
        require_build("ffwd._governor is not importable (run `make install`)")
    return "c"


def steps(times, values):
    """Piecewise-constant override command."""
    times, values = np.asarray(times, float), np.asarray(values, float)
    return lambda t: float(values[np.searchsorted(times, t, side="right") - 1])


def check_run(robot, path, run, gov, dense_stop_checks=6):
    assert run.done, "the end of the path was not reached at rest"
    v = violations(robot, run.q, run.qd, run.qdd)
    assert v["torque"] == 0 and v["velocity"] == 0 and v["acceleration"] == 0, v
    assert run.override.max() <= gov.override_max + 1e-12 and run.override.min() >= 0.0
    assert np.all(np.abs(run.rate) <= gov.rate_max * (1 + 1e-9))
    # (b) at every cycle: the rate of rate within its bound, no JERK flag, and each
    # joint's jerk, the change of the commanded qdd over one cycle / dt, within its limit
    rr = np.diff(np.concatenate([[0.0], run.rate])) / gov.dt
    assert np.all(np.abs(rr) <= gov.rate_rate_max * (1 + 1e-9)), np.abs(rr).max()
    assert np.count_nonzero(run.flags & 8) == 0
    jmax = np.array([j.limits.jerk if j.limits.jerk else np.inf for j in robot.joints])
    if len(run.t) > 1 and np.isfinite(jmax).any():
        ratio = np.abs(np.diff(run.qdd, axis=0) / gov.dt) / jmax
        assert ratio.max() <= 1.0 + 1e-9, ratio.max()
    assert run.s[-1] == pytest.approx(path.duration, abs=1e-9)
    assert np.all(np.diff(run.s) >= -1e-15)
    # stop within the window, checked independently by offline reachability
    idx = np.linspace(0, len(run.t) - 1, dense_stop_checks).astype(int)
    for i in idx:
        ok, k_safe = can_stop(robot, path, run.s[i], run.override[i], run.window_end[i],
                              grid_step=gov.ds / 2)
        assert ok, (i, run.s[i], run.override[i], k_safe)
    return v


def test_twin_run_keeps_limits_and_reaches_the_end():
    robot = arm()
    gov = Governor(robot, PATH, horizon=24, dt=0.01, ds=0.01, backend="twin")
    run = gov.run(steps([0, 0.2, 0.4], [1.0, 0.0, 1.0]))
    check_run(robot, PATH, run, gov)
    assert np.any(run.flags & 1)        # it stopped in the 0 % phase


def test_override_step_to_zero_and_back(c_backend):
    robot = arm()
    gov = Governor(robot, PATH, horizon=64, dt=0.002, ds=0.002, backend=c_backend)
    cmd = steps([0, 0.15, 0.5, 0.52], [1.0, 0.0, 1.0, 0.3])
    run = gov.run(cmd)
    check_run(robot, PATH, run, gov)
    # (d) a feasible command is reached, within the bounds of (b)
    late = run.t > 1.0
    assert np.any(np.abs(run.override[late] - 0.3) < 1e-9)
    # (b) the rate of rate stays bounded at every cycle
    assert np.all(np.abs(run.rate_rate) <= gov.rate_rate_max * (1 + 1e-9))


@pytest.mark.parametrize("horizon", [48, 128])
def test_joint_jerk_limits_hold_at_every_cycle(c_backend, horizon):
    # tight jerk limits and a stop to 0 % and back: check_run asserts every cycle's
    # joint jerk (and rate of rate); the old governor reached 30x the limit here
    robot = arm(jerk=(40.0, 60.0))
    gov = Governor(robot, PATH, horizon=horizon, dt=0.002, ds=0.004, rate_max=20.0,
                   rate_rate_max=400.0, backend=c_backend)
    for cmd in (1.0, steps([0, 0.2, 0.4], [1.0, 0.0, 1.0])):
        run = gov.run(cmd)
        check_run(robot, PATH, run, gov)
        ratio = np.abs(np.diff(run.qdd, axis=0) / gov.dt) / np.array([40.0, 60.0])
        assert ratio.max() > 0.9        # the limit is used, not just kept


def test_full_command_long_window_is_near_offline_optimum(c_backend):
    # with the command at its maximum and a long window, within 5 % of the offline plan
    robot = arm()
    plan = time_optimal(robot, PATH, grid=1000)
    gov = Governor(robot, PATH, horizon=256, dt=0.001, ds=0.002, override_max=4.0,
                   rate_max=200.0, rate_rate_max=1e6, margin=0.01, backend=c_backend)
    run = gov.run(4.0)
    check_run(robot, PATH, run, gov)
    ratio = run.duration / plan.duration
    assert 0.98 < ratio <= 1.05, ratio


def random_arm(draw_values, dof):
    """A serial arm of dof revolute joints with invented random numbers."""
    rng = np.random.default_rng(draw_values)
    js = []
    for i in range(dof):
        m, l = rng.uniform(0.5, 4.0), rng.uniform(0.2, 0.6)
        axis = np.array([0.0, 0.0, 1.0]) if (i == 0 and rng.random() < 0.5) else Y
        link = Link(m, [l / 2, 0.0, 0.0], np.diag([0.1, 1.0, 1.0]) * (m * l * l / 12))
        drive = Drive(gear_ratio=rng.uniform(1, 100), rotor_inertia=rng.uniform(0, 1e-5),
                      viscous=rng.uniform(0, 2), coulomb=rng.uniform(0, 2),
                      coulomb_band=rng.uniform(0.005, 0.05))
        js.append(Joint(f"j{i + 1}", "revolute", i - 1, np.eye(3),
                        np.array([0.4 if i else 0.0, 0.0, 0.0]), axis, link, drive,
                        Limits(None, 1.0, 1.0, None, 1.0)))
    return Robot("random_arm", np.array([0.0, 0.0, -9.81]), tuple(js)), rng


def with_feasible_limits(robot, path, rng, jerk=False):
    """Torque limits a random factor above what holding still along the path needs."""
    from ffwd.twin import gravity_torque
    s = path.grid(20)
    g = np.array([np.abs(gravity_torque(robot, path.q(si))) for si in s]).max(axis=0)
    js = []
    for i, j in enumerate(robot.joints):
        tau = (g[i] + j.drive.coulomb) * rng.uniform(1.3, 3.0) + rng.uniform(0.5, 5.0)
        js.append(dataclasses.replace(j, limits=Limits(
            None, rng.uniform(0.5, 3.0), rng.uniform(2.0, 30.0),
            rng.uniform(50.0, 500.0) if jerk else None, tau)))
    return Robot(robot.name, robot.gravity, tuple(js))


def audit_scenario(seed, backend="c"):
    """The random scenario of the governor audit (tests/audit) for one seed: robot, path,
    governor, override command (steps at random times) and the generator, which the
    audit draws on further."""
    rng = np.random.default_rng(seed)
    dof = int(rng.integers(1, 7))
    robot, rng = random_arm(int(rng.integers(0, 2 ** 31 - 1)), dof)
    n_way = int(rng.integers(2, 5))
    times = np.cumsum(np.concatenate([[0.0], rng.uniform(0.2, 0.8, n_way - 1)]))
    path = Path.from_waypoints(times, rng.uniform(-1.2, 1.2, (n_way, dof)),
                               kind=str(rng.choice(["cubic", "quintic"])))
    robot = with_feasible_limits(robot, path, rng, jerk=bool(rng.random() < 0.5))
    override_max = float(rng.choice([1.0, 1.5, 2.0]))
    n_steps = int(rng.integers(1, 6))
    t_steps = np.concatenate([[0.0], np.sort(rng.uniform(0, 2 * path.duration, n_steps - 1))])
    k_steps = rng.choice([0.0, 0.05, 0.3, 0.7, 1.0, override_max], n_steps)
    k_steps[-1] = max(k_steps[-1], 0.3)
    dt = float(rng.choice([0.001, 0.002, 0.004]))
    gov = Governor(robot, path, horizon=int(rng.choice([4, 16, 64, 128])), dt=dt,
                   ds=dt * float(rng.choice([1.0, 2.0])), override_max=override_max,
                   rate_max=float(rng.uniform(2, 50)), rate_rate_max=float(rng.uniform(50, 5000)),
                   backend=backend)
    return robot, path, gov, steps(t_steps, k_steps), rng


@st.composite
def scenarios(draw):
    dof = draw(st.integers(1, 3))
    seed = draw(st.integers(0, 2 ** 31 - 1))
    robot, rng = random_arm(seed, dof)
    n_way = draw(st.integers(2, 4))
    times = np.cumsum(np.concatenate([[0.0], rng.uniform(0.2, 0.6, n_way - 1)]))
    q = rng.uniform(-1.0, 1.0, (n_way, dof))
    path = Path.from_waypoints(times, q)
    robot = with_feasible_limits(robot, path, rng, jerk=draw(st.booleans()))
    n_steps = draw(st.integers(1, 4))
    t_steps = np.concatenate([[0.0], np.sort(rng.uniform(0.0, 2.0, n_steps - 1))])
    k_steps = [draw(st.sampled_from([0.0, 0.1, 0.5, 1.0, 1.5])) for _ in range(n_steps)]
    if all(k == 0.0 for k in k_steps):
        k_steps[-1] = 1.0
    k_steps[-1] = max(k_steps[-1], 0.3)        # the run ends
    horizon = draw(st.sampled_from([8, 32, 64]))
    return robot, path, t_steps, k_steps, horizon


@settings(deadline=None)
@given(scenarios())
def test_property_no_violation_and_can_always_stop(c_backend, scenario):
    robot, path, t_steps, k_steps, horizon = scenario
    gov = Governor(robot, path, horizon=horizon, dt=0.002, ds=0.004, override_max=1.5,
                   backend=c_backend)
    run = gov.run(steps(t_steps, k_steps))
    check_run(robot, path, run, gov, dense_stop_checks=4)


# ---- bad input
def test_bad_configuration():
    robot = arm()
    with pytest.raises(ValueError, match="horizon"):
        Governor(robot, PATH, horizon=0)
    with pytest.raises(ValueError, match="horizon"):
        Governor(robot, PATH, horizon=MAX_HORIZON + 1)
    with pytest.raises(ValueError, match="dt"):
        Governor(robot, PATH, dt=0.0)
    with pytest.raises(ValueError, match="dt"):
        Governor(robot, PATH, dt=-0.001)
    with pytest.raises(ValueError, match="margin"):
        Governor(robot, PATH, margin=0.7)
    with pytest.raises(ValueError, match="override"):
        Governor(robot, PATH, backend="twin").run(np.array([1.0, np.nan]))


def test_missing_limits_are_model_errors():
    robot = arm()
    j = dataclasses.replace(robot.joints[0], limits=Limits(None, None, 8.0, None, 60.0))
    bad = Robot("arm", robot.gravity, (j, robot.joints[1]))
    with pytest.raises(ModelError, match="j1.*limits.velocity"):
        Governor(bad, PATH)


@pytest.mark.parametrize("backend", ["twin", "c"])
def test_infeasible_path_is_located(backend):
    if backend == "c" and not _c_available():
        require_build("ffwd._governor is not importable")
    robot = arm(torque=(15.0, 20.0))        # cannot hold the arm out (needs ~ 21 N m)
    gov = Governor(robot, PATH, horizon=8, dt=0.01, ds=0.01, backend=backend)
    with pytest.raises(InfeasiblePath) as info:
        gov.run(1.0)
    assert info.value.joint == "j1" and info.value.limit == "torque" and info.value.index == 0


@settings(deadline=None, max_examples=300)
@given(st.floats(-50.0, -1e-6), st.floats(1.0, 1e5), st.sampled_from([1e-4, 5e-4, 1e-3, 4e-3]))
def test_ramp_need_lies_in_the_band_the_c_core_tests_first(u, Vp, dt):
    """The C core decides kn >= ramp_need(u) from the band c [r (r - 1), (r - 1/2)^2]
    (c = Vp dt^2 / 2, r = -u / (Vp dt)) and computes ramp_need only inside it
    (governor.c need_below, ramp_run). Derivation: with m = floor(r),
    ramp_need / c = 2 m r - m (m + 1), a parabola in m whose values at m = r - 1 and
    m = r are r (r - 1) and whose top, at m = r - 1/2, is (r - 1/2)^2 (algebra, no
    source). Checked here against the twin's exact formula."""
    from ffwd.twin.governor import GovernorTwin
    g = GovernorTwin.__new__(GovernorTwin)
    g.dt = dt
    need = g.ramp_need(u, Vp)
    h = Vp * dt
    c, r = 0.5 * h * dt, -u / h
    tol = 1e-9 * (r * r + 1.0) * c
    if r >= 1.0:
        assert c * r * (r - 1.0) - tol <= need <= c * (r - 0.5) ** 2 + tol
    else:
        assert need == 0.0
