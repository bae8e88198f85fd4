"""Random serial chains for benchmarks (invented geometry, seeded, reproducible).

Every joint is revolute about its own z axis; the fixed transform from the parent is a
random rotation (roll, pitch, yaw in [-pi, pi)) and an offset of 5-40 cm; each link has a
mass of 0.5-8 kg, a centre of mass within 15 cm and a positive-definite inertia that obeys
the triangle inequality; drives have armature, viscous and Coulomb friction.
The C harness (csrc/programs/ffwd_bench.c) builds chains of the same kind in C for sizes
above the Python model's joint limit.
"""
import numpy as np

from ffwd.model import Drive, Joint, Limits, Link, Robot, Tool


def _rpy(r, p, y):
    cr, sr, cp, sp_, cy, sy = np.cos(r), np.sin(r), np.cos(p), np.sin(p), np.cos(y), np.sin(y)
    Rx = np.array([[1, 0, 0], [0, cr, -sr], [0, sr, cr]])
    Ry = np.array([[cp, 0, sp_], [0, 1, 0], [-sp_, 0, cp]])
    Rz = np.array([[cy, -sy, 0], [sy, cy, 0], [0, 0, 1]])
    return Rz @ Ry @ Rx


def random_chain(dof, seed=0, prismatic_every=0):
    """A Robot with `dof` joints of random geometry. prismatic_every=k makes every k-th
    joint prismatic (0: all revolute)."""
    rng = np.random.default_rng(seed)
    joints = []
    for i in range(dof):
        R = _rpy(*rng.uniform(-np.pi, np.pi, 3))
        t = rng.uniform(-1, 1, 3)
        t *= rng.uniform(0.05, 0.4) / np.linalg.norm(t)
        m = rng.uniform(0.5, 8.0)
        com = rng.uniform(-0.15, 0.15, 3)
        d = rng.uniform(0.01, 0.1, 3) * m
        d = np.sort(d)
        d[2] = min(d[2], 0.95 * (d[0] + d[1]))
        Q, _ = np.linalg.qr(rng.normal(size=(3, 3)))
        inertia = Q @ np.diag(d) @ Q.T
        kind = "prismatic" if prismatic_every and (i + 1) % prismatic_every == 0 else "revolute"
        drive = Drive(gear_ratio=rng.uniform(50, 160), rotor_inertia=rng.uniform(1e-5, 1e-4),
                      viscous=rng.uniform(0.1, 2.0), coulomb=rng.uniform(0.5, 5.0),
                      coulomb_band=0.02)
        limits = Limits(position=(-3.0, 3.0), velocity=3.0, acceleration=15.0, jerk=200.0,
                        torque=400.0)
        joints.append(Joint(f"j{i + 1}", kind, i - 1, R, t, np.array([0.0, 0.0, 1.0]),
                            Link(m, com, inertia), drive, limits))
    return Robot(f"random_chain_{dof}", np.array([0.0, 0.0, -9.81]), tuple(joints),
                 Tool(dof - 1, np.eye(3), np.array([0.0, 0.0, 0.1])))


def random_states(robot, count, seed=1):
    """(q, qd, qdd) arrays of shape (count, dof): q in [-pi, pi], qd in [-2, 2],
    qdd in [-10, 10]."""
    rng = np.random.default_rng(seed)
    n = robot.dof
    return (rng.uniform(-np.pi, np.pi, (count, n)), rng.uniform(-2, 2, (count, n)),
            rng.uniform(-10, 10, (count, n)))
