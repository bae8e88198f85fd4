"""The invented example robots: complete, plausible, and able to hold themselves up."""
import glob
import math
import os
import warnings

import numpy as np
import pytest

import ffwd

ROBOTS = os.path.join(os.path.dirname(__file__), "..", "examples", "robots")
FILES = sorted(glob.glob(os.path.join(ROBOTS, "*.toml")) + glob.glob(os.path.join(ROBOTS, "*.dh.csv")))
LIMITS = ("position", "velocity", "acceleration", "jerk", "torque")


def load(path):
    with warnings.catch_warnings():
        warnings.simplefilter("error")          # examples load without any warning
        return ffwd.load(path)


def test_examples_present():
    names = {os.path.basename(f) for f in FILES}
    assert {"six_axis.toml", "planar3_vertical.toml", "seven_axis.toml", "twin_arm_torso.toml",
            "six_axis_dh.toml", "planar3_vertical.dh.csv"} <= names


@pytest.mark.parametrize("path", FILES, ids=os.path.basename)
def test_example_complete_and_plausible(path):
    r = load(path)
    assert r.warnings() == []
    for j in r.joints:
        assert all(getattr(j.limits, k) is not None for k in LIMITS), j.name
        d = j.drive
        assert 50 <= d.gear_ratio <= 160 and 1e-5 <= d.rotor_inertia <= 5e-4, j.name
        assert d.viscous > 0 and d.coulomb > 0, j.name
        # principal moments of a solid of this mass: between (1 cm)^2 and (1 m)^2 scale
        eig = np.linalg.eigvalsh(j.link.inertia)
        assert j.link.mass * 1e-4 * 0.1 < eig[0] and eig[2] < j.link.mass * 1.0, j.name
    assert r.payload.mass > 0 and r.payload.rated_mass >= r.payload.mass


def joint_poses(robot, q):
    """World pose of every joint frame (DEVELOPERS.md frames; Rodrigues' formula, from memory)."""
    poses = []
    for j, qi in zip(robot.joints, q):
        F = np.eye(4)
        F[:3, :3], F[:3, 3] = j.rotation, j.translation
        a = j.axis
        K = np.array([[0, -a[2], a[1]], [a[2], 0, -a[0]], [-a[1], a[0], 0]])
        M = np.eye(4)
        M[:3, :3] = np.eye(3) + math.sin(qi) * K + (1 - math.cos(qi)) * K @ K
        base = np.eye(4) if j.parent < 0 else poses[j.parent]
        poses.append(base @ F @ M)
    return poses


def static_gravity_torque(robot, q):
    """Torque each joint needs to hold the arm still: minus the moment of the weights of
    all bodies beyond it about its axis (static moment balance, from memory)."""
    P = joint_poses(robot, q)
    bp = robot.body_params()
    g = robot.gravity
    tau = np.zeros(robot.dof)
    for k in range(robot.dof):
        m = bp[k, 0]
        c = P[k][:3, :3] @ (bp[k, 1:4] / m) + P[k][:3, 3]
        i = k
        while i >= 0:                        # every joint on the way to the base
            z = P[i][:3, :3] @ robot.joints[i].axis
            tau[i] -= z @ np.cross(c - P[i][:3, 3], m * g)
            i = robot.joints[i].parent
    return tau


@pytest.mark.parametrize("path", FILES, ids=os.path.basename)
def test_gravity_within_torque_limits_with_margin(path):
    r = load(path)
    rated = r.with_payload(r.payload.rated_mass, r.payload.com, r.payload.inertia
                           * r.payload.rated_mass / r.payload.mass)
    lo = np.array([j.limits.position[0] for j in r.joints])
    hi = np.array([j.limits.position[1] for j in r.joints])
    limit = np.array([j.limits.torque for j in r.joints])
    rng = np.random.default_rng(1)
    worst = np.zeros(r.dof)
    for _ in range(200):
        q = rng.uniform(lo, hi)
        worst = np.maximum(worst, np.abs(static_gravity_torque(rated, q)) / limit)
    assert np.all(worst < 0.7), dict(zip(r.joint_names, worst.round(3)))


def test_static_helper_against_twin():
    # the helper above is a moment balance; cross-check it with the twin when present
    twin = pytest.importorskip("ffwd.twin")
    r = load(os.path.join(ROBOTS, "twin_arm_torso.toml"))
    q = np.random.default_rng(2).uniform(-1, 1, r.dof)
    assert np.allclose(static_gravity_torque(r, q), twin.gravity_torque(r, q), atol=1e-9)


def test_tree_example_shape():
    r = load(os.path.join(ROBOTS, "twin_arm_torso.toml"))
    assert [j.parent for j in r.joints] == [-1, 0, 1, 2, 0, 4, 5]
    assert r.joint_names[r.tool.parent] == "j4"


def test_six_axis_key_numbers():
    r = load(os.path.join(ROBOTS, "six_axis.toml"))
    assert r.dof == 6 and r.payload.mass == 5.0 and r.payload.rated_mass == 10.0
    P = joint_poses(r, np.zeros(6))
    T = P[5] @ np.block([[r.tool.rotation, r.tool.translation[:, None]], [np.zeros((1, 3)), 1]])
    # flange at home: 0.15 + 0.30 + 0.35 + 0.09 + 0.02 forward, 0.45 + 0.20 + 0.70 + 0.12 up
    assert np.allclose(T[:3, 3], [0.91, 0.0, 1.47], atol=1e-12)
    assert np.allclose(T[:3, 2], [1, 0, 0], atol=1e-12)
