"""`ffwd check`: load and validate a robot model, print what it holds and its warnings."""
import json
import warnings

import numpy as np

from ..errors import ModelWarning
from ._common import MODEL_HELP, load_model


def register(sub):
    p = sub.add_parser(
        "check", help="validate a robot model and describe it",
        description="Load a robot model (.toml, .dh.csv or .urdf), validate it and print a "
                    "short description with any warnings. Exit 0 if valid; 1 with --strict "
                    "when there are warnings; 2 with a one-line located error if invalid.")
    p.add_argument("model", help=MODEL_HELP)
    p.add_argument("--json", metavar="OUT", help="also write the summary as JSON to OUT")
    p.add_argument("--strict", action="store_true", help="treat warnings as failures (exit 1)")
    p.set_defaults(func=run)


def summary(robot, warning_lines):
    """The description as a JSON-ready dictionary."""
    def lim(j):
        L = j.limits
        return {"position": list(L.position) if L.position else None, "velocity": L.velocity,
                "acceleration": L.acceleration, "jerk": L.jerk, "torque": L.torque}
    return {
        "valid": True,
        "name": robot.name,
        "source": robot.source,
        "dof": robot.dof,
        "gravity": robot.gravity.tolist(),
        "joints": [{"name": j.name, "type": j.type,
                    "parent": None if j.parent < 0 else robot.joints[j.parent].name,
                    "mass": j.link.mass, "com": j.link.com.tolist(),
                    "armature": j.drive.armature, "viscous": j.drive.viscous,
                    "coulomb": j.drive.coulomb, "limits": lim(j)} for j in robot.joints],
        "tool_parent": robot.joints[robot.tool.parent].name,
        "payload": {"mass": robot.payload.mass, "com": robot.payload.com.tolist(),
                    "rated_mass": robot.payload.rated_mass},
        "total_link_mass": float(np.sum([j.link.mass for j in robot.joints])),
        "warnings": warning_lines,
    }


def run(args):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ModelWarning)
        robot = load_model(args.model)
    own = robot.warnings()
    load_lines = [str(w.message) for w in caught if issubclass(w.category, ModelWarning)]
    # load-time warnings (axis normalised, ...); the payload one is in `own` already
    extra = [w for w in load_lines if "exceeds the rated" not in w]
    print(robot.describe())
    for w in extra:
        print(f"warning: {w}")
    lines = own + extra
    if args.json:
        with open(args.json, "w", encoding="utf-8") as f:
            json.dump(summary(robot, lines), f, indent=2)
    status = "valid" if not lines else f"valid, {len(lines)} warning(s)"
    print(f"{robot.name}: {status}")
    return 1 if (args.strict and lines) else 0
