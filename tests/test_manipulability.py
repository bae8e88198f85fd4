"""Dynamic manipulability (acceleration ellipsoids at rest) against direct computations."""
import json
import os

import numpy as np
import pytest
from hypothesis import given, settings

import ffwd
import ffwd.twin as twin
from ffwd.manipulability import acceleration_ellipsoid, dynamics_for, torque_weights
from strategies import robots_with_states

EXAMPLES = os.path.join(os.path.dirname(__file__), "..", "examples")
PLANAR3 = os.path.join(EXAMPLES, "robots", "planar3_vertical.toml")
SWEEP = os.path.join(EXAMPLES, "manip", "planar3_sweep.csv")
POSES = [np.array(p) for p in ([0.3, -0.8, 0.5], [1.2, -1.6, 0.9], [-0.4, 1.1, -0.7],
                               [0.0, 0.0, 0.0], [2.0, -2.2, 1.5])]


def twin_ellipsoid(robot, q, normalise=False):
    return acceleration_ellipsoid(robot, q, normalise, dynamics_for(robot, "twin"))


def direct_map(robot, q, normalise=False):
    """(A, c): xdd = c + A u straight from the twin's M, g and J (numpy inverse)."""
    M = twin.mass_matrix(robot, q)
    Jv = twin.tool_jacobian(robot, q)[:3]
    Minv = np.linalg.inv(M)
    return Jv @ Minv @ np.diag(torque_weights(robot, normalise)), -Jv @ Minv @ twin.gravity_torque(robot, q)


@settings(deadline=None)
@given(robots_with_states(min_dof=1, max_dof=8))
def test_axes_equal_eigen_decomposition_of_quadratic_form(rs):
    # numpy as reference: the set {c + A u : |u| <= 1} has semi-axes sqrt(eigenvalues of
    # A A^T) along its eigenvectors; when A A^T is invertible that is the ellipsoid
    # (x - c)^T Q (x - c) <= 1 with Q = (A A^T)^-1, semi-axes 1/sqrt(eigenvalues of Q)
    robot, (q, _, _) = rs
    A, c = direct_map(robot, q)
    e = twin_ellipsoid(robot, q)
    assert np.allclose(e.centre, c, rtol=1e-9, atol=1e-9 * (1 + np.abs(c).max()))
    shape = A @ A.T
    vals, vecs = np.linalg.eigh(shape)
    vals, vecs = vals[::-1], vecs[:, ::-1]              # longest axis first
    top = vals[0]
    assert np.allclose(e.lengths, np.sqrt(np.clip(vals, 0, None)), rtol=1e-9,
                       atol=1e-7 * np.sqrt(top))
    assert np.allclose(e.shape, shape, rtol=1e-12, atol=1e-12 * top)
    if vals[-1] > 1e-6 * top:                           # a proper (not flat) ellipsoid
        cond = top / vals[-1]
        Q = np.linalg.inv(shape)
        q_vals, q_vecs = np.linalg.eigh(Q)             # ascending: longest axis first
        assert np.allclose(e.lengths, 1.0 / np.sqrt(q_vals), rtol=1e-13 * cond + 1e-12, atol=0)
        assert np.allclose(e.form, Q, rtol=1e-12 * cond, atol=1e-12 * cond * np.abs(Q).max())
        if np.min(np.diff(q_vals)) > 1e-6 * q_vals[-1]:     # distinct lengths: directions
            dots = np.abs(np.sum(e.directions * q_vecs, axis=0))
            assert np.allclose(dots, 1.0, atol=1e-8 * cond)


@pytest.mark.parametrize("q", POSES)
def test_accelerations_from_forward_dynamics_lie_on_the_ellipse(q):
    # a torque of unit norm (scaled by the limits) gives, through the twin's forward
    # dynamics at rest, an acceleration on the ellipsoid's boundary; a smaller one inside
    robot = ffwd.load(PLANAR3)
    e = twin_ellipsoid(robot, q, normalise=True)
    W = torque_weights(robot, True)
    rng = np.random.default_rng(3)
    for _ in range(20):
        u = rng.normal(size=3)
        u /= np.linalg.norm(u)
        for size, expect in ((1.0, 1.0), (0.5, None)):
            qdd = twin.forward_dynamics(robot, q, np.zeros(3), W * size * u)
            x = twin.tool_jacobian(robot, q)[:3] @ qdd
            level = (x - e.centre) @ e.form @ (x - e.centre)
            if expect is None:
                assert level <= 0.25 + 1e-9          # at most (0.5)^2 of the way out
            else:
                assert level <= 1.0 + 1e-9           # redundant in the plane: on or inside
    assert e.lengths[2] == 0.0                         # planar arm: flat across its plane


@pytest.mark.parametrize("q", POSES)
def test_down_and_up_are_reached_with_unit_least_torque(q):
    # the least-norm torque giving s*e (pseudo-inverse of A) has norm exactly 1 at s = down
    # (resp. up), and forward dynamics with it moves the tool straight down (up)
    robot = ffwd.load(PLANAR3)
    e = twin_ellipsoid(robot, q, normalise=True)
    A, c = direct_map(robot, q, normalise=True)
    g_dir = robot.gravity / np.linalg.norm(robot.gravity)
    W = torque_weights(robot, True)
    for s, d in ((e.down, g_dir), (e.up, -g_dir)):
        u = np.linalg.pinv(A) @ (s * d - c)
        assert abs(np.linalg.norm(u) - 1.0) <= 1e-8
        qdd = twin.forward_dynamics(robot, q, np.zeros(3), W * u)
        x = twin.tool_jacobian(robot, q)[:3] @ qdd
        assert np.allclose(x, s * d, atol=1e-8 * (1 + abs(s)))
        u_more = np.linalg.pinv(A) @ (1.001 * s * d - c)
        assert np.linalg.norm(u_more) > 1.0


def test_vertical_arm_accelerates_down_faster_than_up():
    # with gravity, an arm at rest reaches more acceleration straight down than up
    # (a fact of the trade, common practice, no source)
    robot = ffwd.load(PLANAR3)
    for q in POSES:
        e = twin_ellipsoid(robot, q, normalise=True)
        assert e.down is not None and e.up is not None
        assert e.down > e.up > 0
        assert e.ratio > 1.0
        assert e.holds_still()


@pytest.mark.parametrize("q", POSES)
def test_without_gravity_the_ellipsoid_is_centred(q):
    # no gravity: zero torque gives zero acceleration, so the ellipsoid is centred on
    # zero and symmetric (common practice, no source)
    robot = ffwd.load(PLANAR3)
    free = robot.__class__(robot.name, np.zeros(3), robot.joints, robot.tool, robot.payload)
    e = twin_ellipsoid(free, q, normalise=True)
    assert np.all(e.centre == 0.0)
    assert e.down is None and e.up is None and e.ratio is None
    with_g = twin_ellipsoid(robot, q, normalise=True)
    assert np.allclose(e.lengths, with_g.lengths)      # gravity shifts, never reshapes


def test_normalise_needs_torque_limits():
    robot = ffwd.load(PLANAR3)
    j = robot.joints[1]
    bare = robot.__class__(robot.name, robot.gravity,
                           (robot.joints[0], j.__class__(j.name, j.type, j.parent, j.rotation,
                                                         j.translation, j.axis, j.link, j.drive),
                            robot.joints[2]), robot.tool, robot.payload)
    with pytest.raises(ffwd.ModelError, match="j2.*limits.torque"):
        twin_ellipsoid(bare, POSES[0], normalise=True)


def test_cli_writes_outputs(tmp_path):
    from ffwd.cli import main
    out = tmp_path / "m"
    assert main(["manip", PLANAR3, SWEEP, "--out", str(out), "--normalise",
                 "--backend", "twin"]) == 0
    for name in ("manip.csv", "manip.json", "manip.png", "summary.md"):
        assert (out / name).stat().st_size > 0
    summary = json.loads((out / "manip.json").read_text())
    assert summary["normalised"] and summary["poses_not_held"] == []
    assert summary["min_ratio"]["value"] > 1.0
    header = (out / "manip.csv").read_text().splitlines()[0].split(",")
    assert header[:4] == ["t", "q_j1", "q_j2", "q_j3"] and "ratio" in header


def test_cli_fails_when_the_arm_cannot_hold_a_pose(tmp_path):
    text = open(PLANAR3).read().replace("torque = 200.0", "torque = 20.0")
    weak = tmp_path / "weak.toml"
    weak.write_text(text)
    from ffwd.cli import main
    assert main(["manip", str(weak), SWEEP, "--out", str(tmp_path / "w"), "--normalise",
                 "--backend", "twin"]) == 1
    summary = json.loads((tmp_path / "w" / "manip.json").read_text())
    assert summary["poses_not_held"]


def test_cli_bad_model_is_one_line(tmp_path, capsys):
    from ffwd.cli import main
    assert main(["manip", str(tmp_path / "none.toml"), SWEEP, "--out", str(tmp_path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "none.toml" in err[0]
