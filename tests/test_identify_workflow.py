"""The whole workflow: from_log -> Identification (.model, .predict), the model TOML,
the report, and the `ffwd identify` command."""
import numpy as np
import pytest

import ffwd
from ffwd.cli import main
from ffwd.identify import from_log, random_excitation, two_link_arm
from ffwd.identify.synthetic import write_synthetic_log
from ffwd.identify.tomlout import dump_toml

NOISE = 0.2


@pytest.fixture(scope="module")
def ident(tmp_path_factory):
    d = tmp_path_factory.mktemp("wf")
    robot = two_link_arm().with_payload(0.5, (0.05, 0.0, 0.0), np.diag([1e-3, 1e-3, 1e-3]))
    tr = random_excitation(robot, period=6.0, harmonics=3, seed=4)
    t = np.arange(0.0, 12.0, 0.01)
    q, qd, qdd = tr.evaluate(t)
    write_synthetic_log(d / "log.csv", robot, t, q, qd, qdd, tau_noise=NOISE, seed=1)
    return robot, from_log(robot, d / "log.csv")


def test_predict_single_and_batch(ident):
    robot, res = ident
    rng = np.random.default_rng(0)
    q, qd, qdd = rng.uniform(-1, 1, size=(3, 5, 2))
    batch = res.predict(q, qd, qdd)
    assert batch.shape == (5, 2)
    np.testing.assert_allclose(res.predict(q[0], qd[0], qdd[0]), batch[0])
    truth = ffwd.Dynamics(robot, backend="twin").inverse_dynamics(q, qd, qdd)
    assert np.max(np.abs(batch - truth)) < 0.5
    with pytest.raises(ValueError, match=r"q: need finite values of shape \(2,\)"):
        res.predict(np.zeros(3), np.zeros(3), np.zeros(3))


def test_model_is_usable_and_carries_the_payload_in_the_last_body(ident):
    robot, res = ident
    m = res.model
    assert m.payload.mass == 0
    assert m.joints[1].link.mass > 1.5             # link 2 (2 kg) and payload (0.5 kg)
    dyn = ffwd.Dynamics(m, backend="twin")
    q, qd, qdd = np.array([0.3, -0.5]), np.array([0.2, 0.1]), np.array([1.0, -1.0])
    np.testing.assert_allclose(dyn.inverse_dynamics(q, qd, qdd),
                               res.predict(q, qd, qdd, which="consistent"), atol=1e-9)


def test_model_toml_loads_back_with_the_same_dynamics(ident, tmp_path):
    _, res = ident
    path = tmp_path / "identified.toml"
    res.write_model(path)
    back = ffwd.load(path)
    rng = np.random.default_rng(1)
    q, qd, qdd = rng.uniform(-2, 2, size=(3, 10, 2))
    a = ffwd.Dynamics(res.model, backend="twin").inverse_dynamics(q, qd, qdd)
    b = ffwd.Dynamics(back, backend="twin").inverse_dynamics(q, qd, qdd)
    np.testing.assert_allclose(a, b, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(back.parameter_vector(), res.model.parameter_vector(),
                               rtol=1e-12, atol=1e-15)


@pytest.mark.parametrize("name", ["six_axis.toml", "twin_arm_torso.toml"])
def test_dump_toml_round_trips_the_demo_robots(name, tmp_path):
    import os
    robot = ffwd.load(os.path.join(os.path.dirname(__file__), "..", "examples", "robots", name))
    dump_toml(robot, tmp_path / "out.toml")
    back = ffwd.load(tmp_path / "out.toml")
    np.testing.assert_allclose(back.parameter_vector(), robot.parameter_vector(), atol=1e-12)
    q = np.linspace(-1, 1, robot.dof)
    a = ffwd.Dynamics(robot, backend="twin").inverse_dynamics(q, q, q)
    b = ffwd.Dynamics(back, backend="twin").inverse_dynamics(q, q, q)
    np.testing.assert_allclose(a, b, rtol=1e-10, atol=1e-10)


def test_report_files(ident, tmp_path):
    _, res = ident
    path = res.write_report(tmp_path)
    text = open(path).read()
    assert "## Base parameters" in text and "Izz_j1R" in text
    for f in ("torque_prediction.png", "residuals.png", "parameters.png",
              "base_parameters.csv"):
        assert (tmp_path / f).stat().st_size > 0
    assert len(res.table()) == res.base.count == 11


def test_cli_excite_synth_fit(tmp_path, capsys):
    model = tmp_path / "arm.toml"
    dump_toml(two_link_arm(), model)
    traj, log, out = tmp_path / "traj.csv", tmp_path / "log.csv", tmp_path / "fit"
    assert main(["identify", "excite", str(model), "--out", str(traj), "--period", "6",
                 "--harmonics", "3", "--samples", "30", "--max-iter", "2", "--rate", "100",
                 "--periods", "2"]) == 0
    assert "condition number of the stacked base regressor" in capsys.readouterr().out
    assert main(["identify", "synth", str(model), str(traj), "--out", str(log),
                 "--noise", "0.2,0.1"]) == 0
    assert main(["identify", "fit", str(model), str(log), "--out", str(out)]) == 0
    text = capsys.readouterr().out
    assert "11 base parameters" in text
    assert (out / "report.md").exists() and (out / "arm_identified.toml").exists()
    ffwd.load(out / "arm_identified.toml")


def test_cli_bad_log_is_one_line(tmp_path, capsys):
    model = tmp_path / "arm.toml"
    dump_toml(two_link_arm(), model)
    log = tmp_path / "log.csv"
    log.write_text("t,q_j1,q_j2,tau_j1\n" + "".join(f"{k * 0.01},0,0,0\n" for k in range(60)))
    assert main(["identify", "fit", str(model), str(log), "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1
    assert "log.csv: missing column 'tau_j2'" in err[0]
