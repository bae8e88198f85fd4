"""ffwd.scaling.Path: splines through waypoints and trajectory CSV files."""
import numpy as np
import pytest

import ffwd
from ffwd.scaling import Path


def test_waypoints_are_interpolated_and_ends_at_rest():
    t = [0.0, 0.5, 1.5, 2.0]
    q = np.array([[0.0, 1.0], [0.3, 0.8], [-0.2, 0.5], [0.1, 0.0]])
    for kind in ("cubic", "quintic"):
        p = Path.from_waypoints(t, q, kind=kind)
        assert p.duration == pytest.approx(2.0)
        np.testing.assert_allclose(p.q(np.array(t)), q, atol=1e-12)
        np.testing.assert_allclose(p.dq(0.0), 0.0, atol=1e-12)
        np.testing.assert_allclose(p.dq(2.0), 0.0, atol=1e-12)
        if kind == "quintic":
            np.testing.assert_allclose(p.ddq(0.0), 0.0, atol=1e-9)


def test_derivatives_match_finite_differences():
    p = Path.from_waypoints([0, 1, 2], [[0.0], [1.0], [0.5]], kind="quintic")
    s = np.linspace(0.1, 1.9, 7)
    h = 1e-5
    # central differences (common practice, no source)
    np.testing.assert_allclose(p.dq(s), (p.q(s + h) - p.q(s - h)) / (2 * h), atol=1e-6)
    np.testing.assert_allclose(p.ddq(s), (p.dq(s + h) - p.dq(s - h)) / (2 * h), atol=1e-5)
    np.testing.assert_allclose(p.dddq(s), (p.ddq(s + h) - p.ddq(s - h)) / (2 * h), atol=1e-4)


def test_cubic_is_c2():
    p = Path.from_waypoints([0, 1, 2, 3], [[0.0], [1.0], [0.0], [1.0]])
    for knot in (1.0, 2.0):
        a, b = p.ddq(knot - 1e-9), p.ddq(knot + 1e-9)
        np.testing.assert_allclose(a, b, atol=1e-6)


def test_grid_and_samples():
    p = Path.from_waypoints([0, 1.0], [[0.0], [1.0]])
    g = p.grid(10)
    assert len(g) == 11 and g[0] == 0.0 and g[-1] == pytest.approx(1.0)
    s, q, dq, ddq, dddq = p.samples(0.3)
    assert s[-1] == pytest.approx(1.0)
    assert np.allclose(np.diff(s), np.diff(s)[0]) and np.diff(s)[0] <= 0.3
    assert q.shape == dq.shape == ddq.shape == dddq.shape == (len(s), 1)


@pytest.mark.parametrize("times, q, match", [
    ([0.0], [[0.0]], "at least 2"),
    ([0.0, 0.0], [[0.0], [1.0]], "does not increase"),
    ([0.0, 1.0], [[0.0], [np.nan]], "not finite"),
    ([0.0, 1.0, 2.0], [[0.0], [1.0]], "to match times"),
])
def test_bad_waypoints(times, q, match):
    with pytest.raises(ValueError, match=match):
        Path.from_waypoints(times, q)


def test_from_csv(tmp_path):
    robot = ffwd.load("examples/robots/six_axis.toml")
    names = robot.joint_names
    f = tmp_path / "move.csv"
    t = np.linspace(0, 1, 6)
    rows = ["t," + ",".join(f"q_{n}" for n in names)]
    for ti in t:
        rows.append(f"{ti}," + ",".join(str(0.1 * ti * (i + 1)) for i in range(6)))
    f.write_text("\n".join(rows) + "\n")
    p = Path.from_csv(f, robot)
    assert p.dof == 6 and p.duration == pytest.approx(1.0)
    np.testing.assert_allclose(p.q(1.0), 0.1 * np.arange(1, 7), atol=1e-12)
    g = tmp_path / "bad.csv"
    g.write_text("t,q_j1\n0,0\n1,1\n")
    with pytest.raises(ValueError, match="missing column"):
        Path.from_csv(g, robot)
