"""The flat model text file read by the C programs (ffwd-loop, ffwd-plant-server).

The programs cannot parse TOML, so Python writes the C `ffwd_model` fields as plain
numbers. Layout (tokens separated by white space; `#` starts a comment to the end of
the line; numbers are written with 17 significant digits, so doubles round-trip):

    ffwd-flat-model 1
    dof <n>
    gravity <gx> <gy> <gz>
    joint <i> <type> <parent> <rot 9, row-major> <pos 3> <axis 3> <inertia 10>
          <armature> <viscous> <coulomb> <coulomb_band> <has_limits>
          <q_min> <q_max> <v_max> <a_max> <j_max> <tau_max>        (one line per joint, i = 0..n-1)
    tool <parent> <rot 9> <pos 3>
    payload <10>
    end

type: 0 revolute, 1 prismatic; has_limits: sum of 1 position, 2 velocity,
4 acceleration, 8 jerk, 16 torque; limits that are not set are written as 0.
The inertia is the 10 parameters m, m*c, inertia about the joint-frame origin
(xx, xy, xz, yy, yz, zz) in the joint frame (csrc/include/ffwd.h). The programs
check every token and run ffwd_model_check on the result.
"""
import numpy as np

__all__ = ["model_fields", "write_model_file", "read_model_file", "mismatched"]

MAGIC = "ffwd-flat-model"
VERSION = 1


def model_fields(robot):
    """The C ffwd_model field values of `robot` as a dict with one dict per joint,
    taken from ffwd.pack.model_fields (the one place a Robot becomes the C struct)."""
    from ..pack import LIMIT_FIELDS
    from ..pack import model_fields as pack_fields
    f = pack_fields(robot)
    joints = []
    for i in range(f.dof):
        j = dict(type=int(f.type[i]), parent=int(f.parent[i]), rot=f.rot[i], pos=f.pos[i],
                 axis=f.axis[i], inertia=f.inertia[i], armature=float(f.armature[i]),
                 viscous=float(f.viscous[i]), coulomb=float(f.coulomb[i]),
                 coulomb_band=float(f.coulomb_band[i]), has_limits=int(f.has_limits[i]))
        j.update({name: float(f.limits[i, k]) for k, name in enumerate(LIMIT_FIELDS)})
        joints.append(j)
    return dict(dof=int(f.dof), gravity=f.gravity, joint=joints, tool_parent=int(f.tool_parent),
                tool_rot=f.tool_rot, tool_pos=f.tool_pos, payload=f.payload)


def _nums(values):
    return " ".join(f"{float(v):.17g}" for v in np.ravel(values))


def write_model_file(robot, path):
    """Write `robot` as a flat model file for the C programs; returns the path."""
    f = model_fields(robot)
    lines = [f"# flat model of {robot.name!r} for the ffwd C programs (see ffwd/sim/flatmodel.py)",
             f"{MAGIC} {VERSION}", f"dof {int(f['dof'])}", f"gravity {_nums(f['gravity'])}"]
    for i, j in enumerate(f["joint"]):
        lines.append(
            f"joint {i} {int(j['type'])} {int(j['parent'])}  {_nums(j['rot'])}  {_nums(j['pos'])}"
            f"  {_nums(j['axis'])}  {_nums(j['inertia'])}  "
            f"{_nums([j['armature'], j['viscous'], j['coulomb'], j['coulomb_band']])}  "
            f"{int(j['has_limits'])}  "
            f"{_nums([j['q_min'], j['q_max'], j['v_max'], j['a_max'], j['j_max'], j['tau_max']])}")
    lines.append(f"tool {int(f['tool_parent'])}  {_nums(f['tool_rot'])}  {_nums(f['tool_pos'])}")
    lines.append(f"payload {_nums(f['payload'])}")
    lines.append("end")
    with open(path, "w") as fh:
        fh.write("\n".join(lines) + "\n")
    return path


def read_model_file(path):
    """Tokens of a flat model file as a dict (for tests and inspection)."""
    with open(path) as fh:
        toks = []
        for line in fh:
            toks += line.split("#", 1)[0].split()
    it = iter(toks)

    def expect(word):
        got = next(it, None)
        if got != word:
            raise ValueError(f"{path}: expected {word!r}, found {got!r}")

    def nums(k):
        return np.array([float(next(it)) for _ in range(k)])

    expect(MAGIC)
    if int(next(it)) != VERSION:
        raise ValueError(f"{path}: unsupported version")
    expect("dof")
    dof = int(next(it))
    expect("gravity")
    out = dict(dof=dof, gravity=nums(3), joint=[])
    for i in range(dof):
        expect("joint")
        if int(next(it)) != i:
            raise ValueError(f"{path}: joint {i} out of order")
        v = nums(2 + 9 + 3 + 3 + 10 + 4 + 1 + 6)
        out["joint"].append(dict(type=int(v[0]), parent=int(v[1]), rot=v[2:11], pos=v[11:14],
                                 axis=v[14:17], inertia=v[17:27], armature=v[27], viscous=v[28],
                                 coulomb=v[29], coulomb_band=v[30], has_limits=int(v[31]),
                                 q_min=v[32], q_max=v[33], v_max=v[34], a_max=v[35],
                                 j_max=v[36], tau_max=v[37]))
    expect("tool")
    v = nums(13)
    out.update(tool_parent=int(v[0]), tool_rot=v[1:10], tool_pos=v[10:13])
    expect("payload")
    out["payload"] = nums(10)
    expect("end")
    return out


def mismatched(robot, mismatch):
    """The same arm with every inertial and drive parameter scaled by (1 + mismatch):
    masses, first moments and inertias of every body (payload included), armature,
    viscous and Coulomb friction. Kinematics and limits are unchanged."""
    mismatch = float(mismatch)
    if not np.isfinite(mismatch) or mismatch <= -1.0:
        raise ValueError(f"mismatch: must be a finite number > -1, got {mismatch}")
    if mismatch == 0.0:
        return robot
    return robot.with_parameters(robot.parameter_vector() * (1.0 + mismatch))
