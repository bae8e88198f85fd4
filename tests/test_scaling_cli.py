"""`ffwd scale` and `ffwd govern` end to end: files written, exit codes, located errors."""
import json

import numpy as np
import pytest

import ffwd
from ffwd.cli import main

MODEL = "examples/robots/planar3_vertical.toml"


@pytest.fixture()
def move(tmp_path):
    robot = ffwd.load(MODEL)
    f = tmp_path / "move.csv"
    t = np.array([0.0, 0.6, 1.2])
    q = np.array([[0.0] * robot.dof, [0.3] * robot.dof, [0.6] * robot.dof])
    q[:, 0] *= -1
    lines = ["t," + ",".join(f"q_{n}" for n in robot.joint_names)]
    lines += [f"{ti}," + ",".join(str(v) for v in qi) for ti, qi in zip(t, q)]
    f.write_text("\n".join(lines) + "\n")
    return f


def test_scale_writes_plan_and_report(tmp_path, move):
    out = tmp_path / "scale"
    assert main(["scale", MODEL, str(move), "--out", str(out), "--grid", "100",
                 "--backend", "twin"]) == 0
    for name in ("plan.csv", "active.md", "active.json", "torques.png", "phase.png"):
        assert (out / name).stat().st_size > 0, name
    rep = json.loads((out / "active.json").read_text())
    assert rep["duration_s"] > 0 and rep["active"]
    assert "| joint | limit |" in (out / "active.md").read_text()


def test_govern_writes_command(tmp_path, move):
    out = tmp_path / "gov"
    code = main(["govern", MODEL, str(move), "--step", "0:1,0.3:0,0.5:1", "--out", str(out),
                 "--dt", "0.01", "--horizon", "16", "--backend", "twin"])
    assert code == 0
    for name in ("command.csv", "summary.md", "summary.json", "override.png", "torques.png"):
        assert (out / name).stat().st_size > 0, name
    rep = json.loads((out / "summary.json").read_text())
    assert rep["done"] and rep["violations"]["torque"] == 0


def test_bad_input_is_one_line(tmp_path, move, capsys):
    assert main(["govern", MODEL, str(move), "--step", "0:1,oops", "--out", str(tmp_path)]) == 2
    assert "--step" in capsys.readouterr().err
    assert main(["govern", MODEL, str(move), "--step", "0:1", "--horizon", "0",
                 "--out", str(tmp_path)]) == 2
    assert "horizon" in capsys.readouterr().err
    assert main(["scale", MODEL, str(tmp_path / "missing.csv"), "--out", str(tmp_path)]) == 2


@pytest.mark.parametrize("rows, words", [
    ("0,1\n0.5,nan\n", ["prof.csv", "row 3", "finite"]),
    ("0,1\n0.5,1\n0.4,1\n", ["prof.csv", "row 4", "time 0.4 does not increase"]),
    ("0,1\n0.5,-1\n", ["prof.csv", "row 3", "override >= 0"]),
])
def test_bad_override_profile_rows_are_located(tmp_path, move, capsys, rows, words):
    prof = tmp_path / "prof.csv"
    prof.write_text("t,override\n" + rows)
    assert main(["govern", MODEL, str(move), "--override", str(prof), "--out", str(tmp_path)]) == 2
    err = capsys.readouterr().err.strip()
    assert "\n" not in err
    for w in words:
        assert w in err, (w, err)


def test_bad_step_times_are_located(tmp_path, move, capsys):
    assert main(["govern", MODEL, str(move), "--step", "0:1,0:0", "--out", str(tmp_path)]) == 2
    err = capsys.readouterr().err
    assert "--step: item 2 '0:0'" in err and "does not increase" in err


def test_govern_names_a_window_that_holds_the_speed_down(tmp_path, capsys):
    # the demo move at command 1 (the six-axis model's jerk limits bind): with a
    # 64-sample window the override stays near 0.6-0.75 all along, with 256 near 1; only
    # the short window gets the note and a large window_bound_share
    model, move = "examples/robots/six_axis.toml", "examples/scenario/waypoints.csv"
    shares = {}
    for h in (64, 256):
        out = tmp_path / f"h{h}"
        assert main(["govern", model, move, "--step", "0:1", "--horizon", str(h),
                     "--out", str(out)]) == 0
        shares[h] = json.loads((out / "summary.json").read_text())["window_bound_share"]
        printed = capsys.readouterr().out
        assert ("longer --horizon" in printed) == (h == 64)
        assert "held below the command" in (out / "summary.md").read_text()
    assert shares[64] > 0.5 and shares[256] < 0.1
