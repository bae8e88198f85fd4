"""The loop runner ffwd-loop (its input checks and its JSON) and `ffwd simulate`.
Timing figures are printed, never asserted."""
import json
import os
import subprocess

import numpy as np
import pytest

import ffwd
from ffwd.sim import Reference, demo_path, write_loop_trajectory, write_model_file

from conftest import require_build

HERE = os.path.dirname(__file__)


@pytest.fixture(scope="module")
def robot():
    return ffwd.load(os.path.join(HERE, "..", "examples", "robots", "six_axis.toml"))


@pytest.fixture(scope="module")
def loop_exe():
    from ffwd.sim.loop import find_program
    try:
        return find_program("ffwd-loop")
    except FileNotFoundError as exc:
        require_build(str(exc))


def short_path(robot, seconds=0.6, rate=1000.0):
    ref = demo_path(robot, rate)
    n = int(seconds * rate)
    return Reference(ref.t[:n], ref.q[:n], ref.qd[:n], ref.qdd[:n])


@pytest.fixture
def files(robot, tmp_path):
    model = write_model_file(robot, tmp_path / "model.txt")
    traj = write_loop_trajectory(short_path(robot), tmp_path / "ref.csv")
    return str(model), str(traj), tmp_path


def test_loop_json(loop_exe, files):
    model, traj, tmp = files
    out = tmp / "loop.json"
    p = subprocess.run([loop_exe, "--model", model, "--traj", traj, "--rate", "1000",
                        "--settle", "0.1", "--json", str(out)], capture_output=True, text=True,
                       timeout=120)
    assert p.returncode == 0, p.stderr
    doc = json.loads(out.read_text())
    assert doc["cycles"] == 600 + 100 and doc["rate_hz"] == 1000
    assert [r["feedforward"] for r in doc["runs"]] == [False, True]
    for run in doc["runs"]:
        for key in ("wakeup_us", "compute_us", "plant_us"):
            s = run[key]
            assert sum(s["hist"]) + s["hist_overflow"] == doc["cycles"]
            assert 0 <= s["p50"] <= s["p99"] <= s["max"]
        assert 0 <= run["deadline_misses"] <= doc["cycles"]
        assert len(run["rms_error"]) == 6
    pd, ff = doc["runs"]
    assert ff["rms_error_overall"] < pd["rms_error_overall"]
    print(f"\nffwd-loop 1 kHz, {doc['cycles']} cycles: misses {pd['deadline_misses']}/"
          f"{ff['deadline_misses']}, wake-up p99 {ff['wakeup_us']['p99']:.1f} us, "
          f"compute p99 {ff['compute_us']['p99']:.2f} us")


def _fails(exe, args, words):
    p = subprocess.run([exe, *args], capture_output=True, text=True, timeout=60)
    assert p.returncode == 2, (args, p.stdout, p.stderr)
    lines = p.stderr.strip().splitlines()
    assert len(lines) == 1 and words in lines[0], p.stderr


def test_loop_rejects_bad_input(loop_exe, files, robot):
    model, traj, tmp = files
    _fails(loop_exe, ["--model", model], "--traj")
    _fails(loop_exe, ["--model", model, "--traj", traj, "--rate", "20000"], "--rate")
    _fails(loop_exe, ["--model", model, "--traj", traj, "--rate", "500"], "does not match")
    _fails(loop_exe, ["--model", model, "--traj", traj, "--kp", "1,2"], "--kp")
    _fails(loop_exe, ["--model", str(tmp / "nope.txt"), "--traj", traj], "nope.txt")
    text = open(traj).read().splitlines()
    bad = tmp / "bad.csv"
    bad.write_text("\n".join(text[:5] + [text[5].replace(",", ",nan,", 1)] + text[6:]) + "\n")
    _fails(loop_exe, ["--model", model, "--traj", str(bad)], "bad.csv:6")
    bad.write_text("\n".join(text[:5] + [text[5] + ",1.0"]) + "\n")
    _fails(loop_exe, ["--model", model, "--traj", str(bad)], "columns")
    m = open(model).read()
    badm = tmp / "badm.txt"
    badm.write_text(m.replace("payload", "payload 1 2"))
    _fails(loop_exe, ["--model", str(badm), "--traj", traj], "badm.txt")
    lines = m.splitlines()
    j = next(i for i, line in enumerate(lines) if line.startswith("joint 1 "))
    fields = lines[j].split()
    fields[20] = "-3"     # negative mass of joint 1
    lines[j] = " ".join(fields)
    badm.write_text("\n".join(lines) + "\n")
    _fails(loop_exe, ["--model", str(badm), "--traj", traj], "model check failed")


def test_flat_model_round_trip(robot, tmp_path):
    from ffwd.pack import model_fields
    from ffwd.sim import read_model_file
    back = read_model_file(write_model_file(robot, tmp_path / "m.txt"))
    f = model_fields(robot)
    assert back["dof"] == f.dof
    np.testing.assert_array_equal(np.array([j["inertia"] for j in back["joint"]]), f.inertia)
    np.testing.assert_array_equal(back["payload"], f.payload)
    np.testing.assert_array_equal(np.array([j["tau_max"] for j in back["joint"]]), f.limits[:, 5])


def test_cli_track(robot, tmp_path):
    from ffwd.cli import main
    from ffwd.sim.plant import _have_c
    from ffwd.trajio import write_trajectory
    if not _have_c():
        require_build("ffwd._plant is not importable")
    ref = short_path(robot, 1.0)
    csv = tmp_path / "ref.csv"
    write_trajectory(csv, ref.t, robot.joint_names, ref.q, ref.qd, ref.qdd)
    model = os.path.join(HERE, "..", "examples", "robots", "six_axis.toml")
    out = tmp_path / "out"
    assert main(["simulate", "track", model, "--trajectory", str(csv), "--out", str(out),
                 "--mismatch", "0.1", "--require-ratio", "3"]) == 0
    doc = json.loads((out / "track.json").read_text())
    assert doc["ratio"] >= 3 and (out / "tracking.png").stat().st_size > 10000
    assert main(["simulate", "track", model, "--trajectory", str(csv), "--out", str(out),
                 "--require-ratio", "1e9"]) == 1
    assert main(["simulate", "track", model, "--trajectory", str(tmp_path / "none.csv"),
                 "--out", str(out)]) == 2


def test_cli_loop(robot, loop_exe, tmp_path):
    from ffwd.cli import main
    from ffwd.trajio import write_trajectory
    ref = short_path(robot, 0.5)
    csv = tmp_path / "ref.csv"
    write_trajectory(csv, ref.t, robot.joint_names, ref.q, ref.qd, ref.qdd)
    model = os.path.join(HERE, "..", "examples", "robots", "six_axis.toml")
    out = tmp_path / "out"
    assert main(["simulate", "loop", model, "--trajectory", str(csv), "--out", str(out),
                 "--rate", "2000"]) == 0
    doc = json.loads((out / "loop.json").read_text())
    assert doc["rate_hz"] == 2000 and (out / "latency.png").exists()
