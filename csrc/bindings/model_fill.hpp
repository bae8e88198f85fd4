// model_fill.hpp - the one place the Python extensions fill an ffwd_model.
//
// The field values come from ffwd.pack.model_fields(robot) (ModelFields, or its
// as_dict()): dof, gravity, type, parent, rot, pos, axis, inertia, armature, viscous,
// coulomb, coulomb_band, has_limits, limits, tool_parent, tool_rot, tool_pos, payload,
// laid out as documented in ffwd/pack.py. Used by core_module.cpp (ffwd._core),
// governor_module.cpp (ffwd._governor) and plant_module.cpp (ffwd._plant).
// A wrong count raises ValueError "model field <name>: expected <k> values, got <m>".
#pragma once

#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>

#include <cstring>
#include <string>

#include "ffwd.h"

namespace ffwd_bind {

namespace py = pybind11;
using real = ffwd_real;
using ssize = py::ssize_t;
using RealArr = py::array_t<real, py::array::c_style | py::array::forcecast>;
using I32Arr = py::array_t<int32_t, py::array::c_style | py::array::forcecast>;
using U32Arr = py::array_t<uint32_t, py::array::c_style | py::array::forcecast>;

[[noreturn]] inline void fail(const std::string &what) { throw py::value_error(what); }

template <typename T>
const T *take(const py::array_t<T, py::array::c_style | py::array::forcecast> &a, ssize count,
              const char *name) {
    if (a.size() != count)
        fail(std::string("model field ") + name + ": expected " + std::to_string(count) +
             " values, got " + std::to_string(a.size()));
    return a.data();
}

// The keyword names of the fields, in the order of fill_model's parameters (for py::init).
#define FFWD_MODEL_FIELD_ARGS                                                                  \
    pybind11::arg("dof"), pybind11::arg("gravity"), pybind11::arg("type"),                     \
        pybind11::arg("parent"), pybind11::arg("rot"), pybind11::arg("pos"),                   \
        pybind11::arg("axis"), pybind11::arg("inertia"), pybind11::arg("armature"),            \
        pybind11::arg("viscous"), pybind11::arg("coulomb"), pybind11::arg("coulomb_band"),     \
        pybind11::arg("has_limits"), pybind11::arg("limits"), pybind11::arg("tool_parent"),    \
        pybind11::arg("tool_rot"), pybind11::arg("tool_pos"), pybind11::arg("payload")

// md is zeroed, then every field is copied; the caller runs ffwd_work_init (which checks
// the model with ffwd_model_check).
inline void fill_model(ffwd_model &md, uint32_t dof, const RealArr &gravity, const I32Arr &type,
                       const I32Arr &parent, const RealArr &rot, const RealArr &pos,
                       const RealArr &axis, const RealArr &inertia, const RealArr &armature,
                       const RealArr &viscous, const RealArr &coulomb,
                       const RealArr &coulomb_band, const U32Arr &has_limits,
                       const RealArr &limits, int32_t tool_parent, const RealArr &tool_rot,
                       const RealArr &tool_pos, const RealArr &payload) {
    if (dof < 1 || dof > FFWD_MAX_DOF)
        fail("model: dof " + std::to_string(dof) + " is outside 1.." +
             std::to_string(FFWD_MAX_DOF) + " (this build's FFWD_MAX_DOF)");
    std::memset(&md, 0, sizeof md);
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
}

// The same from a mapping of the field names (ModelFields.as_dict()).
inline void fill_model(ffwd_model &md, const py::dict &f) {
    auto get = [&f](const char *key) -> py::object {
        if (!f.contains(key)) fail(std::string("model field ") + key + ": missing");
        return f[key];
    };
    fill_model(md, get("dof").cast<uint32_t>(), get("gravity").cast<RealArr>(),
               get("type").cast<I32Arr>(), get("parent").cast<I32Arr>(), get("rot").cast<RealArr>(),
               get("pos").cast<RealArr>(), get("axis").cast<RealArr>(),
               get("inertia").cast<RealArr>(), get("armature").cast<RealArr>(),
               get("viscous").cast<RealArr>(), get("coulomb").cast<RealArr>(),
               get("coulomb_band").cast<RealArr>(), get("has_limits").cast<U32Arr>(),
               get("limits").cast<RealArr>(), get("tool_parent").cast<int32_t>(),
               get("tool_rot").cast<RealArr>(), get("tool_pos").cast<RealArr>(),
               get("payload").cast<RealArr>());
}

}  // namespace ffwd_bind
