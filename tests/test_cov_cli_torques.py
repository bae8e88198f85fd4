"""`ffwd torques`: the CSV it writes holds the dynamics' torques, the parts sum to them,
missing derivatives come from a spline, and a limit that is exceeded gives exit 1 with
the stretch named in limits.json and summary.md."""
import csv
import json
import os

import numpy as np
import pytest

import ffwd
from ffwd.cli import main
from ffwd.trajio import write_trajectory

ROBOT = os.path.join(os.path.dirname(__file__), "..", "examples", "robots", "planar3_vertical.toml")


@pytest.fixture(scope="module")
def robot():
    return ffwd.load(ROBOT)


def sine(amplitude, n=201, freq=1.0):
    """q = A sin(2 pi f t) per joint, with its exact derivatives."""
    t = np.linspace(0.0, 1.0, n)
    w = 2 * np.pi * freq
    A = np.asarray(amplitude, dtype=float)
    s, c = np.sin(w * t)[:, None], np.cos(w * t)[:, None]
    return t, A * s, A * w * c, -A * w * w * s


def read_columns(path):
    with open(path, newline="") as fh:
        rows = list(csv.reader(fh))
    head = rows[0]
    data = np.array(rows[1:], dtype=float)
    return {h: data[:, k] for k, h in enumerate(head)}


def test_torques_csv_matches_the_twin(robot, tmp_path, capsys):
    t, q, qd, qdd = sine([0.3, -0.2, 0.4])
    traj = tmp_path / "move.csv"
    write_trajectory(traj, t, robot.joint_names, q, qd, qdd)
    out = tmp_path / "out"
    assert main(["torques", ROBOT, str(traj), "--out", str(out), "--backend", "twin"]) == 0
    cols = read_columns(out / "torques.csv")
    tau = np.column_stack([cols[f"tau_{n}"] for n in robot.joint_names])
    want = ffwd.Dynamics(robot, "twin").inverse_dynamics(q, qd, qdd)
    np.testing.assert_allclose(tau, want, rtol=1e-10, atol=1e-9)
    parts = sum(np.column_stack([cols[f"{p}_{n}"] for n in robot.joint_names])
                for p in ("inertial", "velocity", "gravity", "friction"))
    np.testing.assert_allclose(parts, tau, rtol=1e-10, atol=1e-9)
    assert json.loads((out / "limits.json").read_text()) == []
    summary = (out / "summary.md").read_text()
    assert "No position, velocity, acceleration or torque limit is exceeded." in summary
    peak = np.max(np.abs(tau), axis=0)
    assert f"| j3 | {peak[2]:.2f} | 20.0 | {peak[2] / 20.0:.2f} |" in summary
    assert (out / "torques.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "0 limit exceedance(s)" in capsys.readouterr().out


def test_missing_derivatives_come_from_a_spline(robot, tmp_path):
    t, q, qd, qdd = sine([0.3, -0.2, 0.4], n=401)
    traj = tmp_path / "qonly.csv"
    write_trajectory(traj, t, robot.joint_names, q)
    out = tmp_path / "out"
    assert main(["torques", ROBOT, str(traj), "--out", str(out), "--backend", "twin"]) == 0
    cols = read_columns(out / "torques.csv")
    inner = slice(40, -40)     # away from the spline's not-a-knot ends
    got_qd = np.column_stack([cols[f"qd_{n}"] for n in robot.joint_names])
    got_qdd = np.column_stack([cols[f"qdd_{n}"] for n in robot.joint_names])
    # cubic spline error on a 2.5 ms grid of a 1 Hz sine: far below these bounds
    np.testing.assert_allclose(got_qd[inner], qd[inner], atol=1e-4 * np.max(np.abs(qd)))
    np.testing.assert_allclose(got_qdd[inner], qdd[inner], atol=1e-3 * np.max(np.abs(qdd)))


def test_exceeded_limits_give_exit_1_and_the_stretch(robot, tmp_path, capsys):
    # j1 swings up to 3.0 rad in a half sine: over its 2.8 rad limit around t = 0.5 s
    t, q, qd, qdd = sine([3.0, 0.0, 0.0], freq=0.5)
    traj = tmp_path / "far.csv"
    write_trajectory(traj, t, robot.joint_names, q, qd, qdd)
    out = tmp_path / "out"
    assert main(["torques", ROBOT, str(traj), "--out", str(out), "--backend", "twin"]) == 1
    over = json.loads((out / "limits.json").read_text())
    pos = [o for o in over if o["limit"] == "position"]
    assert [o["joint"] for o in pos] == ["j1"]
    above = t[q[:, 0] > 2.8]
    assert pos[0]["t_start"] == pytest.approx(above[0]) and pos[0]["t_end"] == pytest.approx(above[-1])
    assert pos[0]["worst_value"] == pytest.approx(q[:, 0].max(), rel=1e-10)
    summary = (out / "summary.md").read_text()
    assert "## Limits exceeded" in summary and "- j1 position:" in summary
    assert f"{len(over)} limit exceedance(s)" in capsys.readouterr().out


def test_c_backend_gives_the_same_csv(robot, tmp_path, core):
    t, q, qd, qdd = sine([0.3, -0.2, 0.4], n=51)
    traj = tmp_path / "move.csv"
    write_trajectory(traj, t, robot.joint_names, q, qd, qdd)
    got = {}
    for b in ("c", "twin"):
        out = tmp_path / b
        assert main(["torques", ROBOT, str(traj), "--out", str(out), "--backend", b]) == 0
        got[b] = read_columns(out / "torques.csv")
    for key in got["twin"]:
        np.testing.assert_allclose(got["c"][key], got["twin"][key], rtol=1e-9, atol=1e-9)
