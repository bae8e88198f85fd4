"""Model file formats: the native TOML, DH tables and URDF import.

`load(path)` picks the reader by the file name: `*.toml` native (which may hold DH
rows), `*.dh.csv` a standalone DH table, `*.urdf` a URDF import.
"""
import os

from ..errors import ModelError

__all__ = ["load"]


def load(path, **options):
    """Read, validate and return a Robot from a model file."""
    path = os.fspath(path)
    name = os.path.basename(path).lower()
    if name.endswith(".dh.csv"):
        from .dh import load_dh_csv
        return load_dh_csv(path, **options)
    if name.endswith(".urdf") or name.endswith(".xml"):
        from .urdf import load_urdf
        return load_urdf(path, **options)
    if name.endswith(".toml"):
        from .toml import load_toml
        return load_toml(path, **options)
    raise ModelError("unknown model file type (expected .toml, .dh.csv or .urdf)", file=path)
