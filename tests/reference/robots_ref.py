"""Small hand-built robots for the reference checks (invented numbers)."""
import numpy as np

from ffwd.model import Drive, Joint, Link, Robot, Tool

Z = np.array([0.0, 0.0, 1.0])
Y = np.array([0.0, 1.0, 0.0])
X = np.array([1.0, 0.0, 0.0])


def rod_link(mass, com, inertia_perp, axis_index):
    """A slender body with inertia `inertia_perp` about two axes and a small one about
    `axis_index` (within the triangle inequality)."""
    d = np.full(3, float(inertia_perp))
    d[axis_index] = 1e-3 * inertia_perp
    return Link(mass, com, np.diag(d))


def revolute(name, parent, translation, axis, link, drive=None):
    return Joint(name, "revolute", parent, np.eye(3), np.asarray(translation, float),
                 np.asarray(axis, float), link, drive or Drive())


def two_link_planar(m1, m2, a1, a2, l1, l2, I1, I2, g=9.81):
    """Two revolute joints about z in the x-y plane, gravity along -y; link i has length
    a_i, its centre of mass l_i along the link and inertia I_i about z through it."""
    j1 = revolute("shoulder", -1, [0, 0, 0], Z, _planar_link(m1, l1, I1))
    j2 = revolute("elbow", 0, [a1, 0, 0], Z, _planar_link(m2, l2, I2))
    return Robot("two_link", np.array([0.0, -g, 0.0]), (j1, j2), Tool(1, np.eye(3), [a2, 0, 0]))


def _planar_link(m, l, I):
    # inertia about the com: I about z, 0.9 I about y, 0.2 I about x (0.2 + 0.9 >= 1)
    return Link(m, [l, 0.0, 0.0], np.diag([0.2 * I, 0.9 * I, I]))


def pendulum(m, l, I_com, g=9.81):
    """One revolute joint about y; the body's centre of mass hangs at -l along z at q = 0,
    gravity along -z, inertia I_com about y through the centre of mass."""
    link = Link(m, [0.0, 0.0, -l], np.diag([I_com, I_com, 1e-3 * I_com]))
    j = revolute("pivot", -1, [0, 0, 0], Y, link)
    return Robot("pendulum", np.array([0.0, 0.0, -g]), (j,), Tool(0, np.eye(3), [0, 0, -l]))


def _rpy(r, p, y):
    cr, sr, cp, sp, cy, sy = np.cos(r), np.sin(r), np.cos(p), np.sin(p), np.cos(y), np.sin(y)
    return (np.array([[cy, -sy, 0], [sy, cy, 0], [0, 0, 1]])
            @ np.array([[cp, 0, sp], [0, 1, 0], [-sp, 0, cp]])
            @ np.array([[1, 0, 0], [0, cr, -sr], [0, sr, cr]]))


def _random_inertia(rng, mass):
    """Principal moments obeying the triangle inequality, randomly rotated."""
    d1, d2 = mass * rng.uniform(0.005, 0.05, 2)
    d3 = abs(d1 - d2) + rng.uniform(0.1, 0.9) * (d1 + d2 - abs(d1 - d2))
    R = _rpy(*rng.uniform(-np.pi, np.pi, 3))
    return R @ np.diag([d1, d2, d3]) @ R.T


def random_chain(rng, types):
    """A serial chain of the given joint types with random frames, unit axes, links,
    drives (with friction), a payload and a tool frame (numbers from rng)."""
    from ffwd.model import Payload
    joints = []
    for i, kind in enumerate(types):
        axis = rng.normal(size=3)
        mass = rng.uniform(0.5, 5.0)
        link = Link(mass, rng.uniform(-0.3, 0.3, 3), _random_inertia(rng, mass))
        drive = Drive(rng.uniform(1, 50), rng.uniform(0, 1e-4), rng.uniform(0, 2),
                      rng.uniform(0, 2), rng.uniform(0.01, 0.1))
        joints.append(Joint(f"j{i}", kind, i - 1, _rpy(*rng.uniform(-np.pi, np.pi, 3)),
                            rng.uniform(-0.5, 0.5, 3), axis / np.linalg.norm(axis), link, drive))
    payload = Payload(1.2, rng.uniform(-0.1, 0.1, 3), _random_inertia(rng, 1.2))
    tool = Tool(len(types) - 1, _rpy(*rng.uniform(-np.pi, np.pi, 3)), rng.uniform(-0.2, 0.2, 3))
    gravity = np.array([0.0, 0.0, -9.81]) + rng.uniform(-1, 1, 3)
    return Robot("random_chain", gravity, tuple(joints), tool, payload)
