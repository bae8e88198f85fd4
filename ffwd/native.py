"""Load any built libffwd shared library through cffi (ABI mode, no compiler needed).

This runs the exact binary a controller links. The declarations come from the library's
own header text (ffwd.h and the headers it includes), read at load time: comments and
preprocessor lines are removed by a small preprocessor that knows the library's
FFWD_MAX_DOF and sizeof(ffwd_real), which a minimal first load reads from
ffwd_build_info(). The struct sizes cffi then computes are checked against the
library's own numbers, so a header that does not match the binary is refused.

    lib = ffwd.native.load_library()              # the libffwd.so shipped in the package
    lib = ffwd.native.load_library("/x/libffwd.so", header="/x/include/ffwd.h")
    core = lib.model(robot)                       # same methods as ffwd._core.Model
"""
from __future__ import annotations

import functools
import importlib.util
import os
import re
import sys
import threading
import warnings

import numpy as np

__all__ = ["NativeError", "package_dir", "shipped_library", "shipped_include",
           "load_library", "Library", "NativeModel", "declarations"]


class NativeError(ValueError):
    """A libffwd shared library cannot be used (missing, wrong header, wrong build)."""


# ---- where the package's compiled files are ----------------------------------------------

def package_dir():
    """Directory holding the installed include/, lib/ and bin/ of the package.

    With an editable install the Python files stay in the repository while the compiled
    files are installed beside the extension module, so the extension's location is
    tried first, then every entry of the package's __path__."""
    candidates = []
    try:
        spec = importlib.util.find_spec("ffwd._core")
    except (ImportError, ValueError):
        spec = None
    if spec is not None and spec.origin:
        candidates.append(os.path.dirname(spec.origin))
    pkg = sys.modules.get("ffwd")
    candidates += list(getattr(pkg, "__path__", []) or [])
    for d in candidates:
        if os.path.isfile(os.path.join(d, "include", "ffwd.h")):
            return os.path.abspath(d)
    raise NativeError("the package's compiled files (include/ffwd.h, lib/) are not installed; "
                      "build the package with `make install` or `pip install .`")


def shipped_library():
    """Path of the libffwd shared library installed inside the package."""
    lib = os.path.join(package_dir(), "lib")
    for name in ("libffwd.so", "libffwd.dylib", "ffwd.dll"):
        path = os.path.join(lib, name)
        if os.path.exists(path):
            return path
    raise NativeError(f"no libffwd shared library in {lib}")


def shipped_include():
    """The package's include directory (ffwd.h and the headers it includes)."""
    return os.path.join(package_dir(), "include")


# ---- header text -> cffi declarations -------------------------------------------------------

_BUILD_INFO_CDEF = ("void ffwd_build_info(uint32_t *max_dof, uint32_t *real_size, "
                    "uint32_t *model_size, uint32_t *work_size);")


def _strip_comments(text):
    text = re.sub(r"/\*.*?\*/", lambda m: "\n" * m.group(0).count("\n"), text, flags=re.S)
    return re.sub(r"//[^\n]*", "", text)


def _eval_condition(expr, macros):
    """Value of an #if expression made of defined(X), numbers, !, &&, || and parentheses."""
    text = expr
    expr = re.sub(r"defined\s*\(\s*(\w+)\s*\)", lambda m: " 1 " if m.group(1) in macros else " 0 ", expr)
    expr = re.sub(r"defined\s+(\w+)", lambda m: " 1 " if m.group(1) in macros else " 0 ", expr)
    expr = re.sub(r"\b([A-Za-z_]\w*)\b", lambda m: f" {macros.get(m.group(1), '0') or '0'} ", expr)
    expr = expr.replace("&&", " and ").replace("||", " or ")
    expr = re.sub(r"!(?!=)", " not ", expr)
    expr = re.sub(r"(\d+)[uUlL]+\b", r"\1", expr)
    if not re.fullmatch(r"[\s\d()<>=!+\-*/%andotr]*", expr):
        raise NativeError(f"header: cannot evaluate '#if {text.strip()}'")
    try:   # only digits and operators are left
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", SyntaxWarning)
            return bool(eval(expr, {"__builtins__": {}}, {}))
    except Exception:   # e.g. '0(0)' from sizeof(int), or '=' for '=='
        raise NativeError(f"header: cannot evaluate '#if {text.strip()}'") from None


def _preprocess(path, macros, seen, out):
    """Append the declarations of header `path` to out, following local #includes."""
    path = os.path.abspath(path)
    if path in seen:
        return
    seen.add(path)
    try:
        with open(path, encoding="utf-8") as f:
            text = _strip_comments(f.read())
    except OSError as exc:
        raise NativeError(f"cannot read header {path}: {exc.strerror}") from None
    text = text.replace("\\\n", " ")
    stack = []   # per open #if: [this branch active, some branch already taken]
    for line in text.split("\n"):
        active = all(s[0] for s in stack)
        m = re.match(r"\s*#\s*(\w+)\s*(.*)", line)
        if not m:
            if active:
                out.append(line)
            continue
        word, rest = m.group(1), m.group(2).strip()
        if word in ("if", "ifdef", "ifndef"):
            if word == "ifdef":
                value = rest in macros
            elif word == "ifndef":
                value = rest not in macros
            else:
                value = active and _eval_condition(rest, macros)
            stack.append([value, value])
        elif word == "elif":
            taken = stack[-1][1]
            value = (not taken) and _eval_condition(rest, macros)
            stack[-1] = [value, taken or value]
        elif word == "else":
            stack[-1] = [not stack[-1][1], True]
        elif word == "endif":
            stack.pop()
        elif not active:
            continue
        elif word == "define":
            d = re.match(r"(\w+)(\(.*?\))?\s*(.*)", rest)
            if d and not d.group(2):
                macros.setdefault(d.group(1), d.group(3).strip())
        elif word == "include":
            inc = re.match(r'"([^"]+)"', rest)
            if inc:   # <system> headers: cffi knows the stdint types
                _preprocess(os.path.join(os.path.dirname(path), inc.group(1)), macros, seen, out)
        # #error, #pragma, #undef: nothing to declare


def _numeric_macros(macros):
    """Object-like macros whose value is an integer expression, evaluated."""
    values = {}
    for _ in range(4):   # macros defined through other macros
        for name, body in macros.items():
            text = re.sub(r"\b([A-Za-z_]\w*)\b",
                          lambda m: str(values[m.group(1)]) if m.group(1) in values else m.group(0),
                          body)
            text = re.sub(r"(\d+)[uUlL]+\b", r"\1", text)
            if text and re.fullmatch(r"[\s\d()+\-*/%]+", text):
                values[name] = int(eval(text.replace("/", "//"), {"__builtins__": {}}, {}))
    return values


def declarations(header, max_dof, real_size):
    """cffi cdef text of `header` for a library built with FFWD_MAX_DOF = max_dof and
    sizeof(ffwd_real) = real_size."""
    if real_size not in (4, 8):
        raise NativeError(f"sizeof(ffwd_real) = {real_size}: expected 4 (float) or 8 (double)")
    macros = {"FFWD_MAX_DOF": str(int(max_dof)), "FFWD_NO_ATOMICS": "1"}
    if real_size == 4:
        macros["FFWD_SINGLE"] = "1"
    out = []
    _preprocess(header, macros, set(), out)
    text = "\n".join(out)
    values = _numeric_macros(macros)
    # array sizes: substitute the numeric macros
    text = re.sub(r"\b([A-Za-z_]\w*)\b",
                  lambda m: str(values[m.group(1)]) if m.group(1) in values else m.group(0), text)
    text = re.sub(r"\b(\d+)[uU]\b", r"\1", text)
    text = re.sub(r"\bstatic\s+inline\b[^;{]*\{.*?\n\}", "", text, flags=re.S)
    return text


# ---- the library -------------------------------------------------------------------------

_LIBRARIES = {}


def load_library(path=None, header=None):
    """Load libffwd at `path` (default: the one shipped in the package) with the
    declarations of `header` (default: include/ffwd.h beside the library's lib/ dir,
    else the package's). Cached per (path, header, modification time)."""
    path = os.path.abspath(path if path is not None else shipped_library())
    if not os.path.exists(path):
        raise NativeError(f"{path}: no such library")
    if header is None:
        header = os.path.join(os.path.dirname(os.path.dirname(path)), "include", "ffwd.h")
        if not os.path.exists(header):
            header = os.path.join(shipped_include(), "ffwd.h")
    header = os.path.abspath(header)
    if not os.path.exists(header):
        raise NativeError(f"{header}: no such header (the ffwd.h the library was built from)")
    key = (path, header, os.path.getmtime(path), os.path.getmtime(header))
    if key not in _LIBRARIES:
        _LIBRARIES[key] = Library(path, header)
    return _LIBRARIES[key]


class Library:
    """A loaded libffwd: `ffi`, `lib`, the build facts, and model(robot)."""

    def __init__(self, path, header):
        from cffi import FFI

        self.path, self.header = path, header
        probe = FFI()
        probe.cdef(_BUILD_INFO_CDEF)
        try:
            lib0 = probe.dlopen(path)
        except OSError as exc:
            raise NativeError(f"{path}: cannot load: {exc}") from None
        try:
            info_fn = lib0.ffwd_build_info
        except AttributeError:
            raise NativeError(f"{path}: no ffwd_build_info symbol: not a libffwd library") from None
        vals = probe.new("uint32_t[4]")
        info_fn(vals + 0, vals + 1, vals + 2, vals + 3)
        self.max_dof, self.real_size, model_size, work_size = (int(v) for v in vals)

        self.ffi = FFI()
        try:
            self.ffi.cdef(declarations(header, self.max_dof, self.real_size))
        except Exception as exc:  # cffi's CDefError and friends
            raise NativeError(f"{header}: cannot declare for cffi: {exc}") from None
        got = (self.ffi.sizeof("ffwd_model"), self.ffi.sizeof("ffwd_work"))
        if got != (model_size, work_size):
            raise NativeError(
                f"{path}: build info does not match the header {header}: the library has "
                f"sizeof(ffwd_model) = {model_size}, sizeof(ffwd_work) = {work_size} "
                f"(FFWD_MAX_DOF {self.max_dof}, ffwd_real {self.real_size} bytes) but the "
                f"header gives {got[0]} and {got[1]}")
        self.lib = self.ffi.dlopen(path)
        self.real = "float" if self.real_size == 4 else "double"
        self.dtype = np.float32 if self.real_size == 4 else np.float64

    def status_str(self, status):
        return self.ffi.string(self.lib.ffwd_status_str(status)).decode()

    def model(self, robot):
        """A NativeModel of `robot` (same methods as ffwd._core.Model)."""
        return NativeModel(self, robot)

    def __repr__(self):
        return (f"<libffwd {self.path}: FFWD_MAX_DOF {self.max_dof}, "
                f"ffwd_real {self.real}>")


# the computations: C function, argument count, output shapes (per sample) for dof n
_FUNCTIONS = {
    "inverse_dynamics": ("ffwd_inverse_dynamics", 3, lambda n: [(n,)]),
    "gravity": ("ffwd_gravity_torque", 1, lambda n: [(n,)]),
    "torque_parts": ("ffwd_torque_parts", 3, lambda n: [(n,)] * 4),
    "mass_matrix": ("ffwd_mass_matrix", 1, lambda n: [(n, n)]),
    "forward_dynamics": ("ffwd_forward_dynamics", 3, lambda n: [(n,)]),
    "tool_pose": ("ffwd_tool_pose", 1, lambda n: [(4, 4)]),
    "tool_jacobian": ("ffwd_tool_jacobian", 1, lambda n: [(6, n)]),
    "regressor": ("ffwd_regressor", 3, lambda n: [(n, 13 * n)]),
}


def _bytes_inputs(ffi, func, k, n_out):
    """C function `func` (model, work, k input arrays, n_out output arrays) called through
    a pointer type that declares its k inputs char *, so that a bytes object can be passed
    for each: cffi then passes a pointer to the object's own data (no copy, nothing
    wrapped). Every pointer argument is handed to libffi as the same pointer type, so this
    is the same machine call as through the declared type. (CPython keeps the data of a
    bytes object at a multiple of 8 bytes, the alignment of double.)"""
    T = ffi.typeof(func)
    real_p = ffi.typeof("ffwd_real *")
    if (T.kind != "function" or len(T.args) != 2 + k + n_out
            or [a.cname for a in T.args[:2]] != ["ffwd_model *", "ffwd_work *"]
            or any(a != real_p for a in T.args[2:])):
        raise NativeError(f"{T.cname}: expected (model, work, {k} inputs, {n_out} outputs)")
    args = [a.cname for a in T.args]
    args[2:2 + k] = ["char *"] * k
    return ffi.cast(f"{T.result.cname}(*)({', '.join(args)})", func)


def _compiled_calls():
    """The module ffwd._calls (the cffi API-mode call helpers of csrc/cffi, built with the
    package), or None where it was not built (then calls go through libffi)."""
    try:
        from . import _calls
    except ImportError:
        return None
    return _calls


def _address(ffi, cdata):
    return int(ffi.cast("uintptr_t", cdata))


class _Turns:
    """Mutual exclusion for the calls on one model, cheaper to pass than threading.Lock
    when nobody else holds it: the holder is whoever popped the one token from a list
    (list.pop and list.append are atomic), about half the instructions of Lock.acquire
    and release, whose argument parsing dominates at this scale. A thread that finds the
    list empty waits on a condition; whoever gives the token back while a thread waits
    wakes one (a waiter registers under the condition before it looks for the token, so
    no wake-up is lost).

        try:
            t = pop()               # the fast pass (pop, push = turns.pop, turns.push)
        except IndexError:
            t = turns.wait()
        try:
            ...
        finally:
            push(t)
            if turns.waiters:
                turns.wake()

    `with turns:` does the same for the other users."""

    def __init__(self):
        tokens = [True]
        self.pop, self.push = tokens.pop, tokens.append
        self.waiters = []
        self._cond = threading.Condition(threading.Lock())

    def wait(self):
        with self._cond:
            self.waiters.append(None)
            try:
                while True:
                    try:
                        return self.pop()
                    except IndexError:
                        self._cond.wait()
            finally:
                self.waiters.pop()

    def wake(self):
        with self._cond:
            self._cond.notify()

    def __enter__(self):
        try:
            self.pop()
        except IndexError:
            self.wait()

    def __exit__(self, *exc):
        self.push(True)   # the token (there is one)
        if self.waiters:
            self.wake()


class NativeModel:
    """ffwd_model + ffwd_work + ffwd_payload_box in cffi memory.

    A single sample reaches C as one bytes object per input (no buffer shared between
    calls), the C function writes into a cached output buffer, and a copy of that is
    returned: one C call and no ffi object made per call. A batch is one ffi.from_buffer
    per array and one call of ffwd._calls' batch loop (without that module, a Python loop
    of libffi calls over pointers into them). Calls on one model take turns (a lock: they
    share the work area and the output buffers)."""

    def __init__(self, library, robot, compiled=True):
        """compiled: call through the module ffwd._calls where it is built (False: always
        through libffi, as the batch path does)."""
        from .pack import model_fields

        self.library = library
        ffi, lib = library.ffi, library.lib
        f = model_fields(robot)
        if f.dof > library.max_dof:
            raise NativeError(f"{library.path}: robot has {f.dof} joints, the library was built "
                              f"with FFWD_MAX_DOF {library.max_dof}")
        self._m = m = ffi.new("ffwd_model *")
        m.dof = f.dof
        m.gravity = list(f.gravity)
        for i in range(f.dof):
            j = m.joint[i]
            j.type = int(f.type[i])
            j.parent = int(f.parent[i])
            j.rot = list(f.rot[i])
            j.pos = list(f.pos[i])
            j.axis = list(f.axis[i])
            j.inertia = list(f.inertia[i])
            j.armature = f.armature[i]
            j.viscous = f.viscous[i]
            j.coulomb = f.coulomb[i]
            j.coulomb_band = f.coulomb_band[i]
            j.has_limits = int(f.has_limits[i])
            (j.q_min, j.q_max, j.v_max, j.a_max, j.j_max, j.tau_max) = (float(v) for v in f.limits[i])
        m.tool_parent = f.tool_parent
        m.tool_rot = list(f.tool_rot)
        m.tool_pos = list(f.tool_pos)
        m.payload = list(f.payload)
        self._w = ffi.new("ffwd_work *")
        self._box = ffi.new("ffwd_payload_box *")
        self._check(lib.ffwd_work_init(self._w, m), "model")
        self._check(lib.ffwd_payload_init(self._box, m), "payload")
        self._check(lib.ffwd_work_use_payload(self._w, self._box), "payload")
        self.dof = f.dof
        self._lock = _Turns()
        self._ctype = ffi.typeof(library.real + "[]")
        self._calls = _compiled_calls() if compiled else None
        self._keep = []   # cffi objects the one-sample entries point into
        self._batch_calls = {}
        self._single = {name: self._make_single(name, None) for name in _FUNCTIONS}

    def _check(self, status, fn, sample=None):
        if status != 0:
            where = "" if sample is None else f" (sample {sample})"
            raise ValueError(f"{fn}: {self.library.status_str(status)}{where}")

    def single(self, fn, fallback=None):
        """The one-sample entry of computation `fn` (e.g. "inverse_dynamics"): f(*inputs).

        When every input is a float64 ndarray of shape (n,) (any strides; an ndarray
        subclass counts as its data) it computes at once and returns new float64 arrays.
        Any other input, and a sample the C function refuses, goes to fallback(*inputs)
        (ffwd.Dynamics gives its checks, which word the error); without a fallback, to the
        general path, and a refused sample raises ValueError naming the status."""
        if fallback is None and fn in self._single:
            return self._single[fn]
        return self._make_single(fn, fallback)

    def _make_single(self, fn, fallback):
        """single(fn, fallback), made: every input becomes a bytes object (tobytes: one
        C-order copy each, made before taking the lock and owned by this call, so no input
        buffer is shared between calls or threads), passed to C with no further copy
        (see _bytes_inputs); the C function writes into output buffers of the model, copied
        out before the lock is released."""
        cname, k, shapes = _FUNCTIONS[fn]
        library = self.library
        F, shape = np.dtype(np.float64), (self.dof,)
        check = self._check
        turns = self._lock
        pop, push, waiters = turns.pop, turns.push, turns.waiters
        outs = [np.zeros(s, dtype=library.dtype) for s in shapes(self.dof)]
        call, h = self._entry(cname, k, outs)
        if library.dtype == np.float64:
            tb = np.ndarray.tobytes       # the data (never a subclass's own tobytes)
            takes = [o.copy for o in outs]
        else:                             # a float build: float64 in, float64 out
            def tb(a):
                return np.asarray(a, dtype=library.dtype).tobytes()
            takes = [functools.partial(o.astype, np.float64) for o in outs]
        if fallback is None:
            def other(*inputs):
                return self._run(fn, inputs)
        else:
            other = fallback
        if k == 3 and len(outs) == 1:
            (take,) = takes

            def one(a, b, c):
                try:
                    ok = (a.dtype is F and b.dtype is F and c.dtype is F
                          and a.shape == shape and b.shape == shape and c.shape == shape)
                    if ok:
                        x, y, z = tb(a), tb(b), tb(c)
                except Exception:   # not an ndarray (no dtype, no shape, no tobytes)
                    ok = False
                if not ok:
                    return other(a, b, c)
                try:
                    t = pop()
                except IndexError:
                    t = turns.wait()
                try:
                    st = call(h, x, y, z)
                    r = take()
                finally:
                    push(t)
                    if waiters:
                        turns.wake()
                if st:
                    if fallback is None:
                        check(st, fn)
                    return fallback(a, b, c)
                return r
        elif k == 1 and len(outs) == 1:
            (take,) = takes

            def one(a):
                try:
                    ok = a.dtype is F and a.shape == shape
                    if ok:
                        x = tb(a)
                except Exception:
                    ok = False
                if not ok:
                    return other(a)
                try:
                    t = pop()
                except IndexError:
                    t = turns.wait()
                try:
                    st = call(h, x)
                    r = take()
                finally:
                    push(t)
                    if waiters:
                        turns.wake()
                if st:
                    if fallback is None:
                        check(st, fn)
                    return fallback(a)
                return r
        else:
            def one(*inputs):
                try:
                    ok = len(inputs) == k and all(a.dtype is F and a.shape == shape
                                                  for a in inputs)
                    if ok:
                        xs = [tb(a) for a in inputs]
                except Exception:
                    ok = False
                if not ok:
                    return other(*inputs)
                try:
                    t = pop()
                except IndexError:
                    t = turns.wait()
                try:
                    st = call(h, *xs)
                    r = tuple(take() for take in takes)
                finally:
                    push(t)
                    if waiters:
                        turns.wake()
                if st:
                    if fallback is None:
                        check(st, fn)
                    return fallback(*inputs)
                return r
        one.__name__ = one.__qualname__ = fn
        one.__doc__ = f"{fn} of one sample (NativeModel.single)"
        return one

    def _entry(self, cname, k, outs):
        """(call, h): call(h, *input_bytes) runs C function `cname` on the model and its
        work area with k inputs given as bytes, writing into the arrays `outs`, and
        returns its status: a helper of ffwd._calls (a direct C call; h holds the
        function, model, work area and outputs) where that module is built, else a call
        through libffi."""
        ffi = self.library.ffi
        func = _bytes_inputs(ffi, getattr(self.library.lib, cname), k, len(outs))
        pouts = [ffi.from_buffer(self._ctype, o, require_writable=True) for o in outs]
        helper = getattr(self._calls.lib, f"ffwd_call_{k}_{len(outs)}", None) \
            if self._calls is not None else None
        if helper is None:
            m, w = self._m, self._w

            def call(h, *inputs):
                return func(m, w, *inputs, *pouts)
            return call, None
        cf = self._calls.ffi
        h = cf.new("ffwd_call *")
        h.fn = cf.cast("void(*)(void)", _address(ffi, func))
        h.model = cf.cast("void *", _address(ffi, self._m))
        h.work = cf.cast("void *", _address(ffi, self._w))
        for i, p in enumerate(pouts):
            h.out[i] = cf.cast("void *", _address(ffi, p))
        self._keep.append(pouts)   # h points into them (and into self._m, self._w)
        return helper, h

    def _run(self, fn, inputs):
        cname, k, shapes = _FUNCTIONS[fn]
        n = self.dof
        dt = self.library.dtype
        arrays = [np.ascontiguousarray(a, dtype=dt) for a in inputs]
        for a in arrays:
            if a.shape[-1:] != (n,) or a.shape != arrays[0].shape or a.ndim not in (1, 2):
                raise ValueError(f"{fn}: inputs must have shape (n,) or (N, n) with n = {n}")
        if arrays[0].ndim == 1:   # float64 (n,) arrays: the one-sample entry takes them
            return self._single[fn](*[a.astype(np.float64, copy=False) for a in arrays])
        out_shapes = shapes(n)
        N = arrays[0].shape[0]
        outs = [np.zeros((N,) + s, dtype=dt) for s in out_shapes]
        if N:
            self._batch(fn, getattr(self.library.lib, cname), arrays, outs,
                        [int(np.prod(s)) for s in out_shapes])
        outs = [o.astype(np.float64, copy=False) for o in outs]
        return outs[0] if len(outs) == 1 else tuple(outs)

    def _batch(self, fn, func, arrays, outs, sizes):
        """The C function over the rows of arrays into the rows of outs: one call of
        ffwd_call_batch where ffwd._calls is built, else a loop of libffi calls."""
        if self._calls is not None:
            return self._batch_compiled(fn, func, arrays, outs)
        ffi = self.library.ffi
        ct, m, w, n, N = self._ctype, self._m, self._w, self.dof, arrays[0].shape[0]
        xs = [ffi.from_buffer(ct, a) for a in arrays]
        ys = [ffi.from_buffer(ct, o, require_writable=True) for o in outs]
        st, i = 0, 0
        with self._lock:
            if len(xs) == 3 and len(ys) == 1:
                (x0, x1, x2), (y0,), (sy,) = xs, ys, sizes
                for i in range(N):
                    st = func(m, w, x0 + i * n, x1 + i * n, x2 + i * n, y0 + i * sy)
                    if st:
                        break
            elif len(xs) == 1 and len(ys) == 1:
                (x0,), (y0,), (sy,) = xs, ys, sizes
                for i in range(N):
                    st = func(m, w, x0 + i * n, y0 + i * sy)
                    if st:
                        break
            else:
                for i in range(N):
                    st = func(m, w, *(x + i * n for x in xs), *(y + i * s for y, s in zip(ys, sizes)))
                    if st:
                        break
        self._check(st, fn, i)

    def _batch_compiled(self, fn, func, arrays, outs):
        cf, ffi = self._calls.ffi, self.library.ffi
        k, N = len(arrays), arrays[0].shape[0]
        h = self._batch_calls.get(fn)
        if h is None:
            _bytes_inputs(ffi, func, k, len(outs))   # the argument list it is called with
            h = cf.new("ffwd_call *")
            h.fn = cf.cast("void(*)(void)", _address(ffi, func))
            h.model = cf.cast("void *", _address(ffi, self._m))
            h.work = cf.cast("void *", _address(ffi, self._w))
            self._batch_calls[fn] = h
        b = cf.new("ffwd_batch *")
        src = [cf.from_buffer(a) for a in arrays]
        dst = [cf.from_buffer(o, require_writable=True) for o in outs]
        for j, x in enumerate(src):
            b.src[j] = x
        for j, (y, o) in enumerate(zip(dst, outs)):
            b.dst[j] = y
            b.dst_step[j] = o.strides[0]
        b.src_step = arrays[0].strides[0]
        b.count = N
        status = cf.new("int *")
        with self._lock:
            done = self._calls.lib.ffwd_call_batch(h, k, len(outs), b, status)
        self._check(status[0], fn, done)

    def inverse_dynamics(self, q, qd, qdd):
        return self._run("inverse_dynamics", (q, qd, qdd))

    def gravity(self, q):
        return self._run("gravity", (q,))

    def torque_parts(self, q, qd, qdd):
        return self._run("torque_parts", (q, qd, qdd))

    def mass_matrix(self, q):
        return self._run("mass_matrix", (q,))

    def forward_dynamics(self, q, qd, tau):
        return self._run("forward_dynamics", (q, qd, tau))

    def tool_pose(self, q):
        return self._run("tool_pose", (q,))

    def tool_jacobian(self, q):
        return self._run("tool_jacobian", (q,))

    def regressor(self, q, qd, qdd):
        return self._run("regressor", (q, qd, qdd))

    def set_payload(self, mass, com, inertia):
        """mass, com (3,) in the tool frame, inertia about the com (xx, xy, xz, yy, yz, zz)."""
        ffi = self.library.ffi
        c = ffi.new(self.library.real + "[3]", [float(v) for v in com])
        I = ffi.new(self.library.real + "[6]", [float(v) for v in inertia])
        with self._lock:
            st = self.library.lib.ffwd_payload_set(self._box, self._m, float(mass), c, I)
        self._check(st, "set_payload")
