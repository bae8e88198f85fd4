"""ffwd/model.py: the direct constructors refuse what the file readers never produce, and
the report functions (warnings, describe) say what they should."""
import dataclasses

import numpy as np
import pytest

from ffwd import ModelError
from ffwd.model import Drive, Joint, Limits, Link, Payload, Robot, Tool

Z = np.array([0.0, 0.0, 1.0])


def link(mass=1.0):
    return Link(mass, [0.0, 0.0, 0.1], np.diag([0.01, 0.01, 0.01]))


def jt(name="j1", parent=-1, **kw):
    args = dict(name=name, type="revolute", parent=parent, rotation=np.eye(3),
                translation=np.zeros(3), axis=Z, link=link())
    args.update(kw)
    return Joint(**args)


@pytest.mark.parametrize("kw, words", [
    (dict(name=""), ["'name'", "non-empty string"]),
    (dict(type="ball"), ["joint 'j1'", "'type' = 'ball'", "revolute, prismatic"]),
    (dict(parent=True), ["joint 'j1'", "'parent' = True", "integer joint index"]),
    (dict(parent=0.0), ["'parent' = 0.0"]),
    (dict(link="heavy"), ["joint 'j1'", "'link'", "must be a Link"]),
    (dict(drive=None), ["'drive'", "must be a Drive"]),
    (dict(translation=[0.0, 1.0]), ["'translation'", "shape (3,)", "got shape (2,)"]),
    (dict(axis=["x", "y", "z"]), ["'axis'", "must be numbers"]),
    (dict(rotation=np.diag([1.0, 1.0, -1.0])), ["'rotation'", "reflection"]),
])
def test_joint_constructor_refuses(kw, words):
    with pytest.raises(ModelError) as info:
        jt(**kw)
    assert all(w in str(info.value) for w in words), str(info.value)


@pytest.mark.parametrize("make, words", [
    (lambda: Tool(True), ["'parent' = True"]),
    (lambda: Payload(0.0, inertia=np.eye(3) * 1e-3), ["'inertia'", "zero when the payload mass is 0"]),
    (lambda: Payload(1.0, rated_mass=0.0), ["'rated_mass' = 0.0", "> 0"]),
    (lambda: Payload(True), ["'mass' = True", "must be a number"]),
    (lambda: Link(1.0, [0, 0, 0], [[0.01, 0.002, 0], [0, 0.01, 0], [0, 0, 0.01]]),
     ["'inertia'", "symmetric"]),
    (lambda: Limits(position=(1.0,)), ["'position'", "shape (2,)"]),
    (lambda: Drive(gear_ratio=0.0), ["'gear_ratio' = 0.0", "> 0"]),
])
def test_part_constructors_refuse(make, words):
    with pytest.raises(ModelError) as info:
        make()
    assert all(w in str(info.value) for w in words), str(info.value)


@pytest.mark.parametrize("kw, words", [
    (dict(name=3), ["'robot.name' = 3", "must be a string"]),
    (dict(joints=(jt(), "j2")), ["'joint[1]'", "must be a Joint"]),
    (dict(joints=(jt(), jt())), ["joint 'j1'", "used twice"]),
    (dict(joints=(jt(), jt("j2", parent=1))), ["joint 'j2'", "'parent' = 1", "this is joint 1"]),
    (dict(tool=Tool(2)), ["'tool.parent' = 2", "0..1"]),
    (dict(tool="flange"), ["'tool'", "must be a Tool"]),
    (dict(payload=3.0), ["'payload'", "must be a Payload"]),
    (dict(joints=()), ["1 to 16 moving joints, got 0"]),
])
def test_robot_constructor_refuses(kw, words):
    args = dict(name="r", gravity=[0, 0, -9.81], joints=(jt(), jt("j2", parent=0)), source="r.toml")
    args.update(kw)
    with pytest.raises(ModelError) as info:
        Robot(**args)
    text = str(info.value)
    assert text.startswith("r.toml: ") and all(w in text for w in words), text


def test_index_and_defaults():
    r = Robot("r", [0, 0, -9.81], (jt(), jt("j2", parent=0)))
    assert r.index("j2") == 1 and r.tool.parent == 1 and r.payload.mass == 0
    with pytest.raises(ModelError, match="'joint' = 'j3': no such joint"):
        r.index("j3")


def test_warnings_name_suspicious_inertia_and_missing_limits():
    tiny = Link(2.0, [0.0, 0.0, 0.2], np.diag([1e-7, 1e-7, 1e-7]))       # below m (1 mm)^2
    huge = Link(1.0, [0.0, 0.0, 0.1], np.diag([50.0, 50.0, 50.0]))       # far above m r^2
    full = Limits((-1.0, 1.0), 1.0, 1.0, 1.0, 1.0)
    r = Robot("r", [0, 0, -9.81], (jt(link=tiny, limits=full), jt("j2", 0, link=huge)),
              payload=Payload(3.0, rated_mass=5.0))
    w = r.warnings()
    assert any("joint 'j1': smallest principal moment" in s for s in w)
    assert any("joint 'j2': largest principal moment" in s and "units?" in s for s in w)
    assert "joint 'j2': no position, velocity, acceleration, jerk, torque limit" in w
    assert not any("j1" in s and "limit" in s for s in w)
    assert not any("payload" in s for s in w)
    heavy = r.with_payload(6.0)
    assert "payload 6 kg exceeds the rated 5 kg" in heavy.warnings()


def test_describe_prismatic_units_and_payload():
    slide = jt("slide", type="prismatic", limits=Limits((0.0, 0.5), 0.3, None, None, 200.0))
    r = Robot("gantry", [0, 0, -9.81], (slide, jt("wrist", parent=0)), source="/x/gantry.toml",
              payload=Payload(1.5, [0.0, 0.0, 0.05], rated_mass=2.0))
    text = r.describe()
    assert text.splitlines()[0] == "robot 'gantry': 2 joints (from gantry.toml)"
    assert "0: slide prismatic on base, mass 1 kg" in text
    assert "q [0, 0.5] m, v 0.3, tau 200" in text
    assert "1: wrist revolute on slide" in text and "limits: none" in text
    assert "payload 1.5 kg at [0.0, 0.0, 0.05] m (tool frame), rated 2 kg" in text
    bare = dataclasses.replace(r, payload=Payload())
    assert "payload: none" in bare.describe()
