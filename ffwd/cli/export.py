"""`ffwd export`: a robot model as C source (const ffwd_model) plus an example main.c."""
import os
import shlex

from ._common import MODEL_HELP, load_model


def register(sub):
    p = sub.add_parser("export", help="write the model as C source for a controller build",
                       description="Write <name>_model.h and <name>_model.c, a constant "
                                   "ffwd_model with every field (full-precision literals), and "
                                   "an example main.c that prints the inverse-dynamics torques "
                                   "for a state given on its command line.")
    p.add_argument("model", help=MODEL_HELP)
    p.add_argument("--out", required=True, help="output folder")
    p.add_argument("--name", default=None,
                   help="C name prefix (default: the robot's name as a C identifier)")
    p.set_defaults(func=run)


def run(args):
    from ..export import c_name, export_c
    robot = load_model(args.model)
    name = args.name if args.name is not None else c_name(robot.name)
    paths = export_c(robot, args.out, name)
    for path in paths:
        print(path)
    out = shlex.quote(args.out)
    print(f"build the example: cc -O2 {out}/main.c {out}/{name}_model.c "
          f"$(ffwd flags --cflags) $(ffwd flags --libs) -o {out}/{name}")
    return 0
