"""The `ffwd` command: one verb per job.

Each verb lives in its own module of this package and defines
`register(subparsers)`, which adds its parser and sets `func=run`, where
`run(args) -> int` returns the exit code: 0 ok, 1 a check failed.
Bad input raises ModelError or ValueError (or OSError for files); main() turns
it into one located line on stderr and exit code 2, never a traceback.
"""
import argparse
import importlib
import sys

# verb modules, in the order `ffwd --help` lists them
VERB_MODULES = [
    "check", "torques", "scale", "govern", "identify", "export", "flags",
    "manip", "latency", "simulate",
]


def build_parser():
    parser = argparse.ArgumentParser(
        prog="ffwd",
        description="Torque feedforward, speed scaling and identification for robot arms.")
    sub = parser.add_subparsers(dest="verb", metavar="VERB")
    sub.required = True
    for name in VERB_MODULES:
        try:
            mod = importlib.import_module(f"ffwd.cli.{name}")
        except ModuleNotFoundError as exc:
            if exc.name == f"ffwd.cli.{name}":
                continue  # verb not built yet
            raise
        mod.register(sub)
    return parser


def _describe(exc):
    """The message of exc; a file the system refused as 'path: reason' (no errno code)."""
    if isinstance(exc, OSError) and exc.filename is not None and exc.strerror:
        return f"{exc.filename}: {exc.strerror}"
    return str(exc)


def main(argv=None):
    from ..errors import ModelError
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args) or 0)
    except (ModelError, ValueError, OSError) as exc:
        print(f"ffwd {args.verb}: error: {_describe(exc)}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print(f"ffwd {args.verb}: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
