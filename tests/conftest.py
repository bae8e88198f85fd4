"""pytest setup: hypothesis profiles and shared fixtures.

Profiles (pick with env HYPOTHESIS_PROFILE, default "dev"; `make test` uses "ci"):
  dev  few examples, for quick runs while editing
  ci   >= 200 examples per property, no deadline, derandomized (a fixed seed, so a CI
       failure reproduces exactly; the seed is the test's own source, printed below)

Test modules import helpers from here with `from conftest import require_build`; so that
the name `conftest` stays this file, a sub-folder with its own conftest.py must be a
package (have an __init__.py, like tests/reference/).
"""
import os
import sys

import pytest
from hypothesis import HealthCheck, settings

sys.path.insert(0, os.path.dirname(__file__))   # tests/strategies.py

settings.register_profile("dev", max_examples=20, deadline=None)
settings.register_profile(
    "ci", max_examples=200, deadline=None, derandomize=True, print_blob=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
PROFILE = os.environ.get("HYPOTHESIS_PROFILE", "dev")
settings.load_profile(PROFILE)


def pytest_report_header(config):
    s = settings.default
    return (f"hypothesis profile {PROFILE!r}: max_examples={s.max_examples}, "
            f"derandomize={s.derandomize} (fixed seed per test)")


def _have_core():
    try:
        import ffwd._core  # noqa: F401
    except ImportError:
        return False
    return True


# `make pytest` sets FFWD_REQUIRE_BUILD=1: there a missing build is a failure, not a skip
REQUIRE_BUILD = os.environ.get("FFWD_REQUIRE_BUILD") == "1"
HAVE_CORE = _have_core()


def require_build(reason):
    """Skip (plain pytest without a build) or fail (make test) for a missing build."""
    if REQUIRE_BUILD:
        pytest.fail(f"the package is not built: {reason}")
    pytest.skip(reason)


@pytest.fixture(scope="session")
def core():
    """The compiled extension module ffwd._core."""
    if not HAVE_CORE:
        require_build("ffwd._core is not importable (run `make install`)")
    import ffwd._core
    return ffwd._core


@pytest.fixture(scope="session")
def shipped_library():
    """Path of the libffwd.so installed in the package."""
    from ffwd import native
    try:
        return native.shipped_library()
    except native.NativeError as exc:
        require_build(str(exc))


@pytest.fixture(scope="session")
def package_dir(shipped_library):
    """The installed package's directory holding include/, lib/, bin/."""
    from ffwd import native
    return native.package_dir()


def find_tool(name):
    """An executable from the running Python's bin/ (the venv's cmake) or from PATH."""
    import shutil
    local = os.path.join(os.path.dirname(sys.executable), name)
    if os.path.exists(local):
        return local
    return shutil.which(name)


@pytest.fixture(scope="session")
def cmake_exe():
    exe = find_tool("cmake")
    if exe is None:
        require_build("no cmake found (make venv installs one in .venv)")
    return exe


@pytest.fixture(scope="session")
def cc_exe():
    exe = os.environ.get("CC") or find_tool("cc") or find_tool("gcc")
    if exe is None:
        pytest.fail("no C compiler found (cc or gcc)")
    return exe


REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
