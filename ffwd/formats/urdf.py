"""URDF import (the open XML robot description), stdlib xml.etree only.

Supported: revolute, continuous, prismatic and fixed joints; joint origins (xyz, rpy)
and axes; link inertials (mass, origin with rotation, inertia); joint limits (lower,
upper, effort, velocity; an effort or velocity of 0 means "no limit", as URDF files
commonly write it, a negative one is refused) and dynamics (damping -> viscous,
friction -> coulomb).
Refused with a located message: mimic joints, floating/planar joints, closed loops
(a link with two parent joints), several root links. The root link's own inertial is
ignored (it does not move; a warning if its mass is non-zero). The tool frame is the
frame of the last link of the chain (the leaf reached last), or `tool=<link name>`.

The URDF is turned into the native format's dictionary and built by the same code as
TOML models, so fixed joints are merged and every check is the same.
"""
import os
import warnings
import xml.etree.ElementTree as ET

import numpy as np

from ..errors import ModelError, ModelWarning
from ..model import inertia_from_entries
from . import not_utf8
from .toml import build_robot
from .transforms import rpy_matrix

TYPES = {"revolute": "revolute", "continuous": "revolute", "prismatic": "prismatic",
         "fixed": "fixed"}


def _floats(text, n, file, joint, field):
    try:
        vals = [float(v) for v in (text or "").split()]
    except ValueError:
        vals = []
    if len(vals) != n or not all(np.isfinite(vals)):
        raise ModelError(f"must be {n} finite numbers", file=file, joint=joint, field=field,
                         value=text)
    return vals


def _attr_float(elem, key, file, joint, field, default=None):
    text = elem.get(key)
    if text is None:
        if default is None:
            raise ModelError("missing required attribute", file=file, joint=joint, field=field)
        return default
    return _floats(text, 1, file, joint, field)[0]


def _origin(elem, file, joint, field):
    o = elem.find("origin") if elem is not None else None
    if o is None:
        return [0.0, 0.0, 0.0], [0.0, 0.0, 0.0]
    xyz = _floats(o.get("xyz", "0 0 0"), 3, file, joint, f"{field}.xyz")
    rpy = _floats(o.get("rpy", "0 0 0"), 3, file, joint, f"{field}.rpy")
    return xyz, rpy


def _inertial(link, file, joint, lname):
    """(mass, com, 3x3 inertia about the com in link axes) or None if no <inertial>."""
    el = link.find("inertial") if link is not None else None
    if el is None:
        return None
    where = f"link[{lname}].inertial"
    xyz, rpy = _origin(el, file, joint, f"{where}.origin")
    m_el = el.find("mass")
    if m_el is None:
        raise ModelError("missing <mass>", file=file, joint=joint, field=f"{where}.mass")
    mass = _attr_float(m_el, "value", file, joint, f"{where}.mass")
    i_el = el.find("inertia")
    if i_el is None:
        raise ModelError("missing <inertia>", file=file, joint=joint, field=f"{where}.inertia")
    e = {k: _attr_float(i_el, k, file, joint, f"{where}.inertia.{k}", 0.0 if k[1] != k[2] else None)
         for k in ("ixx", "iyy", "izz", "ixy", "ixz", "iyz")}
    # URDF lists the inertia matrix entries in the <inertial> origin frame
    I = inertia_from_entries(e["ixx"], e["iyy"], e["izz"], e["ixy"], e["ixz"], e["iyz"])
    R = rpy_matrix(*rpy)
    return mass, xyz, R @ I @ R.T


def _link_table(inertial):
    mass, com, I = inertial
    return {"mass": mass, "com": [float(v) for v in com],
            "inertia": {"xx": I[0, 0], "yy": I[1, 1], "zz": I[2, 2],
                        "xy": I[0, 1], "xz": I[0, 2], "yz": I[1, 2]}}


def _declares_encoding(data):
    """True if the XML declaration names an encoding (then it need not be UTF-8)."""
    head = data[:200].lstrip(b"\xef\xbb\xbf")
    return head.startswith(b"<?xml") and b"encoding" in head.split(b"?>")[0]


def urdf_to_dict(text, file=None, tool=None):
    """The URDF text (str, or bytes as read from a file) as the native format's
    dictionary (see toml.build_robot)."""
    try:
        root = ET.fromstring(text)
    except ET.ParseError as exc:
        if isinstance(text, bytes) and not _declares_encoding(text) and not_utf8(text):
            # the usual cause of an "invalid token": say so, with the position
            raise ModelError(f"not valid XML: {not_utf8(text)} (or declare its encoding)",
                             file=file) from None
        raise ModelError(f"not valid XML: {exc}", file=file) from None
    if root.tag != "robot":
        raise ModelError("the root element must be <robot>", file=file, value=root.tag)
    links = {}
    for el in root.findall("link"):
        name = el.get("name")
        if not name:
            raise ModelError("a <link> without a name", file=file, field="link")
        if name in links:
            raise ModelError("link name used twice", file=file, field="link", value=name)
        links[name] = el
    joints = {}
    child_of = {}     # child link -> joint name
    children = {}     # parent link -> [joint names] in file order
    for el in root.findall("joint"):
        name = el.get("name")
        if not name:
            raise ModelError("a <joint> without a name", file=file, field="joint")
        if name in joints:
            raise ModelError("joint name used twice", file=file, joint=name, field="name")
        jtype = el.get("type")
        if jtype not in TYPES:
            raise ModelError("unsupported joint type (revolute, continuous, prismatic or "
                             "fixed)", file=file, joint=name, field="type", value=jtype)
        if el.find("mimic") is not None:
            raise ModelError("mimic joints are not supported (each joint needs its own "
                             "coordinate)", file=file, joint=name, field="mimic",
                             value=el.find("mimic").get("joint"))
        pl = el.find("parent").get("link") if el.find("parent") is not None else None
        cl = el.find("child").get("link") if el.find("child") is not None else None
        for field, lname in (("parent", pl), ("child", cl)):
            if lname is None:
                raise ModelError("missing <" + field + " link=...>", file=file, joint=name,
                                 field=field)
            if lname not in links:
                raise ModelError("no <link> of that name", file=file, joint=name,
                                 field=f"{field}.link", value=lname)
        if cl in child_of:
            raise ModelError(f"link {cl!r} already has parent joint {child_of[cl]!r}: closed "
                             "loops are not supported", file=file, joint=name,
                             field="child.link", value=cl)
        joints[name] = el
        child_of[cl] = name
        children.setdefault(pl, []).append(name)
    roots = [n for n in links if n not in child_of]
    if len(roots) != 1:
        raise ModelError("need exactly one root link (a link that is no joint's child), found "
                         f"{len(roots)}" + (": a closed loop?" if not roots else ""),
                         file=file, field="link", value=roots)
    base = roots[0]
    inert = _inertial(links[base], file, None, base)
    if inert is not None and inert[0] != 0:
        warnings.warn(f"{file or 'urdf'}: root link {base!r}: its inertial is ignored (the "
                      "base does not move)", ModelWarning, stacklevel=3)
    # joints in depth-first order from the root (iterative, children in file order)
    order, stack = [], list(reversed(children.get(base, [])))
    while stack:
        jn = stack.pop()
        order.append(jn)
        stack.extend(reversed(children.get(joints[jn].find("child").get("link"), [])))
    if len(order) != len(joints):
        lost = sorted(set(joints) - set(order))
        raise ModelError("joints not connected to the root link (a closed loop?)", file=file,
                         joint=lost[0], field="parent")
    entries = []
    for jn in order:
        el = joints[jn]
        pl = el.find("parent").get("link")
        cl = el.find("child").get("link")
        jtype = el.get("type")
        xyz, rpy = _origin(el, file, jn, "origin")
        entry = {"name": jn, "type": TYPES[jtype],
                 "parent": "base" if pl == base else child_of[pl],
                 "origin": {"xyz": xyz, "rpy": rpy}}
        if jtype != "fixed":
            ax = el.find("axis")
            entry["axis"] = _floats(ax.get("xyz", "1 0 0"), 3, file, jn, "axis.xyz") \
                if ax is not None else [1.0, 0.0, 0.0]
            entry["limits"] = _limits(el, jtype, file, jn)
            dyn = el.find("dynamics")
            if dyn is not None:
                entry["drive"] = {"viscous": _attr_float(dyn, "damping", file, jn,
                                                         "dynamics.damping", 0.0),
                                  "coulomb": _attr_float(dyn, "friction", file, jn,
                                                         "dynamics.friction", 0.0)}
        inert = _inertial(links[cl], file, jn, cl)
        if inert is not None:
            entry["link"] = _link_table(inert)
        entries.append(entry)
    if not entries:
        raise ModelError("no joints", file=file, field="joint")
    if tool is None:
        leaves = [jn for jn in order
                  if joints[jn].find("child").get("link") not in children]
        tool_joint = leaves[-1]
    else:
        if tool not in child_of:
            raise ModelError("no link of that name below the root", file=file,
                             field="tool", value=tool)
        tool_joint = child_of[tool]
    return {"format": 1, "robot": {"name": root.get("name") or "urdf_robot"},
            "joint": entries, "tool": {"parent": tool_joint}}


def _limits(el, jtype, file, jn):
    lim = el.find("limit")
    out = {}
    if lim is None:
        return out
    for key, name in (("effort", "torque"), ("velocity", "velocity")):
        v = _attr_float(lim, key, file, jn, f"limit.{key}", 0.0)
        if v < 0:
            raise ModelError("must be >= 0 (0 = no limit)", file=file, joint=jn,
                             field=f"limit.{key}", value=v)
        if v > 0:             # URDF files commonly write 0 for "no limit"
            out[name] = v
    if jtype != "continuous" and (lim.get("lower") is not None or lim.get("upper") is not None):
        lo = _attr_float(lim, "lower", file, jn, "limit.lower", 0.0)
        hi = _attr_float(lim, "upper", file, jn, "limit.upper", 0.0)
        if not (lo == 0.0 and hi == 0.0):
            out["position"] = [lo, hi]
    return out


def loads_urdf(text, file=None, tool=None, gravity=None):
    """A Robot from URDF text; `tool` names the link carrying the tool frame."""
    data = urdf_to_dict(text, file=file, tool=tool)
    if gravity is not None:
        data["robot"]["gravity"] = list(gravity)
    return build_robot(data, file=file, _massless_links=True)


def load_urdf(path, **options):
    """Import a URDF file as a validated Robot."""
    with open(path, "rb") as f:
        data = f.read()     # bytes: the XML parser honours a BOM and an encoding declaration
    return loads_urdf(data, file=os.fspath(path), **options)
