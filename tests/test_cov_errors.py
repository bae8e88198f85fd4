"""ffwd/errors.py: the one-line located message and how locations are filled in."""
import warnings

import numpy as np
import pytest

from ffwd.errors import ModelError, ModelWarning, format_value, located


def test_format_value_is_short_and_one_line():
    assert format_value(-1.0) == "-1.0"
    assert format_value(np.array([[1.0, 0.0], [0.0, 2.0]])) == "[[1.0, 0.0], [0.0, 2.0]]"
    assert format_value("a\nb") == "'a\\nb'"
    long = format_value(list(range(100)))
    assert len(long) == 80 and long.endswith("...") and "\n" not in long

    class Multi:
        def __repr__(self):
            return "first\n    second"
    assert format_value(Multi()) == "first second"


def test_parts_left_out_when_unknown():
    assert str(ModelError("bad")) == "bad"
    assert str(ModelError("bad", file="f.toml")) == "f.toml: bad"
    assert str(ModelError("bad", joint="j1")) == "joint 'j1': bad"
    # value=None is a given value (printed), leaving value out prints no '='
    assert str(ModelError("bad", field="x", value=None)) == "field 'x' = None: bad"
    assert str(ModelError("bad", field="x")) == "field 'x': bad"


def test_at_fills_only_missing_parts_and_prefixes_the_field():
    e = ModelError("must be > 0", field="mass", value=-1.0)
    f = e.at(file="a.toml", joint="j2", prefix="link")
    assert (f.file, f.joint, f.field, f.value, f.why) == ("a.toml", "j2", "link.mass", -1.0,
                                                          "must be > 0")
    g = f.at(file="other.toml", joint="j9")          # already located: kept
    assert (g.file, g.joint) == ("a.toml", "j2")
    idx = ModelError("bad", field="[13]").at(prefix="theta")
    assert idx.field == "theta[13]"
    bare = ModelError("bad").at(prefix="payload")
    assert bare.field == "payload" and "=" not in str(bare)


def test_located_rewrites_model_errors_only():
    with pytest.raises(ModelError) as info:
        with located(file="m.toml", joint="j1", prefix="drive"):
            raise ModelError("must be >= 0", field="viscous", value=-2.0)
    assert str(info.value) == "m.toml: joint 'j1': field 'drive.viscous' = -2.0: must be >= 0"
    assert info.value.__cause__ is None and info.value.__suppress_context__
    with pytest.raises(KeyError):
        with located(file="m.toml"):
            raise KeyError("other errors pass unchanged")


def test_model_error_is_a_value_error_and_warning_a_user_warning():
    assert issubclass(ModelError, ValueError)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        warnings.warn("x", ModelWarning)
    assert issubclass(caught[0].category, UserWarning)
