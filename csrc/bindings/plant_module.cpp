// plant_module.cpp - ffwd._plant: the C plant simulation (csrc/plant.c) for Python.
//
// Plant(fields, cfg, q0, qd0=None): fields is the dict of ffwd_model field values
// ffwd.pack.model_fields(robot).as_dict() (filled by csrc/bindings/model_fill.hpp, shared
// with ffwd._core and ffwd._governor); cfg the dict built by ffwd.sim.plant.Plant
// (dt, integrator "euler"|"rk4", substeps, delay, saturate, counts_per_rev, noise_q,
// noise_qd, seed). Errors from the core raise ValueError with the status name.
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>

#include <cstring>
#include <memory>
#include <stdexcept>
#include <string>

#include "ffwd.h"
#include "model_fill.hpp"

namespace py = pybind11;
using vec = py::array_t<double, py::array::c_style | py::array::forcecast>;

namespace {

void check(ffwd_status s, const char *what)
{
    if (s != FFWD_OK) {
        throw py::value_error(std::string(what) + ": " + ffwd_status_str(s));
    }
}

void copy_into(ffwd_real *dst, py::handle src, size_t n, const char *name)
{
    vec a = vec::ensure(src);
    if (!a || a.ndim() != 1 || static_cast<size_t>(a.shape(0)) != n) {
        throw py::value_error(std::string("model field '") + name + "': expected " +
                              std::to_string(n) + " numbers");
    }
    for (size_t i = 0; i < n; ++i) {
        dst[i] = static_cast<ffwd_real>(a.data()[i]);
    }
}

template <typename T> T item(py::dict d, const char *key)
{
    if (!d.contains(key)) {
        throw py::value_error(std::string("missing field '") + key + "'");
    }
    return d[key].cast<T>();
}

struct Plant {
    ffwd_model model;
    ffwd_plant plant;
    uint32_t n = 0;

    Plant(py::dict fields, py::dict cfg, vec q0, py::object qd0)
    {
        ffwd_bind::fill_model(model, fields);
        check(ffwd_model_check(&model), "plant model");
        n = model.dof;
        ffwd_plant_config c;
        check(ffwd_plant_config_default(&c, item<double>(cfg, "dt")), "dt");
        std::string integ = item<std::string>(cfg, "integrator");
        if (integ == "euler") {
            c.integrator = FFWD_PLANT_EULER;
        } else if (integ == "rk4") {
            c.integrator = FFWD_PLANT_RK4;
        } else {
            throw py::value_error("integrator: must be 'euler' or 'rk4'");
        }
        c.substeps = item<uint32_t>(cfg, "substeps");
        c.delay = item<uint32_t>(cfg, "delay");
        c.saturate = item<bool>(cfg, "saturate") ? 1u : 0u;
        c.counts_per_rev = item<double>(cfg, "counts_per_rev");
        c.noise_q = item<double>(cfg, "noise_q");
        c.noise_qd = item<double>(cfg, "noise_qd");
        c.seed = item<uint64_t>(cfg, "seed");
        ffwd_real q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF];
        copy_into(q, q0, n, "q0");
        if (!qd0.is_none()) {
            copy_into(qd, qd0, n, "qd0");
        }
        check(ffwd_plant_init(&plant, &model, &c, q, qd0.is_none() ? nullptr : qd), "plant init");
    }

    void step(vec tau)
    {
        ffwd_real u[FFWD_MAX_DOF];
        copy_into(u, tau, n, "tau");
        ffwd_status s;
        {
            py::gil_scoped_release nogil;
            s = ffwd_plant_step(&plant, u);
        }
        check(s, "plant step");
    }

    py::tuple pair(bool measured) const
    {
        vec q(n), qd(n);
        ffwd_real a[FFWD_MAX_DOF], b[FFWD_MAX_DOF];
        check(measured ? ffwd_plant_measure(&plant, a, b) : ffwd_plant_state(&plant, a, b),
              "plant state");
        for (uint32_t i = 0; i < n; ++i) {
            q.mutable_data()[i] = a[i];
            qd.mutable_data()[i] = b[i];
        }
        return py::make_tuple(q, qd);
    }

    void set_state(vec q, py::object qd)
    {
        ffwd_real a[FFWD_MAX_DOF], b[FFWD_MAX_DOF];
        copy_into(a, q, n, "q");
        if (!qd.is_none()) {
            copy_into(b, qd, n, "qd");
        }
        check(ffwd_plant_set_state(&plant, a, qd.is_none() ? nullptr : b), "plant set_state");
    }

    vec tau() const
    {
        vec out(n);
        for (uint32_t i = 0; i < n; ++i) {
            out.mutable_data()[i] = plant.tau[i];
        }
        return out;
    }
};

} // namespace

PYBIND11_MODULE(_plant, mod)
{
    mod.doc() = "The ffwd C plant simulation (csrc/plant.c); use ffwd.sim.Plant.";
    py::class_<Plant, std::unique_ptr<Plant>>(mod, "Plant")
        .def(py::init<py::dict, py::dict, vec, py::object>(), py::arg("fields"), py::arg("cfg"),
             py::arg("q0"), py::arg("qd0") = py::none())
        .def("step", &Plant::step)
        .def("measure", [](const Plant &p) { return p.pair(true); })
        .def("state", [](const Plant &p) { return p.pair(false); })
        .def("set_state", &Plant::set_state, py::arg("q"), py::arg("qd") = py::none())
        .def("brake", [](Plant &p, bool on) { check(ffwd_plant_brake(&p.plant, on ? 1 : 0), "brake"); })
        .def_property_readonly("t", [](const Plant &p) { return static_cast<double>(p.plant.t); })
        .def_property_readonly("tau", &Plant::tau)
        .def_property_readonly("steps", [](const Plant &p) { return p.plant.steps; })
        .def_property_readonly("saturated_steps", [](const Plant &p) { return p.plant.saturated_steps; })
        .def_property_readonly("braked_steps", [](const Plant &p) { return p.plant.braked_steps; })
        .def_property_readonly("braked", [](const Plant &p) { return p.plant.braked != 0u; });
}
