"""Hypothesis strategies for random, physically valid robots and motion states.

    robots(min_dof=1, max_dof=16, trees=True, prismatic=True, friction=True)
    states(dof)              -> (q, qd, qdd)
    robots_with_states(...)  -> (robot, (q, qd, qdd))
    links(), drives(friction=True), limits(joint_type), payloads(), rotations(),
    unit_axes(), gravities()

The structure (dof, joint types, parents, principal or oblique axes, which optional parts
exist) is drawn by hypothesis, so it shrinks; the continuous numbers of a robot come from a
numpy generator seeded by one drawn integer (drawing hundreds of floats one by one made
generation the slowest part of every property test). Sizes are moderate: lengths within
~1 m, masses 0.1-10 kg, inertias with principal moments that satisfy the triangle
inequality, gear ratios 1-100, friction up to 5 N m. States are drawn float by float.
Used by the twin invariant tests and by the C / cffi / twin equivalence tests.
"""
import numpy as np
from hypothesis import strategies as st

from ffwd.model import Drive, Joint, Limits, Link, Payload, Robot, Tool


def _floats(lo, hi):
    return st.floats(lo, hi, allow_nan=False, allow_infinity=False)


def generators():
    """A numpy random generator from a drawn seed."""
    return st.integers(0, 2**32 - 1).map(np.random.default_rng)


# ---- numbers from a generator -----------------------------------------------------

def rpy_rotation(roll, pitch, yaw):
    """Rz(yaw) @ Ry(pitch) @ Rx(roll)."""
    cr, sr, cp, sp, cy, sy = (np.cos(roll), np.sin(roll), np.cos(pitch), np.sin(pitch),
                              np.cos(yaw), np.sin(yaw))
    Rx = np.array([[1, 0, 0], [0, cr, -sr], [0, sr, cr]])
    Ry = np.array([[cp, 0, sp], [0, 1, 0], [-sp, 0, cp]])
    Rz = np.array([[cy, -sy, 0], [sy, cy, 0], [0, 0, 1]])
    return Rz @ Ry @ Rx


def make_rotation(rng):
    """A rotation matrix from random roll, pitch, yaw."""
    return rpy_rotation(rng.uniform(-np.pi, np.pi), rng.uniform(-np.pi / 2, np.pi / 2),
                        rng.uniform(-np.pi, np.pi))


def make_axis(rng, principal):
    """A principal axis (+-x, +-y, +-z) or a random direction on the unit sphere."""
    if principal:
        a = np.zeros(3)
        a[rng.integers(3)] = rng.choice([-1.0, 1.0])
        return a
    polar, azimuth = np.arccos(rng.uniform(-1.0, 1.0)), rng.uniform(-np.pi, np.pi)
    return np.array([np.sin(polar) * np.cos(azimuth), np.sin(polar) * np.sin(azimuth),
                     np.cos(polar)])


def make_inertia(rng, mass):
    """R diag(d) R^T with principal moments d that satisfy the triangle inequality
    d3 < d1 + d2 (strictly, with margin), scaled to the mass."""
    d1, d2 = mass * rng.uniform(1e-3, 0.1, 2)
    d3 = abs(d1 - d2) + rng.uniform(0.05, 0.95) * (d1 + d2 - abs(d1 - d2))
    R = make_rotation(rng)
    return R @ np.diag([d1, d2, d3]) @ R.T


def make_link(rng):
    mass = rng.uniform(0.1, 10.0)
    return Link(mass, rng.uniform(-0.3, 0.3, 3), make_inertia(rng, mass))


def make_drive(rng, friction=True, rotor=True):
    gear = rng.uniform(1.0, 100.0)
    rotor_inertia = rng.uniform(0.0, 1e-4) if rotor else 0.0
    if not friction:
        return Drive(gear, rotor_inertia)
    return Drive(gear, rotor_inertia, rng.uniform(0.0, 5.0), rng.uniform(0.0, 5.0),
                 rng.uniform(1e-3, 0.1))


def make_limits(rng, joint_type, given):
    """Limits with the ones flagged in `given` (5 booleans) set."""
    span = np.pi if joint_type == "revolute" else 1.0
    lo = rng.uniform(-span, 0.0)
    values = [(lo, lo + rng.uniform(0.1, 2 * span)), rng.uniform(0.5, 5.0),
              rng.uniform(1.0, 50.0), rng.uniform(10.0, 1000.0), rng.uniform(1.0, 500.0)]
    return Limits(*[v if g else None for v, g in zip(values, given)])


def make_payload(rng):
    mass = rng.uniform(0.1, 5.0)
    return Payload(mass, rng.uniform(-0.2, 0.2, 3), make_inertia(rng, mass))


# ---- strategies ---------------------------------------------------------------------

@st.composite
def rotations(draw):
    return make_rotation(draw(generators()))


@st.composite
def unit_axes(draw):
    return make_axis(draw(generators()), draw(st.booleans()))


@st.composite
def links(draw):
    return make_link(draw(generators()))


@st.composite
def drives(draw, friction=True):
    return make_drive(draw(generators()), friction, draw(st.booleans()))


@st.composite
def limits(draw, joint_type):
    return make_limits(draw(generators()), joint_type, draw(st.lists(st.booleans(), min_size=5,
                                                                     max_size=5)))


@st.composite
def payloads(draw):
    """No payload (mass 0) or a random one."""
    return make_payload(draw(generators())) if draw(st.booleans()) else Payload()


@st.composite
def gravities(draw):
    """Usually 9.81 m/s^2 down the base z axis, sometimes any vector up to 10 m/s^2."""
    if draw(st.booleans()):
        return np.array([0.0, 0.0, -9.81])
    return draw(generators()).uniform(-10.0 / np.sqrt(3), 10.0 / np.sqrt(3), 3)


@st.composite
def robots(draw, min_dof=1, max_dof=16, trees=True, prismatic=True, friction=True):
    """A random valid Robot: mixed joint types, random unit axes and origins, a random
    tree (each parent earlier in the list) or a serial chain, random links, drives,
    limits, payload (or none) and tool frame."""
    dof = draw(st.integers(min_dof, max_dof))
    rng = draw(generators())
    joints = []
    for i in range(dof):
        if i == 0:
            parent = -1
        elif trees:
            parent = draw(st.integers(-1, i - 1))
        else:
            parent = i - 1
        kind = draw(st.sampled_from(["revolute", "prismatic"])) if prismatic else "revolute"
        principal, rotor = draw(st.booleans()), draw(st.booleans())
        given = draw(st.lists(st.booleans(), min_size=5, max_size=5))
        joints.append(Joint(
            name=f"j{i}", type=kind, parent=parent, rotation=make_rotation(rng),
            translation=rng.uniform(-0.5, 0.5, 3), axis=make_axis(rng, principal),
            link=make_link(rng), drive=make_drive(rng, friction, rotor),
            limits=make_limits(rng, kind, given)))
    tool = Tool(draw(st.integers(0, dof - 1)), make_rotation(rng), rng.uniform(-0.3, 0.3, 3))
    return Robot("random", draw(gravities()), tuple(joints), tool, draw(payloads()))


@st.composite
def states(draw, dof):
    """(q, qd, qdd) of moderate size: |q| <= pi, |qd| <= 3, |qdd| <= 10."""
    def array(bound):
        return np.array([draw(_floats(-bound, bound)) for _ in range(dof)])
    return array(np.pi), array(3.0), array(10.0)


@st.composite
def robots_with_states(draw, **robot_kwargs):
    robot = draw(robots(**robot_kwargs))
    return robot, draw(states(robot.dof))
