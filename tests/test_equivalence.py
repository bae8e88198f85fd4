"""The C core through pybind11, the shipped libffwd through cffi, and the numpy twin agree.

Random robots from tests/strategies.py (1..16 joints, trees, prismatic joints, friction,
payloads, tool frames) at random states; every function, single samples and batches.
Agreement: |x - twin| <= 1e-9 * (|twin| + max|twin| + 1) elementwise (relative, with a
floor scaled by the output's size). The "ci" hypothesis profile runs >= 200 examples per
property.
"""
import numpy as np
import pytest
from hypothesis import given, strategies as st

from ffwd import Dynamics
from strategies import payloads, robots, robots_with_states, states

RTOL = 1e-9
FUNCTIONS = {
    # name: argument names
    "inverse_dynamics": ("q", "qd", "qdd"),
    "gravity": ("q",),
    "torque_parts": ("q", "qd", "qdd"),
    "mass_matrix": ("q",),
    "forward_dynamics": ("q", "qd", "tau"),
    "tool_pose": ("q",),
    "tool_jacobian": ("q",),
    "regressor": ("q", "qd", "qdd"),
}


@pytest.fixture(scope="module")
def backends(core, shipped_library):
    """Names of the compiled backends compared with the twin."""
    return ("c", shipped_library)


def assert_close(got, want, what):
    got, want = np.asarray(got, float), np.asarray(want, float)
    assert got.shape == want.shape, f"{what}: shape {got.shape} != {want.shape}"
    scale = np.max(np.abs(want), initial=0.0) + 1.0
    err = np.abs(got - want)
    tol = RTOL * (np.abs(want) + scale)
    worst = np.unravel_index(np.argmax(err - tol), err.shape) if err.size else ()
    assert np.all(err <= tol), (f"{what}: differs at {worst}: {got[worst]!r} vs {want[worst]!r} "
                                f"(|diff| {err[worst]:.3g}, tolerance {tol[worst]:.3g})")


def compare(robot, name, args, backends):
    twin = Dynamics(robot, "twin")
    want = getattr(twin, name)(*args)
    for b in backends:
        got = getattr(Dynamics(robot, b), name)(*args)
        if name == "torque_parts":
            for part, g, w in zip(want._fields, got, want):
                assert_close(g, w, f"{name}.{part} backend {b}")
        else:
            assert_close(got, want, f"{name} backend {b}")
    return want


def arguments(robot, name, state):
    q, qd, qdd = state
    if name == "forward_dynamics":
        # torques that the twin says produce qdd: forward dynamics must give qdd back
        tau = Dynamics(robot, "twin").inverse_dynamics(q, qd, qdd)
        return (q, qd, tau)
    return (q, qd, qdd)[:len(FUNCTIONS[name])]


@given(robots_with_states())
def test_every_function_agrees(backends, rs):
    """Every function: C, cffi and twin agree on one random robot and state.

    One robot per example for all eight functions keeps the cost of drawing robots (the
    bulk of the time) down; the ci profile runs >= 200 examples, so >= 200 per function."""
    robot, state = rs
    for name in FUNCTIONS:
        compare(robot, name, arguments(robot, name, state), backends)


@given(robots(max_dof=8), st.integers(0, 4), st.data())
def test_batches_match_single_samples(backends, robot, n_samples, data):
    """A batch (N, n) gives the stacked single-sample results, for every function."""
    samples = [data.draw(states(robot.dof)) for _ in range(n_samples)]
    q = np.array([s[0] for s in samples]).reshape(n_samples, robot.dof)
    qd = np.array([s[1] for s in samples]).reshape(n_samples, robot.dof)
    qdd = np.array([s[2] for s in samples]).reshape(n_samples, robot.dof)
    twin = Dynamics(robot, "twin")
    for b in backends:
        dyn = Dynamics(robot, b)
        for name, argnames in FUNCTIONS.items():
            args = (q, qd, qdd)[:len(argnames)]
            batch = getattr(dyn, name)(*args)
            parts = batch if name == "torque_parts" else (batch,)
            for k, part in enumerate(parts):
                if n_samples == 0:
                    assert part.shape[0] == 0, f"{name} backend {b}: empty batch"
                    continue
                for i in range(n_samples):
                    one = getattr(dyn, name)(*(a[i] for a in args))
                    one = one[k] if name == "torque_parts" else one
                    assert_close(part[i], one, f"{name} backend {b} batch sample {i}")
                    ref = getattr(twin, name)(*(a[i] for a in args))
                    ref = ref[k] if name == "torque_parts" else ref
                    assert_close(part[i], ref, f"{name} backend {b} batch vs twin, sample {i}")


@given(robots_with_states(), payloads())
def test_set_payload_equals_robot_with_payload(backends, rs, payload):
    """set_payload on a running model gives what a robot built with that payload gives."""
    robot, (q, qd, qdd) = rs
    built = robot.with_payload(payload.mass, payload.com, payload.inertia)
    want_tau = Dynamics(built, "twin").inverse_dynamics(q, qd, qdd)
    want_Y = Dynamics(built, "twin").regressor(q, qd, qdd)
    for b in backends + ("twin",):
        dyn = Dynamics(robot, b)
        dyn.set_payload(payload.mass, payload.com, payload.inertia)
        assert_close(dyn.inverse_dynamics(q, qd, qdd), want_tau, f"payload backend {b}")
        assert_close(dyn.regressor(q, qd, qdd), want_Y, f"payload regressor backend {b}")
        built_dyn = Dynamics(built, b)
        assert_close(built_dyn.inverse_dynamics(q, qd, qdd), want_tau, f"built backend {b}")
        assert dyn.robot.payload.mass == payload.mass
