"""Closed-loop tracking on the simulated arm: feedforward against PD alone, with the
plant equal to the model and with a 10 % parameter mismatch; the C loop runner in
free-run mode against the offline Python run; integrator energy drift."""
import dataclasses
import os

import numpy as np
import pytest

import ffwd
from ffwd.sim import compare, demo_path, mismatched, track
from ffwd.sim.plant import Plant, _have_c

from conftest import require_build

HERE = os.path.dirname(__file__)


@pytest.fixture(scope="module")
def robot():
    return ffwd.load(os.path.join(HERE, "..", "examples", "robots", "six_axis.toml"))


@pytest.fixture(scope="module")
def c_plant():
    if not _have_c():
        require_build("ffwd._plant is not importable")


def frictionless(robot):
    joints = [dataclasses.replace(j, drive=dataclasses.replace(j.drive, viscous=0.0, coulomb=0.0))
              for j in robot.joints]
    return dataclasses.replace(robot, joints=tuple(joints))


@pytest.mark.parametrize("mismatch, factor", [(0.0, 10.0), (0.1, 3.0)])
def test_feedforward_beats_pd(robot, c_plant, mismatch, factor):
    pd, ff, ratio = compare(robot, mismatch=mismatch, backend="c")
    print(f"\nmismatch {mismatch:.0%}: RMS error PD {pd.rms_error_overall:.3e} rad, "
          f"PD+FF {ff.rms_error_overall:.3e} rad, ratio {ratio:.1f}")
    assert ff.rms_error_overall * factor <= pd.rms_error_overall
    assert np.all(ff.rms_error < pd.rms_error)
    assert pd.saturated_steps == 0 and ff.saturated_steps == 0


def test_track_result_shape_and_units(robot, c_plant):
    run = track(robot, feedforward=True, backend="c", settle=0.1)
    ref = demo_path(robot, 1000.0)
    assert len(run.t) == len(ref.t) + 100
    assert run.q.shape == run.q_ref.shape == (len(run.t), robot.dof)
    assert run.rms_error.shape == (robot.dof,)
    assert run.rms_error_overall == pytest.approx(np.sqrt(np.mean(run.error ** 2)))
    s = run.summary(robot.joint_names)
    assert set(s["rms_error"]) == set(robot.joint_names)


def test_wrong_model_is_worse_than_right_model(robot, c_plant):
    """Sanity of the mismatch: a plant 10 % heavier than the model tracks worse with
    feedforward than the exact plant, by roughly the missing 10 % of the torque."""
    exact = track(robot, backend="c")
    wrong = track(robot, mismatch=0.1, backend="c")
    assert wrong.rms_error_overall > 5 * exact.rms_error_overall


def test_mismatched_scales_parameters(robot):
    heavy = mismatched(robot, 0.1)
    np.testing.assert_allclose(heavy.parameter_vector(), 1.1 * robot.parameter_vector(),
                               rtol=1e-12, atol=1e-12)
    assert mismatched(robot, 0.0) is robot
    with pytest.raises(ValueError, match="mismatch"):
        mismatched(robot, -1.5)


def test_twin_plant_equals_c_plant(robot, c_plant):
    """Same integrators, saturation, quantisation, delay and noise generator in both."""
    kw = dict(delay=3, counts_per_rev=2 ** 20, noise_q=1e-4, noise_qd=1e-3, seed=11,
              q0=np.linspace(-0.5, 0.5, robot.dof))
    for integrator in ("rk4", "euler"):
        a = Plant(robot, 1e-3, integrator=integrator, backend="c", **kw)
        b = Plant(robot, 1e-3, integrator=integrator, backend="twin", **kw)
        tau = np.array([50.0, 400.0, 100.0, 10.0, 5.0, 2.0])
        for k in range(30):
            a.step(tau * np.cos(0.1 * k))
            b.step(tau * np.cos(0.1 * k))
            for x, y in zip(a.measure() + a.state(), b.measure() + b.state()):
                np.testing.assert_allclose(x, y, rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize("integrator", ["rk4", "euler"])
def test_energy_drift(robot, c_plant, integrator):
    """A frictionless arm with zero torque keeps its energy (Lagrangian mechanics, common
    textbook fact); the drift over 10 s at 1 kHz is the integrator's error. RK4 must stay
    below 1e-6 of the peak kinetic energy; semi-implicit Euler's drift is reported."""
    from ffwd.sim import energy
    arm = frictionless(robot)
    q0 = np.array([0.2, -0.4, 0.6, 0.3, -0.5, 0.1])
    qd0 = np.array([0.8, -0.6, 0.9, 1.5, -1.2, 2.0])
    plant = Plant(arm, 1e-3, integrator=integrator, q0=q0, qd0=qd0, saturate=False, backend="c")
    ke, pe = energy(arm, q0, qd0)
    e0, ke_max, worst = ke + pe, ke, 0.0
    zero = np.zeros(arm.dof)
    for k in range(10000):
        plant.step(zero)
        if k % 50 == 49:
            ke, pe = energy(arm, *plant.state())
            worst = max(worst, abs(ke + pe - e0))
            ke_max = max(ke_max, ke)
    rel = worst / ke_max
    print(f"\n{integrator}: energy drift over 10 s at 1 kHz = {rel:.3e} of the peak kinetic "
          f"energy ({worst / abs(e0):.3e} of |E0|)")
    if integrator == "rk4":
        assert rel < 1e-6
    else:
        assert rel < 0.2      # bounded, reported


def test_c_loop_free_run_equals_python_run(robot, c_plant):
    """ffwd-loop without sleeping computes the same closed loop as ffwd.sim.track."""
    from ffwd.sim.loop import find_program, run_loop
    try:
        find_program("ffwd-loop")
    except FileNotFoundError as exc:
        require_build(str(exc))
    result = run_loop(robot, mismatch=0.1, free_run=True, delay=1, settle=0.1)
    for run in result["runs"]:
        py = track(robot, feedforward=run["feedforward"], mismatch=0.1, delay=1, settle=0.1,
                   backend="c")
        np.testing.assert_allclose(run["rms_error"], py.rms_error, rtol=1e-9)
        np.testing.assert_allclose(result["kp"], py.kp, rtol=1e-9)
    assert [r["feedforward"] for r in result["runs"]] == [False, True]


def test_track_rejects_bad_arguments(robot):
    with pytest.raises(ValueError, match="rate_hz"):
        track(robot, rate_hz=0)
    with pytest.raises(ValueError, match="integrator"):
        Plant(robot, 1e-3, integrator="leapfrog", backend="twin")
    with pytest.raises(ValueError, match="delay"):
        Plant(robot, 1e-3, delay=1000, backend="twin")
    with pytest.raises(ValueError, match="tau"):
        Plant(robot, 1e-3, backend="twin").step([0.0, 1.0])
    with pytest.raises(ValueError, match="path"):
        track(robot, path=object())
