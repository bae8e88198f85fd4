// ffwd._core - pybind11 binding of the ffwd C core.
//
// `Model` owns one ffwd_model, one ffwd_work bound to it and one ffwd_payload_box, built
// from the arrays of ffwd.pack.model_fields. Every function takes one sample (n,) or a
// batch (N, n) of float64 arrays and loops over the batch in C++; batches run with the
// GIL released. A non-OK status raises ValueError with the ffwd_status_str text.
// Shapes are checked here only as far as memory safety needs; ffwd.Dynamics gives the
// user-facing messages.
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>

#include <array>
#include <cstring>
#include <mutex>
#include <string>
#include <vector>

#include "ffwd.h"

namespace py = pybind11;
using real = ffwd_real;
using Arr = py::array_t<real, py::array::c_style | py::array::forcecast>;
using ssize = py::ssize_t;

namespace {

[[noreturn]] void fail(const std::string &what) { throw py::value_error(what); }

void check_status(ffwd_status s, const char *fn) {
    if (s != FFWD_OK) fail(std::string(fn) + ": " + ffwd_status_str(s));
}

template <typename T>
const T *take(const py::array_t<T, py::array::c_style | py::array::forcecast> &a, ssize count,
              const char *name) {
    if (a.size() != count)
        fail(std::string("model field ") + name + ": expected " + std::to_string(count) +
             " values, got " + std::to_string(a.size()));
    return a.data();
}

// One computation over samples: K inputs of n values each, M outputs of out_size[m] values each.
struct Model {
    ffwd_model model;
    ffwd_work work;
    ffwd_payload_box box;
    std::mutex mu;  // one work area: calls on the same Model take turns

    uint32_t n() const { return model.dof; }

    template <size_t K, size_t M, typename F>
    py::object run(const char *fn, const std::array<const Arr *, K> &in,
                   const std::array<std::vector<ssize>, M> &out_shape, F &&f) {
        const Arr &first = *in[0];
        const ssize n = static_cast<ssize>(model.dof);
        const bool batched = first.ndim() == 2;
        if (!(first.ndim() == 1 || batched) || first.shape(first.ndim() - 1) != n)
            fail(std::string(fn) + ": inputs must have shape (n,) or (N, n) with n = " +
                 std::to_string(n));
        const ssize N = batched ? first.shape(0) : 1;
        std::array<const real *, K> ip{};
        for (size_t k = 0; k < K; ++k) {
            const Arr &a = *in[k];
            if (a.ndim() != first.ndim() || a.shape(a.ndim() - 1) != n ||
                (batched && a.shape(0) != N))
                fail(std::string(fn) + ": all inputs must have the same shape");
            ip[k] = a.data();
        }
        std::array<py::array_t<real>, M> out;
        std::array<real *, M> op{};
        std::array<ssize, M> osize{};
        for (size_t m = 0; m < M; ++m) {
            std::vector<ssize> shape;
            if (batched) shape.push_back(N);
            ssize size = 1;
            for (ssize d : out_shape[m]) {
                shape.push_back(d);
                size *= d;
            }
            out[m] = py::array_t<real>(shape);
            op[m] = out[m].mutable_data();
            osize[m] = size;
        }
        ffwd_status s = FFWD_OK;
        ssize bad = 0;
        auto loop = [&]() {
            std::lock_guard<std::mutex> lock(mu);
            for (ssize i = 0; i < N; ++i) {
                std::array<const real *, K> x;
                std::array<real *, M> y;
                for (size_t k = 0; k < K; ++k) x[k] = ip[k] + i * n;
                for (size_t m = 0; m < M; ++m) y[m] = op[m] + i * osize[m];
                s = f(x, y);
                if (s != FFWD_OK) {
                    bad = i;
                    break;
                }
            }
        };
        if (batched && N > 1) {
            py::gil_scoped_release release;
            loop();
        } else {
            loop();
        }
        if (s != FFWD_OK) {
            std::string msg = std::string(fn) + ": " + ffwd_status_str(s);
            if (batched) msg += " (sample " + std::to_string(bad) + ")";
            fail(msg);
        }
        if (M == 1) return std::move(out[0]);
        py::tuple t(M);
        for (size_t m = 0; m < M; ++m) t[m] = std::move(out[m]);
        return std::move(t);
    }
};

std::unique_ptr<Model> make_model(
    uint32_t dof, const Arr &gravity, const py::array_t<int32_t, py::array::c_style | py::array::forcecast> &type,
    const py::array_t<int32_t, py::array::c_style | py::array::forcecast> &parent, const Arr &rot,
    const Arr &pos, const Arr &axis, const Arr &inertia, const Arr &armature, const Arr &viscous,
    const Arr &coulomb, const Arr &coulomb_band,
    const py::array_t<uint32_t, py::array::c_style | py::array::forcecast> &has_limits,
    const Arr &limits, int32_t tool_parent, const Arr &tool_rot, const Arr &tool_pos,
    const Arr &payload) {
    if (dof < 1 || dof > FFWD_MAX_DOF)
        fail("model: dof " + std::to_string(dof) + " is outside 1.." + std::to_string(FFWD_MAX_DOF) +
             " (this build's FFWD_MAX_DOF)");
    auto m = std::make_unique<Model>();
    std::memset(&m->model, 0, sizeof m->model);
    std::memset(&m->work, 0, sizeof m->work);
    std::memset(&m->box, 0, sizeof m->box);
    ffwd_model &md = m->model;
    const ssize n = dof;
    md.dof = dof;
    std::memcpy(md.gravity, take(gravity, 3, "gravity"), 3 * sizeof(real));
    const int32_t *ty = take(type, n, "type");
    const int32_t *pa = take(parent, n, "parent");
    const real *ro = take(rot, 9 * n, "rot");
    const real *po = take(pos, 3 * n, "pos");
    const real *ax = take(axis, 3 * n, "axis");
    const real *in = take(inertia, 10 * n, "inertia");
    const real *ar = take(armature, n, "armature");
    const real *vi = take(viscous, n, "viscous");
    const real *co = take(coulomb, n, "coulomb");
    const real *cb = take(coulomb_band, n, "coulomb_band");
    const uint32_t *hl = take(has_limits, n, "has_limits");
    const real *li = take(limits, 6 * n, "limits");
    for (ssize i = 0; i < n; ++i) {
        ffwd_joint &j = md.joint[i];
        j.type = ty[i];
        j.parent = pa[i];
        std::memcpy(j.rot, ro + 9 * i, 9 * sizeof(real));
        std::memcpy(j.pos, po + 3 * i, 3 * sizeof(real));
        std::memcpy(j.axis, ax + 3 * i, 3 * sizeof(real));
        std::memcpy(j.inertia, in + 10 * i, 10 * sizeof(real));
        j.armature = ar[i];
        j.viscous = vi[i];
        j.coulomb = co[i];
        j.coulomb_band = cb[i];
        j.has_limits = hl[i];
        const real *l = li + 6 * i;
        j.q_min = l[0];
        j.q_max = l[1];
        j.v_max = l[2];
        j.a_max = l[3];
        j.j_max = l[4];
        j.tau_max = l[5];
    }
    md.tool_parent = tool_parent;
    std::memcpy(md.tool_rot, take(tool_rot, 9, "tool_rot"), 9 * sizeof(real));
    std::memcpy(md.tool_pos, take(tool_pos, 3, "tool_pos"), 3 * sizeof(real));
    std::memcpy(md.payload, take(payload, 10, "payload"), 10 * sizeof(real));
    check_status(ffwd_work_init(&m->work, &m->model), "model");
    check_status(ffwd_payload_init(&m->box, &m->model), "payload");
    check_status(ffwd_work_use_payload(&m->work, &m->box), "payload");
    return m;
}

using In1 = std::array<const real *, 1>;
using In3 = std::array<const real *, 3>;
using Out1 = std::array<real *, 1>;
using Out4 = std::array<real *, 4>;

}  // namespace

PYBIND11_MODULE(_core, mod) {
    mod.doc() = "pybind11 binding of the ffwd C core (use ffwd.Dynamics)";
    {
        uint32_t max_dof = 0, real_size = 0, model_size = 0, work_size = 0;
        ffwd_build_info(&max_dof, &real_size, &model_size, &work_size);
        mod.attr("MAX_DOF") = max_dof;
        mod.attr("REAL_SIZE") = real_size;
        mod.attr("MODEL_SIZE") = model_size;
        mod.attr("WORK_SIZE") = work_size;
    }
    mod.def("status_str", [](int s) { return std::string(ffwd_status_str(static_cast<ffwd_status>(s))); });

    py::class_<Model>(mod, "Model")
        .def(py::init(&make_model), py::arg("dof"), py::arg("gravity"), py::arg("type"),
             py::arg("parent"), py::arg("rot"), py::arg("pos"), py::arg("axis"), py::arg("inertia"),
             py::arg("armature"), py::arg("viscous"), py::arg("coulomb"), py::arg("coulomb_band"),
             py::arg("has_limits"), py::arg("limits"), py::arg("tool_parent"), py::arg("tool_rot"),
             py::arg("tool_pos"), py::arg("payload"))
        .def_property_readonly("dof", [](const Model &m) { return m.model.dof; })
        .def("inverse_dynamics",
             [](Model &m, const Arr &q, const Arr &qd, const Arr &qdd) {
                 const ssize n = m.n();
                 return m.run<3, 1>("inverse_dynamics", {&q, &qd, &qdd}, {std::vector<ssize>{n}},
                                    [&m](const In3 &x, const Out1 &y) {
                                        return ffwd_inverse_dynamics(&m.model, &m.work, x[0], x[1], x[2], y[0]);
                                    });
             })
        .def("gravity",
             [](Model &m, const Arr &q) {
                 const ssize n = m.n();
                 return m.run<1, 1>("gravity", {&q}, {std::vector<ssize>{n}},
                                    [&m](const In1 &x, const Out1 &y) {
                                        return ffwd_gravity_torque(&m.model, &m.work, x[0], y[0]);
                                    });
             })
        .def("torque_parts",
             [](Model &m, const Arr &q, const Arr &qd, const Arr &qdd) {
                 const ssize n = m.n();
                 std::vector<ssize> s{n};
                 return m.run<3, 4>("torque_parts", {&q, &qd, &qdd}, {s, s, s, s},
                                    [&m](const In3 &x, const Out4 &y) {
                                        return ffwd_torque_parts(&m.model, &m.work, x[0], x[1], x[2],
                                                                 y[0], y[1], y[2], y[3]);
                                    });
             })
        .def("mass_matrix",
             [](Model &m, const Arr &q) {
                 const ssize n = m.n();
                 return m.run<1, 1>("mass_matrix", {&q}, {std::vector<ssize>{n, n}},
                                    [&m](const In1 &x, const Out1 &y) {
                                        return ffwd_mass_matrix(&m.model, &m.work, x[0], y[0]);
                                    });
             })
        .def("forward_dynamics",
             [](Model &m, const Arr &q, const Arr &qd, const Arr &tau) {
                 const ssize n = m.n();
                 return m.run<3, 1>("forward_dynamics", {&q, &qd, &tau}, {std::vector<ssize>{n}},
                                    [&m](const In3 &x, const Out1 &y) {
                                        return ffwd_forward_dynamics(&m.model, &m.work, x[0], x[1], x[2], y[0]);
                                    });
             })
        .def("tool_pose",
             [](Model &m, const Arr &q) {
                 return m.run<1, 1>("tool_pose", {&q}, {std::vector<ssize>{4, 4}},
                                    [&m](const In1 &x, const Out1 &y) {
                                        return ffwd_tool_pose(&m.model, &m.work, x[0], y[0]);
                                    });
             })
        .def("tool_jacobian",
             [](Model &m, const Arr &q) {
                 const ssize n = m.n();
                 return m.run<1, 1>("tool_jacobian", {&q}, {std::vector<ssize>{6, n}},
                                    [&m](const In1 &x, const Out1 &y) {
                                        return ffwd_tool_jacobian(&m.model, &m.work, x[0], y[0]);
                                    });
             })
        .def("regressor",
             [](Model &m, const Arr &q, const Arr &qd, const Arr &qdd) {
                 const ssize n = m.n();
                 return m.run<3, 1>("regressor", {&q, &qd, &qdd}, {std::vector<ssize>{n, 13 * n}},
                                    [&m](const In3 &x, const Out1 &y) {
                                        return ffwd_regressor(&m.model, &m.work, x[0], x[1], x[2], y[0]);
                                    });
             })
        .def("set_payload",
             [](Model &m, double mass, const Arr &com, const Arr &inertia) {
                 const real *c = take(com, 3, "com");
                 const real *I = take(inertia, 6, "inertia");
                 std::lock_guard<std::mutex> lock(m.mu);
                 check_status(ffwd_payload_set(&m.box, &m.model, static_cast<real>(mass), c, I),
                              "set_payload");
             },
             py::arg("mass"), py::arg("com"), py::arg("inertia"),
             "New payload: mass, com (3,) in the tool frame, inertia about the com as "
             "(xx, xy, xz, yy, yz, zz) in tool-frame axes.");
}
