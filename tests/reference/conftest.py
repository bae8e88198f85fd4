"""The reference checks run on the twin; set FFWD_REF_BACKENDS=twin,c (comma list of
ffwd.Dynamics backends) to run them on other backends too."""
import os
import sys

import pytest

sys.path.insert(0, os.path.dirname(__file__))

BACKENDS = [b for b in os.environ.get("FFWD_REF_BACKENDS", "twin").split(",") if b]


@pytest.fixture(params=BACKENDS)
def backend(request):
    return request.param
