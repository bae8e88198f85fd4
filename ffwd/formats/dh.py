"""Denavit-Hartenberg rows and the standalone DH table file (`*.dh.csv`).

A DH row places a joint whose axis is its local z:
  standard (distal):    T_i = Rz(theta + q) Tz(d) Tx(a) Rx(alpha)
                        (prismatic: Rz(theta) Tz(d + q) Tx(a) Rx(alpha))
  modified (proximal):  T_i = Rx(alpha) Tx(a) Rz(theta + q) Tz(d)
                        (prismatic: Rx(alpha) Tx(a) Rz(theta) Tz(d + q))
The ffwd joint frame is where the motion happens, so a row is split into the part
before the motion (the joint's origin) and the part after it (the joint's "output
frame", in which its link, its children and the tool are given):
  standard: origin = Rz(theta) Tz(d), output = Tx(a) Rx(alpha)   (output = DH frame {i})
  modified: origin = Rx(alpha) Tx(a) Rz(theta) Tz(d), output = identity (= DH frame {i})
Rotation and translation about/along z commute with the motion, which makes the split exact.
"""
import csv
import os

import numpy as np

from ..errors import ModelError
from . import transforms as tf

CONVENTIONS = ("standard", "modified")


def dh_split(a, alpha, d, theta, convention):
    """(origin, output) 4x4 transforms of one DH row (see the module doc)."""
    if convention == "standard":
        return tf.rz(theta) @ tf.trans(z=d), tf.trans(x=a) @ tf.rx(alpha)
    if convention == "modified":
        return tf.rx(alpha) @ tf.trans(x=a) @ tf.rz(theta) @ tf.trans(z=d), np.eye(4)
    raise ModelError(f"must be one of {', '.join(CONVENTIONS)}", field="dh.convention",
                     value=convention)


def dh_row_transform(a, alpha, d, theta, q, convention, prismatic=False):
    """The full DH row transform at joint value q (the definition, for checks)."""
    if prismatic:
        d, qa = d + q, 0.0
    else:
        qa = q
    if convention == "standard":
        return tf.rz(theta + qa) @ tf.trans(z=d) @ tf.trans(x=a) @ tf.rx(alpha)
    return tf.rx(alpha) @ tf.trans(x=a) @ tf.rz(theta + qa) @ tf.trans(z=d)


# ---- the standalone table ---------------------------------------------------------
#
# A CSV file; blank lines and lines starting with '#' are ignored. Setting rows come
# first, named by their first cell:
#   robot,<name>                 required
#   convention,standard|modified required
#   gravity,gx,gy,gz             optional (default 0,0,-9.81)
#   tool,x,y,z[,roll,pitch,yaw]  optional tool origin in the last DH frame
#   payload,mass,cx,cy,cz[,rated_mass]  optional point-mass payload (tool frame)
# then a header row starting with `joint` and one row per joint. Columns (any order):
#   joint, type, a, alpha, d, theta, mass, cx, cy, cz, ixx, iyy, izz, ixy, ixz, iyz
#   (required), and optionally gear_ratio, rotor_inertia, viscous, coulomb,
#   coulomb_band, q_min, q_max, v_max, a_max, j_max, tau_max. An empty cell = not given.

REQUIRED_COLUMNS = ("joint", "type", "a", "alpha", "d", "theta", "mass", "cx", "cy", "cz",
                    "ixx", "iyy", "izz", "ixy", "ixz", "iyz")
DRIVE_COLUMNS = ("gear_ratio", "rotor_inertia", "viscous", "coulomb", "coulomb_band")
LIMIT_COLUMNS = {"v_max": "velocity", "a_max": "acceleration", "j_max": "jerk",
                 "tau_max": "torque"}
OPTIONAL_COLUMNS = DRIVE_COLUMNS + ("q_min", "q_max") + tuple(LIMIT_COLUMNS)


def _num(text, file, line, field, joint=None):
    try:
        value = float(text)
    except ValueError:
        raise ModelError(f"line {line}: must be a number", file=file, joint=joint,
                         field=field, value=text) from None
    if not np.isfinite(value):
        raise ModelError(f"line {line}: must be finite", file=file, joint=joint,
                         field=field, value=value)
    return value


def _nums(cells, count_ok, file, line, field):
    vals = [_num(c, file, line, field) for c in cells if c.strip() != ""]
    if len(vals) not in count_ok:
        raise ModelError(f"line {line}: needs {' or '.join(map(str, count_ok))} numbers",
                         file=file, field=field, value=cells)
    return vals


def table_to_dict(text, file=None):
    """The DH table as the native format's dictionary (see toml.build_robot)."""
    import difflib
    rows = []
    reader = csv.reader(text.splitlines())
    try:
        for row in reader:
            cells = [c.strip() for c in row]
            if not cells or all(c == "" for c in cells) or cells[0].startswith("#"):
                continue
            rows.append((reader.line_num, cells))
    except csv.Error as exc:      # e.g. a cell over the csv module's field size limit
        raise ModelError(f"line {reader.line_num}: not readable as CSV ({exc})",
                         file=file) from None
    data = {"format": 1, "robot": {}, "joint": []}
    convention = None
    header = None
    for line, cells in rows:
        key = cells[0].lower()
        if header is None:
            if key == "robot":
                if len(cells) < 2 or not cells[1]:
                    raise ModelError(f"line {line}: needs a name", file=file, field="robot")
                data["robot"]["name"] = cells[1]
            elif key == "convention":
                convention = cells[1].lower() if len(cells) > 1 else ""
                if convention not in CONVENTIONS:
                    raise ModelError(f"line {line}: must be standard or modified", file=file,
                                     field="convention", value=convention)
            elif key == "gravity":
                data["robot"]["gravity"] = _nums(cells[1:], (3,), file, line, "gravity")
            elif key == "tool":
                v = _nums(cells[1:], (3, 6), file, line, "tool")
                data["tool"] = {"origin": {"xyz": v[:3], "rpy": v[3:] or [0.0, 0.0, 0.0]}}
            elif key == "payload":
                v = _nums(cells[1:], (4, 5), file, line, "payload")
                data["payload"] = {"mass": v[0], "com": v[1:4]}
                if len(v) == 5:
                    data["payload"]["rated_mass"] = v[4]
            elif key == "joint":
                header = [c.lower() for c in cells]
                for c in header:
                    if c not in REQUIRED_COLUMNS + OPTIONAL_COLUMNS:
                        near = difflib.get_close_matches(c, REQUIRED_COLUMNS + OPTIONAL_COLUMNS, 1)
                        hint = f"; did you mean {near[0]!r}?" if near else ""
                        raise ModelError(f"line {line}: unknown column{hint}", file=file,
                                         field=c)
                for c in REQUIRED_COLUMNS:
                    if c not in header:
                        raise ModelError(f"line {line}: missing column", file=file, field=c)
            else:
                raise ModelError(f"line {line}: unknown setting (expected robot, convention, "
                                 "gravity, tool, payload or the 'joint' header row)",
                                 file=file, field=cells[0])
            continue
        if len(cells) > len(header):
            raise ModelError(f"line {line}: {len(cells)} cells but {len(header)} columns",
                             file=file)
        cell = dict(zip(header, cells + [""] * (len(header) - len(cells))))
        name = cell["joint"]
        if not name:
            raise ModelError(f"line {line}: empty joint name", file=file, field="joint")
        num = {c: (None if cell[c] == "" else _num(cell[c], file, line, c, name))
               for c in header if c not in ("joint", "type")}
        for c in REQUIRED_COLUMNS[2:]:
            if num[c] is None:
                raise ModelError(f"line {line}: missing value", file=file, joint=name, field=c)
        j = {"name": name, "type": cell["type"],
             "dh": {"a": num["a"], "alpha": num["alpha"], "d": num["d"], "theta": num["theta"],
                    "convention": convention},
             "link": {"mass": num["mass"], "com": [num["cx"], num["cy"], num["cz"]],
                      "inertia": {k: num["i" + k] for k in ("xx", "yy", "zz", "xy", "xz", "yz")}}}
        drive = {c: num[c] for c in DRIVE_COLUMNS if num.get(c) is not None}
        if drive:
            j["drive"] = drive
        limits = {LIMIT_COLUMNS[c]: num[c] for c in LIMIT_COLUMNS if num.get(c) is not None}
        if (num.get("q_min") is None) != (num.get("q_max") is None):
            raise ModelError(f"line {line}: give both q_min and q_max, or neither", file=file,
                             joint=name, field="q_min" if num.get("q_min") is None else "q_max")
        if num.get("q_min") is not None:
            limits["position"] = [num["q_min"], num["q_max"]]
        if limits:
            j["limits"] = limits
        data["joint"].append(j)
    if convention is None:
        raise ModelError("missing 'convention' row (standard or modified)", file=file,
                         field="convention")
    if header is None:
        raise ModelError("missing the 'joint' header row", file=file, field="joint")
    if "name" not in data["robot"]:
        raise ModelError("missing 'robot' row with the robot's name", file=file, field="robot")
    return data


def load_dh_csv(path, **options):
    """Read a standalone DH table file and return a validated Robot."""
    from .toml import build_robot
    from . import read_text
    text = read_text(path)
    return build_robot(table_to_dict(text, file=os.fspath(path)), file=os.fspath(path), **options)
