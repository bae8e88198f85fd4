"""The native model format (TOML, `format = 1`); see docs/model-format.md.

`build_robot(data, file)` turns the parsed dictionary into a validated Robot; the DH
table reader goes through it too, so every check and message is the same.
"""
import difflib
import os
import tomllib
import warnings

import numpy as np

from ..errors import ModelError, ModelWarning, located
from ..model import (_HUGE, Drive, Joint, Limits, Link, Payload, Robot, Tool, _from_params10,
                     inertia_from_entries, params10)
from . import read_text
from . import transforms as tf
from .dh import CONVENTIONS, dh_split

FORMAT_VERSION = 1

# Schema: table name -> {key: kind}. kinds: "str", "num", "vec3", "pair", "table:<name>",
# "tables:<name>" (array of tables), "int".
SCHEMA = {
    "top": {"format": "int", "robot": "table:robot", "joint": "tables:joint",
            "tool": "table:tool", "payload": "table:payload"},
    "robot": {"name": "str", "gravity": "vec3"},
    "joint": {"name": "str", "type": "str", "parent": "str", "origin": "table:origin",
              "axis": "vec3", "dh": "table:dh", "link": "table:link", "drive": "table:drive",
              "limits": "table:limits"},
    "origin": {"xyz": "vec3", "rpy": "vec3"},
    "dh": {"a": "num", "alpha": "num", "d": "num", "theta": "num", "convention": "str"},
    "link": {"mass": "num", "com": "vec3", "inertia": "table:inertia"},
    "inertia": {"xx": "num", "yy": "num", "zz": "num", "xy": "num", "xz": "num", "yz": "num"},
    "drive": {"gear_ratio": "num", "rotor_inertia": "num", "viscous": "num", "coulomb": "num",
              "coulomb_band": "num"},
    "limits": {"position": "pair", "velocity": "num", "acceleration": "num", "jerk": "num",
               "torque": "num"},
    "tool": {"parent": "str", "origin": "table:origin"},
    "payload": {"mass": "num", "com": "vec3", "inertia": "table:inertia", "rated_mass": "num"},
}
REQUIRED = {
    "top": ("format", "robot", "joint"),
    "robot": ("name",),
    "joint": ("name", "type"),
    "dh": ("a", "alpha", "d", "theta", "convention"),
    "link": ("mass", "inertia"),
    "inertia": ("xx", "yy", "zz"),
    "payload": ("mass",),
}
JOINT_TYPES = ("revolute", "prismatic", "fixed")


def _is_num(v):
    return isinstance(v, (int, float)) and not isinstance(v, bool)


_FLOAT_MAX = float(np.finfo(float).max)
FINITE_TABLES = ("origin", "dh")   # numbers that place frames: must be finite as written


def _check_numbers(value, kind, field, loc):
    """Numbers that fit a float; finite ones in the tables that place frames (so the
    message names the field written, not the rotation computed from it)."""
    nums = value if isinstance(value, list) else [value]
    for v in nums:
        if isinstance(v, int) and abs(v) > _FLOAT_MAX:
            raise ModelError("too large for a float (over about 1.8e308)", field=field,
                             value=value, **loc)
    if kind in FINITE_TABLES:
        if not all(np.isfinite(float(v)) for v in nums):
            raise ModelError("must be finite", field=field, value=value, **loc)
        if any(abs(v) > _HUGE for v in nums):
            raise ModelError(f"must be below {_HUGE:g} in magnitude (a unit error?)",
                             field=field, value=value, **loc)


def _check_table(table, kind, path, loc):
    """Unknown keys (with a suggestion), missing keys and wrong types, recursively.
    `path` is the dotted field prefix; `loc` has file and joint for the error."""
    if not isinstance(table, dict):
        raise ModelError("must be a table", field=path or None, value=table, **loc)
    schema = SCHEMA[kind]
    for key, value in table.items():
        field = f"{path}.{key}" if path else key
        if key not in schema:
            near = difflib.get_close_matches(key, list(schema), n=1, cutoff=0.5)
            hint = f"; did you mean {near[0]!r}?" if near else \
                f"; valid keys: {', '.join(schema)}"
            raise ModelError(f"unknown key{hint}", field=field, **loc)
        want = schema[key]
        if want.startswith("table:"):
            _check_table(value, want[6:], field, loc)
        elif want.startswith("tables:"):
            if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
                raise ModelError("must be an array of tables ([[...]])", field=field, **loc)
        elif want == "str" and not isinstance(value, str):
            raise ModelError(f"must be a string, got {type(value).__name__}", field=field,
                             value=value, **loc)
        elif want == "num" and not _is_num(value):
            raise ModelError(f"must be a number, got {type(value).__name__}", field=field,
                             value=value, **loc)
        elif want == "num":
            _check_numbers(value, kind, field, loc)
        elif want == "int" and (not isinstance(value, int) or isinstance(value, bool)):
            raise ModelError(f"must be an integer, got {type(value).__name__}", field=field,
                             value=value, **loc)
        elif want in ("vec3", "pair"):
            n = 3 if want == "vec3" else 2
            if not (isinstance(value, list) and len(value) == n and all(map(_is_num, value))):
                raise ModelError(f"must be a list of {n} numbers", field=field, value=value,
                                 **loc)
            _check_numbers(value, kind, field, loc)
    for key in REQUIRED.get(kind, ()):
        if key not in table:
            field = f"{path}.{key}" if path else key
            raise ModelError("missing required field", field=field, **loc)


def _origin(table):
    o = table or {}
    return tf.make(tf.rpy_matrix(*o.get("rpy", [0.0, 0.0, 0.0])), o.get("xyz", [0.0, 0.0, 0.0]))


def _inertia(t):
    return inertia_from_entries(t["xx"], t["yy"], t["zz"], t.get("xy", 0.0), t.get("xz", 0.0),
                                t.get("yz", 0.0))


class _Entry:
    """One [[joint]] entry while the robot is being assembled."""

    def __init__(self, name, moving_index, out):
        self.name = name
        self.moving = moving_index  # index of the moving joint whose body this is in, -1 = base
        self.out = out              # output frame in that joint's (moved) frame, or in the base


def build_robot(data, file=None, tool=None, _massless_links=False):
    """A validated Robot from the native format's dictionary. `tool` overrides the
    tool parent (a joint name). (`_massless_links`: importers may leave out a moving
    joint's link when fixed children carry its mass.)"""
    file = None if file is None else os.fspath(file)
    base = {"file": file}
    _check_table(data, "top", "", base)
    if data["format"] != FORMAT_VERSION:
        raise ModelError(f"unsupported format version (this reader knows {FORMAT_VERSION})",
                         field="format", value=data["format"], file=file)
    if not data["joint"]:
        raise ModelError("a robot needs at least one [[joint]]", field="joint", file=file)
    entries = {}          # name -> _Entry
    order = []            # entry names in file order
    moving = []           # per moving joint: dict with the parts
    for k, jt in enumerate(data["joint"]):
        name = jt.get("name")
        loc = {"file": file, "joint": name if isinstance(name, str) else f"#{k + 1}"}
        _check_table(jt, "joint", "", loc)
        with located(**loc):
            _check_joint_entry(jt, entries, order)
            parent_name = jt.get("parent", order[-1] if order else "base")
            parent = entries[parent_name] if parent_name != "base" else _Entry("base", -1,
                                                                               np.eye(4))
            if "dh" in jt:
                origin, out = dh_split(jt["dh"]["a"], jt["dh"]["alpha"], jt["dh"]["d"],
                                       jt["dh"]["theta"], jt["dh"]["convention"])
                axis = [0.0, 0.0, 1.0]
            else:
                origin, out = _origin(jt.get("origin")), np.eye(4)
                axis = jt.get("axis")
            link = None
            if "link" in jt and jt["link"]["mass"] == 0 and _massless_links:
                pass
            elif "link" in jt:
                L = jt["link"]
                with located(prefix="link"):
                    own = Link(L["mass"], L.get("com", [0.0, 0.0, 0.0]), _inertia(L["inertia"]))
                link = (own.mass, own.com, own.inertia)
            if jt["type"] == "fixed":
                T = parent.out @ origin @ out   # this entry's output frame in the parent body
                entries[name] = _Entry(name, parent.moving, T)
                if link is not None:
                    if parent.moving < 0:
                        warnings.warn(f"{file or 'model'}: joint {name!r}: fixed to the base; "
                                      "its link mass is ignored", ModelWarning, stacklevel=2)
                    else:
                        moving[parent.moving]["parts"].append(tf.move_link(T, *link))
            else:
                if link is None and not _massless_links:
                    raise ModelError("missing required field (a moving joint needs a link)",
                                     field="link")
                T = parent.out @ origin
                entries[name] = _Entry(name, len(moving), out)
                moving.append({
                    "name": name, "type": jt["type"], "parent": parent.moving,
                    "rotation": T[:3, :3], "translation": T[:3, 3], "axis": axis,
                    "parts": [] if link is None else [tf.move_link(out, *link)],
                    "drive": jt.get("drive", {}), "limits": jt.get("limits", {}),
                })
            order.append(name)
    if not moving:
        raise ModelError("a robot needs at least one revolute or prismatic joint",
                         field="joint", file=file)
    joints = []
    for m in moving:
        with located(file=file, joint=m["name"]):
            with located(prefix="link"):
                link = _combine(m["parts"])
            with located(prefix="drive"):
                drive = Drive(**m["drive"])
            with located(prefix="limits"):
                lim = dict(m["limits"])
                if "position" in lim:
                    lim["position"] = tuple(lim["position"])
                limits = Limits(**lim)
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always", ModelWarning)
                joints.append(Joint(m["name"], m["type"], m["parent"], m["rotation"],
                                    m["translation"], m["axis"], link, drive, limits))
            for w in caught:     # say which file the warning is about
                warnings.warn(f"{file}: {w.message}" if file else str(w.message),
                              w.category, stacklevel=2)
    tool_table = data.get("tool", {})
    tool_name = tool if tool is not None else tool_table.get("parent", order[-1])
    if tool_name not in entries:
        raise ModelError(_unknown_joint_text(tool_name, order), file=file,
                         field="tool.parent", value=tool_name)
    tp = entries[tool_name]
    if tp.moving < 0:
        raise ModelError("the tool must sit on a moving joint's body, not on the base",
                         file=file, field="tool.parent", value=tool_name)
    T = tp.out @ _origin(tool_table.get("origin"))
    with located(file=file, prefix="tool"):
        tool_obj = Tool(tp.moving, T[:3, :3], T[:3, 3])
    pt = data.get("payload")
    with located(file=file, prefix="payload"):
        if pt is None:
            payload = Payload()
        else:
            payload = Payload(pt["mass"], pt.get("com", [0.0, 0.0, 0.0]),
                              _inertia(pt["inertia"]) if "inertia" in pt else None,
                              pt.get("rated_mass"))
    robot = data["robot"]
    return Robot(robot["name"], robot.get("gravity", [0.0, 0.0, -9.81]), tuple(joints),
                 tool_obj, payload, file)


def _combine(parts):
    """One Link from the (mass, com, inertia about com) parts of a body, all in its
    joint frame: the moving joint's own link and the links of fixed joints merged in."""
    if len(parts) == 1:
        return Link(*parts[0])
    total = sum((params10(*p) for p in parts), np.zeros(10))
    if not total[0] > 0:
        raise ModelError("must be > 0 (a moving joint's body needs mass)", field="mass",
                         value=float(total[0]))
    return Link(*_from_params10(total))


def _unknown_joint_text(name, order):
    near = difflib.get_close_matches(str(name), order, n=1, cutoff=0.5)
    return "no earlier joint of that name" + (f"; did you mean {near[0]!r}?" if near else "")


def _check_joint_entry(jt, entries, order):
    """Type, parent, origin/dh/axis combination of one [[joint]] entry."""
    name = jt["name"]
    if name in entries or name == "base":
        raise ModelError("joint name used twice" if name in entries else "'base' is reserved",
                         field="name", value=name)
    if jt["type"] not in JOINT_TYPES:
        raise ModelError(f"must be one of {', '.join(JOINT_TYPES)}", field="type",
                         value=jt["type"])
    parent = jt.get("parent")
    if parent is not None and parent != "base" and parent not in entries:
        raise ModelError(_unknown_joint_text(parent, order) + " (parents come first)",
                         field="parent", value=parent)
    if "dh" in jt:
        if "origin" in jt:
            raise ModelError("give either dh or origin, not both", field="origin")
        if "axis" in jt:
            raise ModelError("a dh joint moves about its local z; leave out axis", field="axis")
        if jt["dh"]["convention"] not in CONVENTIONS:
            raise ModelError(f"must be one of {', '.join(CONVENTIONS)}", field="dh.convention",
                             value=jt["dh"]["convention"])
    elif jt["type"] != "fixed" and "axis" not in jt:
        raise ModelError("missing required field (or give a dh row)", field="axis")
    if jt["type"] == "fixed":
        for key in ("axis", "drive", "limits"):
            if key in jt:
                raise ModelError("a fixed joint has no " + key, field=key)


def loads_toml(text, file=None, **options):
    """A Robot from TOML text."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ModelError(f"not valid TOML: {exc}", file=file) from None
    except ValueError as exc:     # Python reads integers of at most 4300 digits
        why = "an integer with too many digits to read" if "digits" in str(exc) else exc
        raise ModelError(f"not valid TOML: {why}", file=file) from None
    return build_robot(data, file=file, **options)


def load_toml(path, **options):
    """Read, validate and return a Robot from a native TOML model file."""
    return loads_toml(read_text(path), file=os.fspath(path), **options)
