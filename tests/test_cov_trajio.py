"""ffwd/trajio.py: trajectory CSV round trip, column mapping by name, optional derivatives."""
import numpy as np
import pytest

from ffwd.trajio import read_trajectory, write_trajectory

NAMES = ("a1", "a2")


def test_round_trip_keeps_12_significant_digits(tmp_path):
    rng = np.random.default_rng(3)
    t = np.cumsum(rng.uniform(0.001, 0.01, 20))
    q, qd, qdd = (rng.normal(size=(20, 2)) * s for s in (1.0, 10.0, 1e3))
    path = tmp_path / "rt.csv"
    write_trajectory(path, t, NAMES, q, qd, qdd, extra={"tau_a1": q[:, 0] * 7.0})
    header = path.read_text().splitlines()[0].split(",")
    assert header == ["t", "q_a1", "q_a2", "qd_a1", "qd_a2", "qdd_a1", "qdd_a2", "tau_a1"]
    tr = read_trajectory(path, NAMES)
    for got, want in ((tr.t, t), (tr.q, q), (tr.qd, qd), (tr.qdd, qdd)):
        np.testing.assert_allclose(got, want, rtol=1e-11, atol=0)


def test_columns_are_found_by_name_not_position(tmp_path):
    path = tmp_path / "order.csv"
    path.write_text("q_a2,extra,t,q_a1\n20,0,0.0,10\n21,0,0.5,11\n22,0,1.0,12\n")
    tr = read_trajectory(path, NAMES)
    np.testing.assert_array_equal(tr.t, [0.0, 0.5, 1.0])
    np.testing.assert_array_equal(tr.q, [[10, 20], [11, 21], [12, 22]])
    assert tr.qd is None and tr.qdd is None


def test_blank_lines_are_skipped(tmp_path):
    path = tmp_path / "blank.csv"
    path.write_text("t,q_a1,q_a2\n0,1,2\n\n,,\n1,3,4\n")
    tr = read_trajectory(path, NAMES)
    np.testing.assert_array_equal(tr.q, [[1, 2], [3, 4]])


def test_velocity_without_acceleration(tmp_path):
    path = tmp_path / "qd.csv"
    write_trajectory(path, [0.0, 1.0], NAMES, np.zeros((2, 2)), qd=np.ones((2, 2)))
    tr = read_trajectory(path, NAMES)
    np.testing.assert_array_equal(tr.qd, np.ones((2, 2)))
    assert tr.qdd is None


def test_velocity_for_some_joints_only_is_refused(tmp_path):
    path = tmp_path / "partial.csv"
    path.write_text("t,q_a1,q_a2,qd_a1\n0,0,0,0\n1,1,1,1\n")
    with pytest.raises(ValueError, match=r"partial\.csv: missing column\(s\) qd_a2"):
        read_trajectory(path, NAMES)
