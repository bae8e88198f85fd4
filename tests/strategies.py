"""Hypothesis strategies for random, physically valid robots and motion states.

    robots(min_dof=1, max_dof=16, trees=True, prismatic=True, friction=True)
    states(dof)              -> (q, qd, qdd)
    robots_with_states(...)  -> (robot, (q, qd, qdd))

Structure (dof, joint types, parents, which optional parts exist) is drawn so hypothesis
can shrink it; the numbers are bounded draws of moderate size (lengths within ~1 m,
masses 0.1-10 kg, inertias with principal moments that satisfy the triangle inequality).
Used by the twin invariant tests and by the C / cffi / twin equivalence tests.
"""
import numpy as np
from hypothesis import strategies as st

from ffwd.model import Drive, Joint, Limits, Link, Payload, Robot, Tool


def _floats(lo, hi):
    return st.floats(lo, hi, allow_nan=False, allow_infinity=False)


def rpy_rotation(roll, pitch, yaw):
    """Rz(yaw) @ Ry(pitch) @ Rx(roll)."""
    cr, sr, cp, sp, cy, sy = (np.cos(roll), np.sin(roll), np.cos(pitch), np.sin(pitch),
                              np.cos(yaw), np.sin(yaw))
    Rx = np.array([[1, 0, 0], [0, cr, -sr], [0, sr, cr]])
    Ry = np.array([[cp, 0, sp], [0, 1, 0], [-sp, 0, cp]])
    Rz = np.array([[cy, -sy, 0], [sy, cy, 0], [0, 0, 1]])
    return Rz @ Ry @ Rx


@st.composite
def rotations(draw):
    """A rotation matrix from random roll, pitch, yaw."""
    return rpy_rotation(draw(_floats(-np.pi, np.pi)), draw(_floats(-np.pi / 2, np.pi / 2)),
                        draw(_floats(-np.pi, np.pi)))


@st.composite
def vectors(draw, lo=-0.5, hi=0.5):
    return np.array([draw(_floats(lo, hi)) for _ in range(3)])


@st.composite
def unit_axes(draw):
    """A principal axis (+-x, +-y, +-z) or a random direction on the unit sphere."""
    if draw(st.booleans()):
        k, sign = draw(st.integers(0, 2)), draw(st.sampled_from([-1.0, 1.0]))
        a = np.zeros(3)
        a[k] = sign
        return a
    polar, azimuth = draw(_floats(0.0, np.pi)), draw(_floats(-np.pi, np.pi))
    return np.array([np.sin(polar) * np.cos(azimuth), np.sin(polar) * np.sin(azimuth),
                     np.cos(polar)])


@st.composite
def inertias_about_com(draw, mass):
    """R diag(d) R^T with principal moments d that satisfy the triangle inequality
    d3 < d1 + d2 (strictly, with margin), scaled to the mass."""
    d1 = mass * draw(_floats(1e-3, 0.1))
    d2 = mass * draw(_floats(1e-3, 0.1))
    t = draw(_floats(0.05, 0.95))
    d3 = abs(d1 - d2) + t * (d1 + d2 - abs(d1 - d2))
    R = draw(rotations())
    return R @ np.diag([d1, d2, d3]) @ R.T


@st.composite
def links(draw):
    mass = draw(_floats(0.1, 10.0))
    return Link(mass, draw(vectors(-0.3, 0.3)), draw(inertias_about_com(mass)))


@st.composite
def drives(draw, friction=True):
    gear = draw(_floats(1.0, 100.0))
    rotor = draw(st.one_of(st.just(0.0), _floats(0.0, 1e-4)))
    if not friction:
        return Drive(gear, rotor)
    return Drive(gear, rotor, draw(_floats(0.0, 5.0)), draw(_floats(0.0, 5.0)),
                 draw(_floats(1e-3, 0.1)))


@st.composite
def limits(draw, joint_type):
    span = np.pi if joint_type == "revolute" else 1.0
    position = None
    if draw(st.booleans()):
        lo = draw(_floats(-span, 0.0))
        position = (lo, lo + draw(_floats(0.1, 2 * span)))

    def maybe(lo, hi):
        return draw(st.one_of(st.none(), _floats(lo, hi)))

    return Limits(position, maybe(0.5, 5.0), maybe(1.0, 50.0), maybe(10.0, 1000.0),
                  maybe(1.0, 500.0))


@st.composite
def payloads(draw):
    if draw(st.booleans()):
        return Payload()
    mass = draw(_floats(0.1, 5.0))
    return Payload(mass, draw(vectors(-0.2, 0.2)), draw(inertias_about_com(mass)))


@st.composite
def gravities(draw):
    """Usually 9.81 m/s^2 down the base z axis, sometimes any vector up to 10 m/s^2."""
    if draw(st.booleans()):
        return np.array([0.0, 0.0, -9.81])
    return draw(vectors(-10.0 / np.sqrt(3), 10.0 / np.sqrt(3)))


@st.composite
def robots(draw, min_dof=1, max_dof=16, trees=True, prismatic=True, friction=True):
    """A random valid Robot: mixed joint types, random unit axes and origins, a random
    tree (each parent earlier in the list) or a serial chain, random links, drives,
    limits, payload (or none) and tool frame."""
    dof = draw(st.integers(min_dof, max_dof))
    joints = []
    for i in range(dof):
        if i == 0:
            parent = -1
        elif trees:
            parent = draw(st.integers(-1, i - 1))
        else:
            parent = i - 1
        kind = draw(st.sampled_from(["revolute", "prismatic"])) if prismatic else "revolute"
        joints.append(Joint(
            name=f"j{i}", type=kind, parent=parent, rotation=draw(rotations()),
            translation=draw(vectors()), axis=draw(unit_axes()), link=draw(links()),
            drive=draw(drives(friction)), limits=draw(limits(kind))))
    tool = Tool(draw(st.integers(0, dof - 1)), draw(rotations()), draw(vectors(-0.3, 0.3)))
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
