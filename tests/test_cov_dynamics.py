"""ffwd.Dynamics corners: no compiled core, empty batches, payload swap on the twin."""
import os
import sys

import numpy as np
import pytest

import ffwd
from ffwd import Dynamics

ROBOT = os.path.join(os.path.dirname(__file__), "..", "examples", "robots", "planar3_vertical.toml")


@pytest.fixture(scope="module")
def robot():
    return ffwd.load(ROBOT)


def test_missing_core_says_what_to_do(robot, monkeypatch):
    monkeypatch.setitem(sys.modules, "ffwd._core", None)     # import of ffwd._core fails
    monkeypatch.delattr(ffwd, "_core", raising=False)
    with pytest.raises(ImportError) as info:
        Dynamics(robot, "c")
    text = str(info.value)
    assert "backend 'c'" in text and "ffwd._core" in text and "'twin'" in text
    assert "\n" not in text
    # speed scaling falls back to the twin by itself
    from ffwd.scaling.constraints import make_dynamics
    assert make_dynamics(robot).backend == "twin"


@pytest.mark.parametrize("backend", [
    "c", "native",
    "twin",
])
def test_empty_batch_keeps_its_shape(robot, backend, request):
    if backend == "c":
        request.getfixturevalue("core")
    if backend == "native":
        request.getfixturevalue("shipped_library")
    d = Dynamics(robot, backend)
    z = np.zeros((0, 3))
    assert d.gravity(z).shape == (0, 3)
    assert d.mass_matrix(z).shape == (0, 3, 3)


def test_twin_payload_swap_equals_a_robot_with_that_payload(robot):
    d = Dynamics(robot, "twin")
    q = np.array([0.3, -0.7, 1.1])
    d.set_payload(1.8, [0.02, 0.0, 0.04], [0.002, 0.0, 0.0, 0.002, 0.0, 0.001])
    want = Dynamics(robot.with_payload(1.8, [0.02, 0.0, 0.04],
                                       np.diag([0.002, 0.002, 0.001])), "twin").gravity(q)
    np.testing.assert_allclose(d.gravity(q), want, rtol=1e-13, atol=1e-12)
    assert d.robot.payload.mass == 1.8 and "3 joints" in repr(d)
    d.set_payload(0.0)
    np.testing.assert_allclose(d.gravity(q), Dynamics(robot.with_payload(0.0), "twin").gravity(q),
                               rtol=1e-13, atol=1e-12)
