"""Small helpers shared by the CLI verbs."""
import sys


def load_model(path):
    from ..formats import load
    return load(path)


def progress_note(text):
    print(f"... {text}", file=sys.stderr)
