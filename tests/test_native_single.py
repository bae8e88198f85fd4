"""The one-sample entry of the cffi backend (NativeModel.single in ffwd/native.py).

A float64 sample of shape (n,) goes straight to C (through the compiled helpers of
ffwd._calls where built, else through libffi); every other input (other dtype, a list, a
batch of one) takes the checked path of ffwd.Dynamics. Whatever the path, the numbers are
those of the batch path of the same library (the same C function on the same values, so
equal exactly), results are new arrays owned by the caller, and calls from several threads
do not mix. Inputs are multiples of 1/64, exact in float32 and int conversions alike.
"""
import os
import threading

import numpy as np
import pytest

import ffwd
from ffwd import Dynamics, native

ROBOT = os.path.join(os.path.dirname(__file__), "..", "examples", "robots", "six_axis.toml")

ONE_INPUT = ("gravity", "mass_matrix", "tool_pose", "tool_jacobian")
THREE_INPUTS = ("inverse_dynamics", "forward_dynamics", "regressor", "torque_parts")


@pytest.fixture(scope="module")
def robot():
    return ffwd.load(ROBOT)


@pytest.fixture(params=["compiled", "libffi"])
def dyn(request, robot, shipped_library, monkeypatch):
    """Dynamics(robot, "native") calling through ffwd._calls, and one through libffi."""
    if request.param == "libffi":
        monkeypatch.setattr(native, "_compiled_calls", lambda: None)
    elif native._compiled_calls() is None:
        pytest.skip("ffwd._calls is not built")
    d = Dynamics(robot, "native")
    assert (d._core._calls is None) == (request.param == "libffi")
    return d


def _states(n, rows=3, seed=5):
    rng = np.random.default_rng(seed)
    return rng.integers(-96, 96, (3, rows, n)) / 64.0


def _batch(dyn, fn, args):
    out = getattr(dyn, fn)(*args)
    return tuple(out) if fn == "torque_parts" else out


def _row(ref, i):
    return tuple(r[i] for r in ref) if isinstance(ref, tuple) else ref[i]


def _equal(got, want):
    if isinstance(want, tuple):
        return len(got) == len(want) and all(_equal(g, w) for g, w in zip(got, want))
    return (isinstance(got, np.ndarray) and got.dtype == np.float64
            and got.shape == want.shape and np.array_equal(got, want))


class _Sub(np.ndarray):
    pass


def _forms(x):
    """The same sample as the inputs ffwd.Dynamics accepts."""
    strided = np.zeros((x.size, 2))
    strided[:, 1] = x
    return {
        "float64": x.copy(),
        "strided": strided[:, 1],
        "float32": x.astype(np.float32),
        "list": [float(v) for v in x],
        "subclass": x.copy().view(_Sub),
        "read-only": np.frombuffer(x.tobytes()),
    }


@pytest.mark.parametrize("fn", ONE_INPUT + THREE_INPUTS)
def test_every_input_form_gives_the_batch_row(dyn, fn):
    n = dyn.dof
    k = 1 if fn in ONE_INPUT else 3
    states = _states(n)[:k]
    ref = _batch(dyn, fn, states)
    for i in range(states.shape[1]):
        want = _row(ref, i)
        sample = [s[i] for s in states]
        forms = [_forms(x) for x in sample]
        for name in forms[0]:
            got = getattr(dyn, fn)(*(f[name] for f in forms))
            got = tuple(got) if fn == "torque_parts" else got
            assert _equal(got, want), (fn, name, i)
        # mixed forms, and a batch of one (keeps its leading 1)
        mixed = [forms[j][("float64", "list", "strided")[j % 3]] for j in range(k)]
        got = getattr(dyn, fn)(*mixed)
        assert _equal(tuple(got) if fn == "torque_parts" else got, want), (fn, "mixed", i)
        one = _batch(dyn, fn, [x[None, :] for x in sample])
        assert _equal(_row(one, 0), want), (fn, "batch of one", i)
    if fn in ONE_INPUT:
        z = np.zeros(n, dtype=int)
        assert _equal(getattr(dyn, fn)(z), getattr(dyn, fn)(np.zeros(n))), fn


def test_batch_of_one_keeps_its_shape(dyn):
    n = dyn.dof
    q, qd, qdd = _states(n, rows=1)
    assert dyn.inverse_dynamics(q, qd, qdd).shape == (1, n)
    assert dyn.gravity(q).shape == (1, n)
    assert dyn.mass_matrix(q).shape == (1, n, n)


def test_results_are_new_arrays_of_the_caller(dyn):
    n = dyn.dof
    (q, qd, qdd) = _states(n, rows=2)
    r1 = dyn.inverse_dynamics(q[0], qd[0], qdd[0])
    kept = r1.copy()
    r2 = dyn.inverse_dynamics(q[1], qd[1], qdd[1])
    assert not np.array_equal(kept, r2)   # different samples, different torques
    assert np.array_equal(r1, kept)       # the second call left the first result alone
    for r in (r1, r2):
        assert r.flags.owndata and r.flags.writeable and r.flags.c_contiguous
    assert not np.shares_memory(r1, r2)
    r1[:] = 0.0                           # the caller may write into it
    assert np.array_equal(dyn.inverse_dynamics(q[0], qd[0], qdd[0]), kept)
    parts = dyn.torque_parts(q[0], qd[0], qdd[0])
    again = dyn.torque_parts(q[1], qd[1], qdd[1])
    for a in parts:
        assert a.flags.owndata and not any(np.shares_memory(a, b) for b in again)
    M1 = dyn.mass_matrix(q[0])
    M1_kept = M1.copy()
    dyn.mass_matrix(q[1])
    assert np.array_equal(M1, M1_kept)


def test_refused_samples_are_located(dyn, core):
    n = dyn.dof
    z = np.zeros(n)
    bad = z.copy()
    bad[2] = np.nan
    with pytest.raises(ValueError, match=r"^qd\[2\] is nan$"):
        dyn.inverse_dynamics(z, bad, z)
    far = z.copy()
    far[4] = core.Q_MAX
    with pytest.raises(ValueError, match=r"^q\[4\] = .* is out of range"):
        dyn.gravity(far)
    with pytest.raises(ValueError, match=rf"^qdd: expected shape \({n},\) or \(N, {n}\), "
                                         rf"got \({n + 1},\)$"):
        dyn.inverse_dynamics(z, z, np.zeros(n + 1))
    with pytest.raises(ValueError, match=r"^q: expected real numbers, got dtype complex128$"):
        dyn.tool_pose(z + 0j)
    # the entry still works after the refusals
    assert np.array_equal(dyn.gravity(z), dyn.gravity(z[None, :])[0])


def test_threads_do_not_mix(dyn):
    n = dyn.dof
    rows = 300
    q, qd, qdd = _states(n, rows=rows, seed=9)
    want = dyn.inverse_dynamics(q, qd, qdd)
    want_M = dyn.mass_matrix(q)
    start = threading.Barrier(4)
    failures = []

    def work(t):
        start.wait()
        for i in range(t, rows, 4):
            if not np.array_equal(dyn.inverse_dynamics(q[i], qd[i], qdd[i]), want[i]):
                failures.append(("inverse_dynamics", i))
            if not np.array_equal(dyn.mass_matrix(q[i]), want_M[i]):
                failures.append(("mass_matrix", i))
        if t == 0:   # a batch on one thread while the others call one sample at a time
            if not np.array_equal(dyn.inverse_dynamics(q, qd, qdd), want):
                failures.append(("batch", -1))

    threads = [threading.Thread(target=work, args=(t,)) for t in range(4)]
    for th in threads:
        th.start()
    for th in threads:
        th.join()
    assert failures == []


def test_model_entry_without_a_fallback(robot, shipped_library):
    core = native.load_library().model(robot)
    n = robot.dof
    q = _states(n)[0]
    g = core.single("gravity")
    assert g is core.single("gravity")
    assert _equal(g(q[0]), core.gravity(q)[0])
    assert _equal(g([float(v) for v in q[0]]), core.gravity(q)[0])
    bad = q[0].copy()
    bad[1] = np.inf
    with pytest.raises(ValueError, match=r"^gravity: non-finite input"):
        g(bad)
    with pytest.raises(ValueError, match=r"gravity: inputs must have shape \(n,\) or \(N, n\)"):
        g(np.zeros(n + 2))
    seen = []
    h = core.single("gravity", fallback=lambda *v: seen.append(v) or "fallback")
    assert h(np.zeros(n, dtype=np.float32)) == "fallback" and len(seen) == 1
    assert h(bad) == "fallback" and len(seen) == 2    # a refused sample goes there too
    assert _equal(h(q[0]), core.gravity(q)[0]) and len(seen) == 2


def test_compiled_helpers_are_built(shipped_library):
    # cffi is a build requirement (pyproject.toml): a built package has them
    if native._compiled_calls() is None:
        from conftest import require_build
        require_build("ffwd._calls is not built (cffi missing at build time?)")


def test_signature_that_does_not_fit_is_refused(shipped_library):
    lib = native.load_library()
    with pytest.raises(native.NativeError, match=r"expected \(model, work, 3 inputs, 1 outputs\)"):
        native._bytes_inputs(lib.ffi, lib.lib.ffwd_gravity_torque, 3, 1)
    with pytest.raises(native.NativeError, match="expected"):
        native._bytes_inputs(lib.ffi, lib.lib.ffwd_payload_set, 1, 1)


def test_batch_names_the_refused_sample(dyn):
    # the model's batch path (one C loop through ffwd._calls, or libffi calls) stops at
    # the first refused sample and names it; Dynamics words it with the entry
    n = dyn.dof
    q, qd, qdd = _states(n, rows=4)
    q[2, 1] = np.nan
    with pytest.raises(ValueError, match=r"^gravity: .* \(sample 2\)$"):
        dyn._core.gravity(q)
    with pytest.raises(ValueError, match=r"^torque_parts: .* \(sample 2\)$"):
        dyn._core.torque_parts(q, qd, qdd)
    with pytest.raises(ValueError, match=r"^q\[2, 1\] is nan$"):
        dyn.inverse_dynamics(q, qd, qdd)
    q[2, 1] = 0.0
    assert _equal(dyn.inverse_dynamics(q, qd, qdd)[3], dyn.inverse_dynamics(q[3], qd[3], qdd[3]))


def test_a_call_waits_for_its_turn(dyn):
    # while another user holds the model (here: the test, through the model's turns), a
    # one-sample call on another thread waits, and completes once the model is given back
    n = dyn.dof
    q, qd, qdd = _states(n, rows=1)
    want = dyn.inverse_dynamics(q[0], qd[0], qdd[0])
    got, started = [], threading.Event()

    def call():
        started.set()
        got.append(dyn.inverse_dynamics(q[0], qd[0], qdd[0]))

    turns = dyn._core._lock
    with turns:
        th = threading.Thread(target=call)
        th.start()
        started.wait()
        th.join(0.2)
        assert th.is_alive() and got == []     # waiting for the model
    th.join(10)
    assert not th.is_alive() and len(got) == 1 and _equal(got[0], want)
    assert turns.waiters == []
    # and the model is free again
    assert _equal(dyn.inverse_dynamics(q[0], qd[0], qdd[0]), want)
