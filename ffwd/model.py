"""The robot model: immutable dataclasses with validation.

Frames (see csrc/include/ffwd.h): joint i's frame at q = 0 is placed by `rotation`
(columns = its axes in parent-frame coordinates) and `translation` (its origin in the
parent frame); the joint motion (rotation by q about `axis`, or translation by q along
`axis`) is applied after it. Body i is described in joint frame i after the motion.

Every constructor checks its own numbers and raises a ModelError naming the field;
Robot adds the file and joint names, so errors raised while building a robot from a
file name the file, the joint, the field and the value.
"""
from __future__ import annotations

import dataclasses
import os
import warnings
from dataclasses import dataclass, field

import numpy as np

from .errors import ModelError, ModelWarning, located

__all__ = ["MAX_DOF", "Limits", "Drive", "Link", "Joint", "Tool", "Payload", "Robot",
           "params10", "inertia_from_entries"]

MAX_DOF = 16          # FFWD_MAX_DOF of the C core (csrc/include/ffwd_config.h)
JOINT_TYPES = ("revolute", "prismatic")

_SYM_TOL = 1e-9       # relative asymmetry allowed in an inertia matrix
_ORTHO_TOL = 1e-6     # |R^T R - I| allowed in a rotation matrix
_AXIS_WARN = 1e-3     # warn if an axis's norm is further than this from 1
_HUGE = 1e50          # largest magnitude of any model number: far beyond any machine
                      # (a bigger one is a typo or a unit error), and small enough that
                      # products of six model numbers stay inside the float range (1.8e308)


# ---- small helpers ----------------------------------------------------------------

def _set(obj, name, value):
    object.__setattr__(obj, name, value)


def _frozen(a):
    a = np.array(a, dtype=float)
    a.flags.writeable = False
    return a


def _floats(value, name):
    """np.array(value, dtype=float), or a ModelError on `name` saying why not."""
    try:
        return np.array(value, dtype=float)
    except OverflowError:      # an integer beyond the float range (about 1.8e308)
        raise ModelError("too large for a float (over about 1.8e308)", field=name,
                         value=value) from None
    except (TypeError, ValueError):
        raise ModelError("must be numbers", field=name, value=value) from None


def _array(value, shape, name):
    """Float array of the given shape, finite, read-only; else a ModelError on `name`."""
    a = _floats(value, name)
    if a.shape != shape:
        want = "a number" if shape == () else f"shape {shape}"
        raise ModelError(f"must be {want}, got shape {a.shape}", field=name, value=value)
    if not np.all(np.isfinite(a)):
        raise ModelError("must be finite", field=name, value=value)
    _check_magnitude(a, name, value)
    a.flags.writeable = False
    return a


def _check_magnitude(a, name, value):
    if a.size and float(np.max(np.abs(a))) > _HUGE:
        raise ModelError(f"must be below {_HUGE:g} in magnitude (a unit error?)",
                         field=name, value=value)


def _number(value, name):
    if isinstance(value, bool):
        raise ModelError("must be a number", field=name, value=value)
    return float(_array(value, (), name))


def inertia_from_entries(xx, yy, zz, xy=0.0, xz=0.0, yz=0.0):
    """3x3 inertia matrix from its entries (xy = I[0,1] = -sum(m x y))."""
    return np.array([[xx, xy, xz], [xy, yy, yz], [xz, yz, zz]], dtype=float)


def _check_inertia(inertia, name, allow_zero=False):
    """Finite and not huge, symmetric, positive (semi)definite, principal moments obey
    the triangle inequality."""
    I = inertia
    if not np.all(np.isfinite(I)):
        raise ModelError("must be finite", field=name, value=I)
    _check_magnitude(I, name, I)
    scale = max(float(np.max(np.abs(I))), 1e-300)
    if np.max(np.abs(I - I.T)) > _SYM_TOL * scale:
        raise ModelError("must be symmetric", field=name, value=I)
    if allow_zero and not np.any(I):
        return
    try:
        d = np.linalg.eigvalsh(0.5 * (I + I.T))
    except np.linalg.LinAlgError as exc:
        raise ModelError(f"principal moments cannot be computed ({exc})", field=name,
                         value=I) from None
    if d[0] <= (0.0 if not allow_zero else -1e-12 * scale):
        kind = "positive definite" if not allow_zero else "positive semidefinite"
        raise ModelError(f"must be {kind} (principal moments {d.tolist()})",
                         field=name, value=I)
    if d[0] + d[1] < d[2] * (1.0 - 1e-9) - 1e-12 * scale:
        raise ModelError("principal moments must satisfy the triangle inequality "
                         f"(got {d.tolist()}, {d[0]:.6g} + {d[1]:.6g} < {d[2]:.6g})",
                         field=name, value=I)


def _check_rotation(R, name):
    if np.max(np.abs(R.T @ R - np.eye(3))) > _ORTHO_TOL:
        raise ModelError("must be an orthonormal rotation matrix", field=name, value=R)
    if np.linalg.det(R) <= 0:
        raise ModelError("must be a rotation (determinant +1), not a reflection",
                         field=name, value=R)


def params10(mass, com, inertia_com):
    """The 10 inertial parameters m, m*c, inertia about the frame origin
    (xx, xy, xz, yy, yz, zz) of a body with mass `mass`, centre of mass `com`
    and inertia `inertia_com` about the centre of mass (parallel-axis theorem)."""
    c = np.asarray(com, dtype=float)
    I = np.asarray(inertia_com, dtype=float) + mass * (float(c @ c) * np.eye(3) - np.outer(c, c))
    return np.array([mass, *(mass * c), I[0, 0], I[0, 1], I[0, 2], I[1, 1], I[1, 2], I[2, 2]])


def _from_params10(p):
    """Inverse of params10: (mass, com, inertia about com). Mass must be > 0."""
    m = float(p[0])
    c = np.asarray(p[1:4], dtype=float) / m
    I_o = inertia_from_entries(p[4], p[7], p[9], p[5], p[6], p[8])
    I_c = I_o - m * (float(c @ c) * np.eye(3) - np.outer(c, c))
    return m, c, 0.5 * (I_c + I_c.T)


# ---- the parts ---------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class Limits:
    """Joint limits; None = not given. Position in rad or m, velocity rad/s or m/s,
    acceleration, jerk, torque (N m or N): all magnitudes > 0."""
    position: tuple | None = None
    velocity: float | None = None
    acceleration: float | None = None
    jerk: float | None = None
    torque: float | None = None

    def __post_init__(self):
        if self.position is not None:
            p = _array(self.position, (2,), "position")
            if not p[0] < p[1]:
                raise ModelError("min must be < max", field="position", value=p.tolist())
            _set(self, "position", (float(p[0]), float(p[1])))
        for name in ("velocity", "acceleration", "jerk", "torque"):
            v = getattr(self, name)
            if v is not None:
                v = _number(v, name)
                if not v > 0:
                    raise ModelError("must be > 0", field=name, value=v)
                _set(self, name, v)

    def given(self):
        """Names of the limits that are set."""
        return [n for n in ("position", "velocity", "acceleration", "jerk", "torque")
                if getattr(self, n) is not None]


@dataclass(frozen=True, eq=False)
class Drive:
    """Gear, motor rotor inertia and friction: tau_f = viscous*qd + coulomb*clamp(qd/band)."""
    gear_ratio: float = 1.0
    rotor_inertia: float = 0.0
    viscous: float = 0.0
    coulomb: float = 0.0
    coulomb_band: float = 0.01

    def __post_init__(self):
        for name in ("gear_ratio", "rotor_inertia", "viscous", "coulomb", "coulomb_band"):
            _set(self, name, _number(getattr(self, name), name))
        if not self.gear_ratio > 0:
            raise ModelError("must be > 0", field="gear_ratio", value=self.gear_ratio)
        for name in ("rotor_inertia", "viscous", "coulomb"):
            if getattr(self, name) < 0:
                raise ModelError("must be >= 0", field=name, value=getattr(self, name))
        if not self.coulomb_band > 0:
            raise ModelError("must be > 0", field="coulomb_band", value=self.coulomb_band)

    @property
    def armature(self):
        """Reflected rotor inertia gear_ratio**2 * rotor_inertia."""
        return self.gear_ratio ** 2 * self.rotor_inertia


@dataclass(frozen=True, eq=False)
class Link:
    """Mass (> 0), centre of mass and inertia about it, in link (joint) frame axes."""
    mass: float
    com: np.ndarray
    inertia: np.ndarray

    def __post_init__(self):
        m = _number(self.mass, "mass")
        if not m > 0:
            raise ModelError("must be > 0", field="mass", value=m)
        _set(self, "mass", m)
        _set(self, "com", _array(self.com, (3,), "com"))
        inertia = _array(self.inertia, (3, 3), "inertia")
        _check_inertia(inertia, "inertia")
        _set(self, "inertia", inertia)

    def params10(self):
        """m, m*c, inertia about the joint-frame origin (xx, xy, xz, yy, yz, zz)."""
        return params10(self.mass, self.com, self.inertia)


@dataclass(frozen=True, eq=False)
class Joint:
    """One joint and the body it moves (see the module doc for frames)."""
    name: str
    type: str
    parent: int
    rotation: np.ndarray
    translation: np.ndarray
    axis: np.ndarray
    link: Link
    drive: Drive = field(default_factory=Drive)
    limits: Limits = field(default_factory=Limits)

    def __post_init__(self):
        with located(joint=self.name):
            if not isinstance(self.name, str) or not self.name:
                raise ModelError("must be a non-empty string", field="name", value=self.name)
            if not isinstance(self.type, str) or self.type not in JOINT_TYPES:
                raise ModelError(f"must be one of {', '.join(JOINT_TYPES)}",
                                 field="type", value=self.type)
            if isinstance(self.parent, bool) or not isinstance(self.parent, (int, np.integer)):
                raise ModelError("must be an integer joint index (-1 = base)",
                                 field="parent", value=self.parent)
            _set(self, "parent", int(self.parent))
            R = _array(self.rotation, (3, 3), "rotation")
            _check_rotation(R, "rotation")
            _set(self, "rotation", R)
            _set(self, "translation", _array(self.translation, (3,), "translation"))
            a = _array(self.axis, (3,), "axis")
            n = float(np.linalg.norm(a))
            if n < 1e-9:
                raise ModelError("must be non-zero", field="axis", value=a.tolist())
            if abs(n - 1.0) > _AXIS_WARN:
                warnings.warn(f"joint {self.name!r}: axis {a.tolist()} has norm {n:.6g}; "
                              "normalised", ModelWarning, stacklevel=3)
            _set(self, "axis", _frozen(a / n))
            for part, cls in (("link", Link), ("drive", Drive), ("limits", Limits)):
                if not isinstance(getattr(self, part), cls):
                    raise ModelError(f"must be a {cls.__name__}", field=part)


@dataclass(frozen=True, eq=False)
class Tool:
    """Tool frame in the frame of joint `parent` (same convention as joints)."""
    parent: int
    rotation: np.ndarray = field(default_factory=lambda: np.eye(3))
    translation: np.ndarray = field(default_factory=lambda: np.zeros(3))

    def __post_init__(self):
        if isinstance(self.parent, bool) or not isinstance(self.parent, (int, np.integer)):
            raise ModelError("must be an integer joint index", field="parent", value=self.parent)
        _set(self, "parent", int(self.parent))
        R = _array(self.rotation, (3, 3), "rotation")
        _check_rotation(R, "rotation")
        _set(self, "rotation", R)
        _set(self, "translation", _array(self.translation, (3,), "translation"))


def _inertia_arg(inertia, name):
    """Inertia as a 3x3 matrix or as 6 entries (xx, xy, xz, yy, yz, zz)."""
    a = _floats(inertia, name) if inertia is not None else np.zeros((3, 3))
    if a.shape == (6,):
        a = inertia_from_entries(a[0], a[3], a[5], a[1], a[2], a[4])
    return _array(a, (3, 3), name)


@dataclass(frozen=True, eq=False)
class Payload:
    """Load carried by the tool: mass (0 = none), centre of mass and inertia about it,
    both in tool-frame axes; rated_mass is the arm's rated payload (None = not given)."""
    mass: float = 0.0
    com: np.ndarray = field(default_factory=lambda: np.zeros(3))
    inertia: np.ndarray = field(default_factory=lambda: np.zeros((3, 3)))
    rated_mass: float | None = None

    def __post_init__(self):
        m = _number(self.mass, "mass")
        if m < 0:
            raise ModelError("must be >= 0", field="mass", value=m)
        _set(self, "mass", m)
        _set(self, "com", _array(self.com, (3,), "com"))
        inertia = _inertia_arg(self.inertia, "inertia")
        _check_inertia(inertia, "inertia", allow_zero=True)
        if m == 0 and np.any(inertia):
            raise ModelError("must be zero when the payload mass is 0",
                             field="inertia", value=inertia)
        _set(self, "inertia", inertia)
        if self.rated_mass is not None:
            r = _number(self.rated_mass, "rated_mass")
            if not r > 0:
                raise ModelError("must be > 0", field="rated_mass", value=r)
            _set(self, "rated_mass", r)


# ---- the robot -----------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class Robot:
    """A validated robot: joints in order from the base (parents come first)."""
    name: str
    gravity: np.ndarray
    joints: tuple
    tool: Tool | None = None
    payload: Payload = field(default_factory=Payload)
    source: str | None = None

    def __post_init__(self):
        if self.source is not None and not isinstance(self.source, (str, os.PathLike)):
            raise ModelError("must be a file name or None", field="source", value=self.source)
        file = None if self.source is None else str(self.source)
        with located(file=file):
            self._validate()
        if self.payload.rated_mass is not None and self.payload.mass > self.payload.rated_mass:
            where = f"{file}: " if file else ""
            warnings.warn(f"{where}payload mass {self.payload.mass:g} kg exceeds the rated "
                          f"{self.payload.rated_mass:g} kg", ModelWarning, stacklevel=3)

    def _validate(self):
        if not isinstance(self.name, str):
            raise ModelError("must be a string", field="robot.name", value=self.name)
        with located(prefix="robot"):
            _set(self, "gravity", _array(self.gravity, (3,), "gravity"))
        if isinstance(self.joints, (str, bytes)) or not hasattr(self.joints, "__iter__"):
            raise ModelError("must be a sequence of Joint", field="joint", value=self.joints)
        joints = tuple(self.joints)
        _set(self, "joints", joints)
        if not 1 <= len(joints) <= MAX_DOF:
            raise ModelError(f"a robot needs 1 to {MAX_DOF} moving joints, got {len(joints)}",
                             field="joint")
        seen = set()
        for i, j in enumerate(joints):
            if not isinstance(j, Joint):
                raise ModelError("must be a Joint", field=f"joint[{i}]")
            if j.name in seen:
                raise ModelError("joint name used twice", joint=j.name, field="name", value=j.name)
            seen.add(j.name)
            if not -1 <= j.parent < i:
                raise ModelError("parent must be -1 (base) or an earlier joint's index "
                                 f"(this is joint {i})", joint=j.name, field="parent",
                                 value=j.parent)
        tool = self.tool if self.tool is not None else Tool(len(joints) - 1)
        if not isinstance(tool, Tool):
            raise ModelError("must be a Tool", field="tool")
        if not 0 <= tool.parent < len(joints):
            raise ModelError(f"must be a joint index 0..{len(joints) - 1}",
                             field="tool.parent", value=tool.parent)
        _set(self, "tool", tool)
        if not isinstance(self.payload, Payload):
            raise ModelError("must be a Payload", field="payload")

    # -- facts
    @property
    def dof(self):
        return len(self.joints)

    @property
    def joint_names(self):
        return tuple(j.name for j in self.joints)

    def index(self, name):
        """Index of the joint called `name`."""
        try:
            return self.joint_names.index(name)
        except ValueError:
            raise ModelError("no such joint", field="joint", value=name) from None

    # -- parameters
    def payload_params(self):
        """The payload's 10 inertial parameters in the tool.parent joint frame."""
        p = self.payload
        if p.mass == 0:
            return np.zeros(10)
        R, t = self.tool.rotation, self.tool.translation
        com = R @ p.com + t                    # payload COM in the joint frame
        inertia = R @ p.inertia @ R.T          # about the COM, joint-frame axes
        return params10(p.mass, com, inertia)

    def body_params(self):
        """(dof, 10): m, m*c, inertia about the joint origin (xx, xy, xz, yy, yz, zz)
        per body, in its joint frame, with the payload lumped into tool.parent's body."""
        P = np.array([j.link.params10() for j in self.joints])
        P[self.tool.parent] += self.payload_params()
        return P

    def parameter_vector(self):
        """(13*dof,): per joint body_params()[j] (10), armature, viscous, coulomb."""
        rows = [np.concatenate([bp, [j.drive.armature, j.drive.viscous, j.drive.coulomb]])
                for bp, j in zip(self.body_params(), self.joints)]
        return np.concatenate(rows)

    def with_parameters(self, theta):
        """A robot with links and drives taken from theta (layout of parameter_vector);
        the payload is set to zero (it is part of theta). Gear ratios and Coulomb bands
        are kept; rotor inertia = armature / gear_ratio**2."""
        file = None if self.source is None else str(self.source)
        with located(file=file):
            theta = _floats(theta, "theta")
        if theta.shape != (13 * self.dof,):
            raise ModelError(f"must have shape ({13 * self.dof},), got {theta.shape}",
                             file=file, field="theta")
        joints = []
        for k, j in enumerate(self.joints):
            t = theta[13 * k:13 * k + 13]
            with located(file=file, joint=j.name, prefix="theta"):
                if not np.all(np.isfinite(t)):
                    raise ModelError("must be finite", field=f"[{13 * k}:{13 * k + 13}]",
                                     value=t)
                if not t[0] > 0:
                    raise ModelError("mass must be > 0", field=f"[{13 * k}]", value=float(t[0]))
                m, c, I = _from_params10(t[:10])
                with located(prefix=f"[{13 * k}:{13 * k + 10}]"):
                    try:
                        link = Link(m, c, I)
                    except ModelError as exc:
                        raise ModelError("not physically consistent: inertia about the "
                                         f"centre of mass ({exc.why})", value=t[:10]) from None
                d = j.drive
                with located(prefix=f"[{13 * k + 10}:{13 * k + 13}]"):
                    drive = Drive(d.gear_ratio, t[10] / d.gear_ratio ** 2, t[11], t[12],
                                  d.coulomb_band)
            joints.append(dataclasses.replace(j, link=link, drive=drive))
        payload = Payload(0.0, rated_mass=self.payload.rated_mass)
        return dataclasses.replace(self, joints=tuple(joints), payload=payload)

    def with_payload(self, mass, com=(0.0, 0.0, 0.0), inertia=None):
        """A robot carrying another payload: com in the tool frame, inertia about the
        com in tool-frame axes (3x3, or 6 entries xx, xy, xz, yy, yz, zz; default 0)."""
        file = None if self.source is None else str(self.source)
        with located(file=file, prefix="payload"):
            p = Payload(mass, com, inertia, self.payload.rated_mass)
        return dataclasses.replace(self, payload=p)

    # -- report
    def warnings(self):
        """Doubtful but valid things in the model, one line each."""
        out = []
        for j in self.joints:
            L = j.link
            r2 = float(L.com @ L.com)
            d = np.linalg.eigvalsh(L.inertia)
            # A solid body of mass m whose centre of mass lies r from the joint is at
            # least some centimetres across; moments far below m*(1 cm)^2 are suspect.
            if d[0] < L.mass * 1e-6:
                out.append(f"joint {j.name!r}: smallest principal moment {d[0]:.3g} kg m^2 "
                           f"is below m*(1 mm)^2 scale: is the inertia in kg m^2?")
            if r2 > 0 and d[2] > 100 * L.mass * max(r2, 0.01):
                out.append(f"joint {j.name!r}: largest principal moment {d[2]:.3g} kg m^2 "
                           f"is far above m*r^2 = {L.mass * r2:.3g}: units?")
            missing = [n for n in ("position", "velocity", "acceleration", "jerk", "torque")
                       if n not in j.limits.given()]
            if missing:
                out.append(f"joint {j.name!r}: no {', '.join(missing)} limit")
        p = self.payload
        if p.rated_mass is not None and p.mass > p.rated_mass:
            out.append(f"payload {p.mass:g} kg exceeds the rated {p.rated_mass:g} kg")
        return out

    def describe(self):
        """A short text: name, dof, joints with mass and limits, payload, warnings."""
        unit = {"revolute": ("rad", "N m"), "prismatic": ("m", "N")}
        lines = [f"robot {self.name!r}: {self.dof} joints"
                 + (f" (from {os.path.basename(str(self.source))})" if self.source else ""),
                 f"gravity {np.round(self.gravity, 6).tolist()} m/s^2"]
        for i, j in enumerate(self.joints):
            parent = "base" if j.parent < 0 else self.joints[j.parent].name
            lim = j.limits
            parts = []
            if lim.position:
                parts.append(f"q [{lim.position[0]:.4g}, {lim.position[1]:.4g}] {unit[j.type][0]}")
            for key, short in (("velocity", "v"), ("acceleration", "a"), ("jerk", "j"),
                               ("torque", "tau")):
                val = getattr(lim, key)
                if val is not None:
                    parts.append(f"{short} {val:.4g}")
            lines.append(f"  {i}: {j.name} {j.type} on {parent}, mass {j.link.mass:.4g} kg, "
                         f"armature {j.drive.armature:.3g}; limits: "
                         + (", ".join(parts) if parts else "none"))
        total = sum(j.link.mass for j in self.joints)
        lines.append(f"total link mass {total:.4g} kg; tool on {self.joints[self.tool.parent].name} "
                     f"at {np.round(self.tool.translation, 6).tolist()} m")
        p = self.payload
        lines.append("payload: none" if p.mass == 0 else
                     f"payload {p.mass:g} kg at {np.round(p.com, 6).tolist()} m (tool frame)"
                     + (f", rated {p.rated_mass:g} kg" if p.rated_mass is not None else ""))
        for w in self.warnings():
            lines.append(f"warning: {w}")
        return "\n".join(lines)
