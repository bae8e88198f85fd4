"""ffwd/formats/dh.py: the split of a DH row at the joint motion is exact, and the
standalone table's setting rows. Row transforms: Denavit and Hartenberg (1955) for the
standard form, Craig, Introduction to Robotics, sec. 3.4 for the modified form (from memory);
the check is that origin * motion * output equals the full row, as the module doc says."""
import numpy as np
import pytest

from ffwd.errors import ModelError
from ffwd.formats import transforms as tf
from ffwd.formats.dh import dh_row_transform, dh_split, table_to_dict


def motion(q, prismatic):
    return tf.trans(z=q) if prismatic else tf.rz(q)


@pytest.mark.parametrize("convention", ["standard", "modified"])
@pytest.mark.parametrize("prismatic", [False, True])
def test_split_times_motion_is_the_row(convention, prismatic):
    rng = np.random.default_rng(11)
    for _ in range(25):
        a, d = rng.uniform(-0.5, 0.5, 2)
        alpha, theta, q = rng.uniform(-np.pi, np.pi, 3)
        origin, out = dh_split(a, alpha, d, theta, convention)
        whole = dh_row_transform(a, alpha, d, theta, q, convention, prismatic=prismatic)
        np.testing.assert_allclose(origin @ motion(q, prismatic) @ out, whole, atol=1e-13)


def test_standard_row_by_hand():
    # a = 1, alpha = 90 deg, d = 0.5, theta = 0, q = 90 deg: the x axis turns onto y,
    # then z goes up by d and out along the new x (= old y) by a
    T = dh_row_transform(1.0, np.pi / 2, 0.5, 0.0, np.pi / 2, "standard")
    np.testing.assert_allclose(T[:3, 3], [0.0, 1.0, 0.5], atol=1e-15)
    np.testing.assert_allclose(T[:3, 2], [1.0, 0.0, 0.0], atol=1e-15)   # z_i = x_{i-1} after alpha


def test_unknown_convention():
    with pytest.raises(ModelError, match="'dh.convention' = 'sideways': must be one of"):
        dh_split(0.0, 0.0, 0.0, 0.0, "sideways")


HEADER = "joint,type,a,alpha,d,theta,mass,cx,cy,cz,ixx,iyy,izz,ixy,ixz,iyz\n"
ROW = "j1,revolute,0.3,0,0.1,0,2.0,0.1,0,0,0.01,0.02,0.02,0,0,0\n"


def test_settings_rows_become_the_native_dictionary():
    text = ("# comment\nrobot,rig\nconvention,standard\ngravity,0,-9.81,0\n"
            "tool,0.1,0,0,0,1.5707963267948966,0\npayload,2.0,0,0,0.05,4.0\n" + HEADER + ROW)
    data = table_to_dict(text, file="rig.dh.csv")
    assert data["robot"] == {"name": "rig", "gravity": [0.0, -9.81, 0.0]}
    assert data["tool"]["origin"] == {"xyz": [0.1, 0.0, 0.0], "rpy": [0.0, np.pi / 2, 0.0]}
    assert data["payload"] == {"mass": 2.0, "com": [0.0, 0.0, 0.05], "rated_mass": 4.0}
    (j,) = data["joint"]
    assert j["dh"] == {"a": 0.3, "alpha": 0.0, "d": 0.1, "theta": 0.0, "convention": "standard"}
    assert j["link"]["inertia"] == {"xx": 0.01, "yy": 0.02, "zz": 0.02, "xy": 0.0, "xz": 0.0,
                                    "yz": 0.0}
    assert "drive" not in j and "limits" not in j


def test_tool_with_three_numbers_has_no_rotation():
    data = table_to_dict("robot,r\nconvention,modified\ntool,0,0,0.2\n" + HEADER + ROW)
    assert data["tool"]["origin"]["rpy"] == [0.0, 0.0, 0.0]


@pytest.mark.parametrize("text, words", [
    ("robot\nconvention,standard\n" + HEADER + ROW, ["'robot'", "line 1", "needs a name"]),
    ("robot,r\n" + HEADER + ROW, ["'convention'", "missing 'convention' row"]),
    ("robot,r\nconvention,standard\n", ["'joint'", "missing the 'joint' header row"]),
    ("robot,r\nconvention,standard\npayload,1,2\n" + HEADER + ROW, ["'payload'", "needs 4 or 5"]),
    ("robot,r\nconvention,standard\ngravity,0,x,1\n" + HEADER + ROW, ["'gravity'", "'x'"]),
    ("robot,r\nconvention,standard\n" + HEADER + ROW[2:],
     ["line 4", "empty joint name"]),
])
def test_table_errors_are_located(text, words):
    with pytest.raises(ModelError) as info:
        table_to_dict(text, file="t.dh.csv")
    msg = str(info.value)
    assert msg.startswith("t.dh.csv: ") and "\n" not in msg
    assert all(w in msg for w in words), msg
