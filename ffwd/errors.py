"""Errors and warnings of model loading and validation.

A ModelError says where a model is wrong in one line:
    six_axis.toml: joint 'j3': field 'link.mass' = -1.0: must be > 0
Parts that are not known (no file, no joint, ...) are left out.
"""
import contextlib

import numpy as np

__all__ = ["ModelError", "ModelWarning", "located", "format_value"]


def format_value(value):
    """Short one-line text of a value for messages."""
    if isinstance(value, np.ndarray):
        value = value.tolist()
    if isinstance(value, float):
        return repr(value)
    if _is_long_int(value):
        return _long_int(value)
    try:
        if isinstance(value, list) and any(map(_is_long_int, value)):
            text = "[" + ", ".join(format_value(v) for v in value) + "]"
        else:
            text = repr(value)
    except ValueError:     # an int with more digits than Python will print
        text = f"<a {type(value).__name__} too long to print>"
    text = " ".join(text.split())
    return text if len(text) <= 80 else text[:77] + "..."


def _is_long_int(value):
    return isinstance(value, int) and not isinstance(value, bool) and abs(value) >= 10 ** 20


def _long_int(value):
    """'1000...0000 (401 digits)' for an integer too long to show whole."""
    try:
        digits = str(abs(value))
    except ValueError:     # past Python's int-to-text limit (4300 digits)
        return f"<an integer of about {int(value.bit_length() * 0.30103)} digits>"
    sign = "-" if value < 0 else ""
    return f"{sign}{digits[:6]}...{digits[-4:]} ({len(digits)} digits)"


class ModelError(ValueError):
    """A robot model is invalid. Attributes: file, joint, field, value, why."""

    _NOVALUE = object()

    def __init__(self, why, *, file=None, joint=None, field=None, value=_NOVALUE):
        self.why = str(why)
        self.file = None if file is None else str(file)
        self.joint = joint
        self.field = field
        self._has_value = value is not ModelError._NOVALUE
        self.value = value if self._has_value else None
        super().__init__(self._text())

    def _text(self):
        parts = []
        if self.file is not None:
            parts.append(self.file)
        if self.joint is not None:
            parts.append(f"joint {format_value(self.joint)}")
        if self.field is not None:
            if self._has_value:
                parts.append(f"field {self.field!r} = {format_value(self.value)}")
            else:
                parts.append(f"field {self.field!r}")
        parts.append(self.why)
        return ": ".join(parts)

    def __str__(self):
        return self._text()

    def at(self, file=None, joint=None, prefix=None):
        """A copy with the missing location parts filled in; `prefix` is put before
        the field name (e.g. 'link' turns 'mass' into 'link.mass')."""
        field = self.field
        if prefix:
            if field is None:
                field = prefix
            else:
                field = f"{prefix}{field}" if field.startswith("[") else f"{prefix}.{field}"
        kwargs = dict(file=self.file if self.file is not None else file,
                      joint=self.joint if self.joint is not None else joint,
                      field=field)
        if self._has_value:
            kwargs["value"] = self.value
        return ModelError(self.why, **kwargs)


class ModelWarning(UserWarning):
    """A model is valid but something in it looks doubtful."""


@contextlib.contextmanager
def located(file=None, joint=None, prefix=None):
    """Re-raise a ModelError raised inside with the given location filled in."""
    try:
        yield
    except ModelError as exc:
        raise exc.at(file=file, joint=joint, prefix=prefix) from None
