// ffwd._core - pybind11 binding of the ffwd C core.
//
// `Model` owns one ffwd_model, one ffwd_work bound to it and one ffwd_payload_box, built
// from the fields of ffwd.pack.model_fields (csrc/bindings/model_fill.hpp). Every function
// takes one sample (n,) or a batch (N, n) and returns new arrays of the matching shape.
//
// The arguments are checked here, with the messages ffwd.Dynamics documents (ffwd.Dynamics
// calls these methods directly for backend "c"):
//   "<arg>: expected real numbers, got dtype <dtype>"          (not int/uint/float)
//   "<arg>: expected shape (n,) or (N, n), got <shape>"
//   "<arg>: expected shape <shape of the first> like <first>, got <shape>"
//   "<arg>[i, j] is nan" / "q[i, j] = 1e+300 is out of range (|q| < 1.04858e+06)"
//   "<function>: <ffwd_status_str> (sample i)"                   (any other non-OK status)
// Finiteness and the |q| bound are checked by the C core itself (its status code); the
// entry is located only after the core refused. A float64 C-contiguous array is used in
// place (no copy); anything else goes through numpy.asarray like ffwd.dynamics._as_state.
// A batch runs in one C++ loop with the GIL released; calls on one Model take turns.
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>

#include <array>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <memory>
#include <mutex>
#include <string>

#include "ffwd.h"
#include "model_fill.hpp"

extern "C" {
#ifndef restrict
#define restrict __restrict__
#define FFWD_BIND_UNDEF_RESTRICT
#endif
#include "spatial.h"  // FFWD_Q_MAX_: the core's bound on |q| (FFWD_E_ARG beyond it)
#ifdef FFWD_BIND_UNDEF_RESTRICT
#undef restrict
#endif
}
#ifndef FFWD_Q_MAX_
#error "csrc/spatial.h no longer defines FFWD_Q_MAX_ (exported as ffwd._core.Q_MAX)"
#endif

namespace py = pybind11;
using namespace ffwd_bind;

namespace {

using npy = py::detail::npy_api;

constexpr double Q_MAX = static_cast<double>(FFWD_Q_MAX_);

// numpy pieces looked up once at import (kept for the life of the process)
struct Numpy {
    PyTypeObject *array_type = nullptr;
    PyObject *f64 = nullptr;   // the float64 dtype (a singleton)
    PyObject *real = nullptr;  // the dtype of ffwd_real
    py::object asarray, float64;
};
Numpy *NP = nullptr;

void init_numpy() {
    npy &api = npy::get();
    NP = new Numpy;
    NP->array_type = api.PyArray_Type_;
    NP->f64 = api.PyArray_DescrFromType_(npy::NPY_DOUBLE_);  // new reference, kept
    NP->real = api.PyArray_DescrFromType_(sizeof(real) == 4 ? npy::NPY_FLOAT_ : npy::NPY_DOUBLE_);
    if (!NP->f64 || !NP->real) throw py::error_already_set();
    py::module_ np = py::module_::import("numpy");
    NP->asarray = np.attr("asarray");
    NP->float64 = np.attr("float64");
}

inline py::detail::PyArray_Proxy *arr(PyObject *o) { return py::detail::array_proxy(o); }

std::string shape_str(int nd, const ssize *d) {  // as Python prints a shape tuple
    std::string s = "(";
    for (int i = 0; i < nd; ++i) {
        if (i) s += ", ";
        s += std::to_string(d[i]);
    }
    if (nd == 1) s += ",";
    return s + ")";
}

// One argument: `f64` is what ffwd.dynamics._as_state gives (a float64 ndarray of shape
// (n,) or (N, n)); `buf` the C-contiguous aligned ffwd_real array the core reads (the
// same object when the argument already is one).
struct State {
    py::object f64, buf;
    const real *p = nullptr;
};

void as_state(py::handle v, const char *name, ssize n, State &s) {
    PyObject *o = v.ptr();
    if (Py_TYPE(o) == NP->array_type && arr(o)->descr == NP->f64) {
        s.f64 = py::reinterpret_borrow<py::object>(v);
    } else {
        py::object a = NP->asarray(v);
        const char kind = py::detail::array_descriptor_proxy(arr(a.ptr())->descr)->kind;
        if (kind != 'i' && kind != 'u' && kind != 'f')
            fail(std::string(name) + ": expected real numbers, got dtype " +
                 py::str(a.attr("dtype")).cast<std::string>());
        s.f64 = NP->asarray(a, NP->float64);
    }
    const auto *pa = arr(s.f64.ptr());
    if (!(pa->nd == 1 || pa->nd == 2) || pa->dimensions[pa->nd - 1] != n)
        fail(std::string(name) + ": expected shape (" + std::to_string(n) + ",) or (N, " +
             std::to_string(n) + "), got " + shape_str(pa->nd, pa->dimensions));
    constexpr int want = npy::NPY_ARRAY_C_CONTIGUOUS_ | npy::NPY_ARRAY_ALIGNED_;
    if (pa->descr == NP->real && (pa->flags & want) == want) {
        s.buf = s.f64;
    } else {
        Py_INCREF(NP->real);  // PyArray_FromAny steals it
        PyObject *b = npy::get().PyArray_FromAny_(
            s.f64.ptr(), NP->real, 0, 0,
            want | npy::NPY_ARRAY_ENSUREARRAY_ | npy::NPY_ARRAY_FORCECAST_, nullptr);
        if (!b) throw py::error_already_set();
        s.buf = py::reinterpret_steal<py::object>(b);
    }
    s.p = reinterpret_cast<const real *>(arr(s.buf.ptr())->data);
}

// "q[3, 2] is nan" for the first non-finite entry (or q out of the core's range), in the
// order of the arguments and then row-major, as ffwd.dynamics._nonfinite_message; "" if none.
template <size_t K>
std::string nonfinite_message(const std::array<const char *, K> &names,
                              const std::array<State, K> &st) {
    for (size_t k = 0; k < K; ++k) {
        const auto *pa = arr(st[k].f64.ptr());
        const bool batched = pa->nd == 2;
        const ssize rows = batched ? pa->dimensions[0] : 1, cols = pa->dimensions[pa->nd - 1];
        const ssize rs = batched ? pa->strides[0] : 0, cs = pa->strides[pa->nd - 1];
        const bool is_q = std::strcmp(names[k], "q") == 0;
        for (ssize i = 0; i < rows; ++i)
            for (ssize j = 0; j < cols; ++j) {
                double x;
                std::memcpy(&x, pa->data + i * rs + j * cs, sizeof x);
                const bool finite = std::isfinite(x);
                if (finite && !(is_q && std::fabs(x) >= Q_MAX)) continue;
                std::string where = std::string(names[k]) + "[" +
                                    (batched ? std::to_string(i) + ", " : std::string()) +
                                    std::to_string(j) + "]";
                char text[80];
                if (finite)
                    std::snprintf(text, sizeof text, " = %g is out of range (|q| < %g)", x, Q_MAX);
                else
                    std::snprintf(text, sizeof text, " is %s",
                                  std::isnan(x) ? "nan" : (x > 0 ? "inf" : "-inf"));
                return where + text;
            }
    }
    return std::string();
}

py::object new_array(int nd, const ssize *dims) {
    npy &api = npy::get();
    Py_INCREF(NP->real);  // PyArray_NewFromDescr steals it
    PyObject *a = api.PyArray_NewFromDescr_(api.PyArray_Type_, NP->real, nd, dims, nullptr,
                                            nullptr, 0, nullptr);
    if (!a) throw py::error_already_set();
    return py::reinterpret_steal<py::object>(a);
}

struct Model {
    ffwd_model model;
    ffwd_work work;
    ffwd_payload_box box;
    std::mutex mu;  // one work area: calls on the same Model take turns

    ssize n() const { return static_cast<ssize>(model.dof); }

    // One computation over samples: K inputs of n values each, M outputs, output m of
    // shape out_shape[m] (rank out_rank[m]) per sample. f(x, y) runs the core on one sample.
    template <size_t K, size_t M, typename F>
    py::object run(const char *fn, const std::array<const char *, K> &names,
                   const std::array<py::handle, K> &in, const std::array<std::array<ssize, 2>, M> &out_shape,
                   const std::array<int, M> &out_rank, F &&f) {
        const ssize nn = n();
        std::array<State, K> st;
        for (size_t k = 0; k < K; ++k) as_state(in[k], names[k], nn, st[k]);
        const auto *first = arr(st[0].f64.ptr());
        for (size_t k = 1; k < K; ++k) {
            const auto *pa = arr(st[k].f64.ptr());
            if (pa->nd != first->nd || (pa->nd == 2 && pa->dimensions[0] != first->dimensions[0]))
                fail(std::string(names[k]) + ": expected shape " +
                     shape_str(first->nd, first->dimensions) + " like " + names[0] + ", got " +
                     shape_str(pa->nd, pa->dimensions));
        }
        const bool batched = first->nd == 2;
        const ssize N = batched ? first->dimensions[0] : 1;

        std::array<py::object, M> out;
        std::array<real *, M> op{};
        std::array<ssize, M> osize{};
        for (size_t m = 0; m < M; ++m) {
            ssize dims[3];
            int nd = 0;
            if (batched) dims[nd++] = N;
            osize[m] = 1;
            for (int d = 0; d < out_rank[m]; ++d) {
                dims[nd++] = out_shape[m][d];
                osize[m] *= out_shape[m][d];
            }
            out[m] = new_array(nd, dims);
            op[m] = reinterpret_cast<real *>(arr(out[m].ptr())->data);
        }

        ffwd_status s = FFWD_OK;
        ssize bad = 0;
        auto loop = [&]() {
            std::lock_guard<std::mutex> lock(mu);
            std::array<const real *, K> x;
            std::array<real *, M> y;
            for (size_t k = 0; k < K; ++k) x[k] = st[k].p;
            for (size_t m = 0; m < M; ++m) y[m] = op[m];
            for (ssize i = 0; i < N; ++i) {
                s = f(x, y);
                if (s != FFWD_OK) {
                    bad = i;
                    break;
                }
                for (size_t k = 0; k < K; ++k) x[k] += nn;
                for (size_t m = 0; m < M; ++m) y[m] += osize[m];
            }
        };
        if (N > 1) {
            py::gil_scoped_release release;
            loop();
        } else {
            loop();
        }
        if (s != FFWD_OK) {
            std::string msg = nonfinite_message<K>(names, st);
            if (msg.empty()) {
                msg = std::string(fn) + ": " + ffwd_status_str(s);
                if (batched) msg += " (sample " + std::to_string(bad) + ")";
            }
            fail(msg);
        }
        if (M == 1) return std::move(out[0]);
        py::tuple t(M);
        for (size_t m = 0; m < M; ++m) t[m] = std::move(out[m]);
        return std::move(t);
    }
};

std::unique_ptr<Model> make_model(uint32_t dof, const RealArr &gravity, const I32Arr &type,
                                  const I32Arr &parent, const RealArr &rot, const RealArr &pos,
                                  const RealArr &axis, const RealArr &inertia,
                                  const RealArr &armature, const RealArr &viscous,
                                  const RealArr &coulomb, const RealArr &coulomb_band,
                                  const U32Arr &has_limits, const RealArr &limits,
                                  int32_t tool_parent, const RealArr &tool_rot,
                                  const RealArr &tool_pos, const RealArr &payload) {
    auto m = std::make_unique<Model>();
    std::memset(&m->work, 0, sizeof m->work);
    std::memset(&m->box, 0, sizeof m->box);
    fill_model(m->model, dof, gravity, type, parent, rot, pos, axis, inertia, armature, viscous,
               coulomb, coulomb_band, has_limits, limits, tool_parent, tool_rot, tool_pos, payload);
    auto check = [](ffwd_status s, const char *what) {
        if (s != FFWD_OK) fail(std::string(what) + ": " + ffwd_status_str(s));
    };
    check(ffwd_work_init(&m->work, &m->model), "model");
    check(ffwd_payload_init(&m->box, &m->model), "payload");
    check(ffwd_work_use_payload(&m->work, &m->box), "payload");
    return m;
}

using In1 = std::array<const real *, 1>;
using In3 = std::array<const real *, 3>;
using Out1 = std::array<real *, 1>;
using Out4 = std::array<real *, 4>;
using Names1 = std::array<const char *, 1>;
using Names3 = std::array<const char *, 3>;
using H1 = std::array<py::handle, 1>;
using H3 = std::array<py::handle, 3>;
using Shape1 = std::array<std::array<ssize, 2>, 1>;

// The computations, their argument names and counts.
enum Fn { ID, GRAVITY, PARTS, MASS, FD, POSE, JACOBIAN, REGRESSOR, N_FN };
constexpr const char *FN_NAME[N_FN] = {"inverse_dynamics", "gravity", "torque_parts",
                                       "mass_matrix", "forward_dynamics", "tool_pose",
                                       "tool_jacobian", "regressor"};
constexpr int FN_ARGS[N_FN] = {3, 1, 3, 1, 3, 1, 1, 3};
const Names3 QQQ{"q", "qd", "qdd"}, QQT{"q", "qd", "tau"};
const Names1 Q1{"q"};

py::object compute(Model &m, Fn fn, PyObject *const *a) {
    const ssize n = m.n();
    const H3 h3{a[0], a[FN_ARGS[fn] > 1 ? 1 : 0], a[FN_ARGS[fn] > 2 ? 2 : 0]};
    const H1 h1{a[0]};
    switch (fn) {
    case ID:
        return m.run<3, 1>(FN_NAME[fn], QQQ, h3, Shape1{{{n, 0}}}, {1}, [&m](const In3 &x, const Out1 &y) {
            return ffwd_inverse_dynamics(&m.model, &m.work, x[0], x[1], x[2], y[0]);
        });
    case GRAVITY:
        return m.run<1, 1>(FN_NAME[fn], Q1, h1, Shape1{{{n, 0}}}, {1}, [&m](const In1 &x, const Out1 &y) {
            return ffwd_gravity_torque(&m.model, &m.work, x[0], y[0]);
        });
    case PARTS: {
        const std::array<ssize, 2> s{n, 0};
        return m.run<3, 4>(FN_NAME[fn], QQQ, h3, {s, s, s, s}, {1, 1, 1, 1},
                           [&m](const In3 &x, const Out4 &y) {
                               return ffwd_torque_parts(&m.model, &m.work, x[0], x[1], x[2], y[0],
                                                        y[1], y[2], y[3]);
                           });
    }
    case MASS:
        return m.run<1, 1>(FN_NAME[fn], Q1, h1, Shape1{{{n, n}}}, {2}, [&m](const In1 &x, const Out1 &y) {
            return ffwd_mass_matrix(&m.model, &m.work, x[0], y[0]);
        });
    case FD:
        return m.run<3, 1>(FN_NAME[fn], QQT, h3, Shape1{{{n, 0}}}, {1}, [&m](const In3 &x, const Out1 &y) {
            return ffwd_forward_dynamics(&m.model, &m.work, x[0], x[1], x[2], y[0]);
        });
    case POSE:
        return m.run<1, 1>(FN_NAME[fn], Q1, h1, Shape1{{{4, 4}}}, {2}, [&m](const In1 &x, const Out1 &y) {
            return ffwd_tool_pose(&m.model, &m.work, x[0], y[0]);
        });
    case JACOBIAN:
        return m.run<1, 1>(FN_NAME[fn], Q1, h1, Shape1{{{6, n}}}, {2}, [&m](const In1 &x, const Out1 &y) {
            return ffwd_tool_jacobian(&m.model, &m.work, x[0], y[0]);
        });
    case REGRESSOR:
        return m.run<3, 1>(FN_NAME[fn], QQQ, h3, Shape1{{{n, 13 * n}}}, {2},
                           [&m](const In3 &x, const Out1 &y) {
                               return ffwd_regressor(&m.model, &m.work, x[0], x[1], x[2], y[0]);
                           });
    default:
        fail("unknown computation");
    }
}

// ---- entries: plain CPython fast-call functions bound to one Model (what ffwd.Dynamics
// calls; they skip pybind11's overload dispatch). `self` is a capsule holding the Model
// pointer whose context keeps a reference to the Python Model object.
template <int F>
PyObject *entry(PyObject *cap, PyObject *const *args, Py_ssize_t nargs) {
    if (nargs != FN_ARGS[F]) {
        PyErr_Format(PyExc_TypeError, "%s() takes %d positional arguments (%zd given)", FN_NAME[F],
                     FN_ARGS[F], nargs);
        return nullptr;
    }
    auto *m = static_cast<Model *>(PyCapsule_GetPointer(cap, "ffwd._core.Model"));
    if (!m) return nullptr;
    try {
        return compute(*m, static_cast<Fn>(F), args).release().ptr();
    } catch (py::error_already_set &e) {
        e.restore();
    } catch (py::builtin_exception &e) {
        e.set_error();
    } catch (const std::bad_alloc &) {
        PyErr_NoMemory();
    } catch (const std::exception &e) {
        PyErr_SetString(PyExc_RuntimeError, e.what());
    }
    return nullptr;
}

#define FFWD_ENTRY(F, doc) \
    {FN_NAME[F], reinterpret_cast<PyCFunction>(reinterpret_cast<void (*)(void)>(&entry<F>)), METH_FASTCALL, doc}
PyMethodDef ENTRY_DEFS[N_FN] = {
    FFWD_ENTRY(ID, "inverse_dynamics(q, qd, qdd) of the bound Model"),
    FFWD_ENTRY(GRAVITY, "gravity(q) of the bound Model"),
    FFWD_ENTRY(PARTS, "torque_parts(q, qd, qdd) of the bound Model"),
    FFWD_ENTRY(MASS, "mass_matrix(q) of the bound Model"),
    FFWD_ENTRY(FD, "forward_dynamics(q, qd, tau) of the bound Model"),
    FFWD_ENTRY(POSE, "tool_pose(q) of the bound Model"),
    FFWD_ENTRY(JACOBIAN, "tool_jacobian(q) of the bound Model"),
    FFWD_ENTRY(REGRESSOR, "regressor(q, qd, qdd) of the bound Model"),
};
#undef FFWD_ENTRY

// ---- the Model methods: the same computations through pybind11's dispatch
template <int F>
py::object method1(Model &m, py::handle a0) {
    PyObject *a[1] = {a0.ptr()};
    return compute(m, static_cast<Fn>(F), a);
}

template <int F>
py::object method3(Model &m, py::handle a0, py::handle a1, py::handle a2) {
    PyObject *a[3] = {a0.ptr(), a1.ptr(), a2.ptr()};
    return compute(m, static_cast<Fn>(F), a);
}

py::dict entries(py::object self) {
    Model &m = self.cast<Model &>();
    PyObject *cap = PyCapsule_New(&m, "ffwd._core.Model", [](PyObject *c) {
        Py_XDECREF(static_cast<PyObject *>(PyCapsule_GetContext(c)));
    });
    if (!cap) throw py::error_already_set();
    auto capsule = py::reinterpret_steal<py::object>(cap);
    if (PyCapsule_SetContext(cap, self.ptr()) != 0) throw py::error_already_set();
    Py_INCREF(self.ptr());  // released by the capsule's destructor
    py::dict d;
    for (int f = 0; f < N_FN; ++f) {
        PyObject *fn = PyCFunction_New(&ENTRY_DEFS[f], cap);
        if (!fn) throw py::error_already_set();
        d[FN_NAME[f]] = py::reinterpret_steal<py::object>(fn);
    }
    return d;
}

}  // namespace

PYBIND11_MODULE(_core, mod) {
    init_numpy();
    mod.doc() = "pybind11 binding of the ffwd C core (use ffwd.Dynamics)";
    {
        uint32_t max_dof = 0, real_size = 0, model_size = 0, work_size = 0;
        ffwd_build_info(&max_dof, &real_size, &model_size, &work_size);
        mod.attr("MAX_DOF") = max_dof;
        mod.attr("REAL_SIZE") = real_size;
        mod.attr("MODEL_SIZE") = model_size;
        mod.attr("WORK_SIZE") = work_size;
    }
    mod.attr("Q_MAX") = Q_MAX;  // joint positions need |q| < Q_MAX (else FFWD_E_ARG)
    mod.attr("CHECKS_ARGUMENTS") = true;  // Model words argument errors as ffwd.Dynamics does
    mod.def("status_str", [](int s) { return std::string(ffwd_status_str(static_cast<ffwd_status>(s))); });

    py::class_<Model>(mod, "Model")
        .def(py::init(&make_model), FFWD_MODEL_FIELD_ARGS)
        .def_property_readonly("dof", [](const Model &m) { return m.model.dof; })
        .def("inverse_dynamics", &method3<ID>)
        .def("gravity", &method1<GRAVITY>)
        .def("torque_parts", &method3<PARTS>)
        .def("mass_matrix", &method1<MASS>)
        .def("forward_dynamics", &method3<FD>)
        .def("tool_pose", &method1<POSE>)
        .def("tool_jacobian", &method1<JACOBIAN>)
        .def("regressor", &method3<REGRESSOR>)
        .def("entries", &entries,
             "dict: computation name -> a plain function of the arguments alone, bound to this "
             "Model (the same checks and results as the methods, less call overhead)")
        .def("set_payload",
             [](Model &m, double mass, const RealArr &com, const RealArr &inertia) {
                 const real *c = take(com, 3, "com");
                 const real *I = take(inertia, 6, "inertia");
                 std::lock_guard<std::mutex> lock(m.mu);
                 const ffwd_status s =
                     ffwd_payload_set(&m.box, &m.model, static_cast<real>(mass), c, I);
                 if (s != FFWD_OK) fail(std::string("set_payload: ") + ffwd_status_str(s));
             },
             py::arg("mass"), py::arg("com"), py::arg("inertia"),
             "New payload: mass, com (3,) in the tool frame, inertia about the com as "
             "(xx, xy, xz, yy, yz, zz) in tool-frame axes.");
}
