"""Model file formats: the native TOML, DH tables and URDF import.

`load(path)` picks the reader by the file name: `*.toml` native (which may hold DH
rows), `*.dh.csv` a standalone DH table, `*.urdf` a URDF import.
"""
import os

from ..errors import ModelError

__all__ = ["load", "read_text"]


def read_text(path, error=ModelError):
    """The text of a UTF-8 file (a leading byte-order mark is dropped). Bytes that are
    not UTF-8 raise `error` naming the file, the byte offset, line and column."""
    path = os.fspath(path)
    with open(path, "rb") as f:
        data = f.read()
    why = not_utf8(data)
    if why is None:
        return data.decode("utf-8-sig")
    if error is ModelError:
        raise ModelError(why, file=path)
    raise error(f"{path}: {why}")


def not_utf8(data):
    """None if `data` (bytes) is UTF-8 text, else a one-line why with the position
    (byte offset from 0, line and column from 1)."""
    try:
        data.decode("utf-8")
        return None
    except UnicodeDecodeError as exc:
        start = exc.start
        line = data.count(b"\n", 0, start) + 1
        line_start = data.rfind(b"\n", 0, start) + 1
        column = len(data[line_start:start].decode("utf-8-sig", "replace")) + 1
        return (f"not UTF-8 text: byte 0x{data[start]:02x} at offset {start} (line {line}, "
                f"column {column}): {exc.reason}; save the file as UTF-8")


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
