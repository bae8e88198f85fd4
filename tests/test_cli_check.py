"""`ffwd check`: exit codes, output and JSON."""
import json
import os

from ffwd.cli import main

ROBOTS = os.path.join(os.path.dirname(__file__), "..", "examples", "robots")
SIX = os.path.join(ROBOTS, "six_axis.toml")


def test_check_valid(capsys, tmp_path):
    out = tmp_path / "six.json"
    assert main(["check", SIX, "--json", str(out)]) == 0
    text = capsys.readouterr().out
    assert "robot 'six_axis': 6 joints" in text and "six_axis: valid" in text
    data = json.loads(out.read_text())
    assert data["valid"] is True and data["dof"] == 6
    assert [j["name"] for j in data["joints"]] == ["j1", "j2", "j3", "j4", "j5", "j6"]
    assert data["joints"][1]["limits"]["torque"] == 900.0
    assert data["payload"]["rated_mass"] == 10.0 and data["warnings"] == []


def test_check_other_formats(capsys):
    assert main(["check", os.path.join(ROBOTS, "planar3_vertical.dh.csv")]) == 0
    assert main(["check", os.path.join(ROBOTS, "twin_arm_torso.toml")]) == 0
    assert "j5 revolute on j1" in capsys.readouterr().out


def test_check_bad_model_exit_2(capsys, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(open(SIX).read().replace("mass = 14.0", "mass = -14.0"))
    assert main(["check", str(bad)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0
    assert "bad.toml: joint 'j3': field 'link.mass' = -14.0: must be > 0" in err


def test_check_warnings_strict(capsys, tmp_path):
    heavy = tmp_path / "heavy.toml"
    heavy.write_text(open(SIX).read().replace("mass = 5.0", "mass = 12.0"))
    assert main(["check", str(heavy)]) == 0
    out = capsys.readouterr().out
    assert "warning: payload 12 kg exceeds the rated 10 kg" in out and "1 warning" in out
    assert main(["check", str(heavy), "--strict"]) == 1
    odd = tmp_path / "odd.toml"
    odd.write_text(open(SIX).read().replace("axis = [0.0, 0.0, 1.0]", "axis = [0.0, 0.0, 3.0]"))
    assert main(["check", str(odd), "--strict"]) == 1
    assert "axis" in capsys.readouterr().out


def test_check_missing_file(capsys, tmp_path):
    assert main(["check", str(tmp_path / "none.toml")]) == 2
    err = capsys.readouterr().err
    # the path and the system's reason, without Python's errno code
    assert f"error: {tmp_path / 'none.toml'}: No such file or directory" in err
    assert "Errno" not in err


def test_missing_trajectory_names_the_file(capsys, tmp_path):
    assert main(["govern", SIX, str(tmp_path / "path.csv"), "--step", "0:1"]) == 2
    err = capsys.readouterr().err
    assert f"{tmp_path / 'path.csv'}: No such file or directory" in err and "Errno" not in err
