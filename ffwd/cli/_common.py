"""Small helpers shared by the CLI verbs."""
import sys


def load_model(path):
    from ..formats import load
    return load(path)


def progress_note(text):
    print(f"... {text}", file=sys.stderr)


MODEL_HELP = "robot model (.toml, DH table or .urdf)"


def add_model_trajectory(p, out_default, data="trajectory",
                         data_help="trajectory CSV: t and q_<joint> columns"):
    """The arguments most verbs share: MODEL, a trajectory CSV and --out FOLDER."""
    p.add_argument("model", help=MODEL_HELP)
    p.add_argument(data, help=data_help)
    p.add_argument("--out", default=out_default, help="output folder (default: %(default)s)")
