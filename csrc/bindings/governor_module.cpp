// ffwd._governor - pybind11 binding of the C speed-override governor (csrc/governor.c).
//
// `Governor` owns one ffwd_model (from the fields of ffwd.pack.model_fields), one
// ffwd_work and one ffwd_governor. Use it through ffwd.scaling.Governor.
//   push(q, dq, ddq, dddq) -> status code (int); fault_index/fault_joint/fault_limit
//   push_from(Q, DQ, DDQ, DDDQ, start) -> (pushed, status): as many rows as fit
//   finish(), room()
//   step(cmd) -> (status, q, qd, qdd, tau, s, override, rate, rate_rate, safe, flags)
//   run(Q, DQ, DDQ, DDDQ, cmds) -> (status, fault, arrays): a whole run in C
//   time_cycles(Q, DQ, DDQ, DDDQ, cmd, max_cycles) -> per-cycle ns of push + step
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>

#include <chrono>
#include <cmath>
#include <cstring>
#include <memory>
#include <string>
#include <vector>

#include "ffwd.h"
#include "model_fill.hpp"

namespace py = pybind11;
using namespace ffwd_bind;
using Arr = RealArr;
using I32 = I32Arr;
using U32 = U32Arr;

namespace {

struct Gov {
    ffwd_model model;
    ffwd_work work;
    ffwd_governor gov;
    int init_status = 0;

    uint32_t n() const { return model.dof; }

    const real *row(const Arr &a, ssize i, const char *name) {
        const ssize n = static_cast<ssize>(model.dof);
        if (a.ndim() != 2 || a.shape(1) != n || i < 0 || i >= a.shape(0))
            fail(std::string(name) + ": expected shape (N, " + std::to_string(n) + ")");
        return a.data() + i * n;
    }
};

std::unique_ptr<Gov> make_gov(uint32_t dof, const Arr &gravity, const I32 &type, const I32 &parent,
                              const Arr &rot, const Arr &pos, const Arr &axis, const Arr &inertia,
                              const Arr &armature, const Arr &viscous, const Arr &coulomb,
                              const Arr &coulomb_band, const U32 &has_limits, const Arr &limits,
                              int32_t tool_parent, const Arr &tool_rot, const Arr &tool_pos,
                              const Arr &payload, real dt, real ds, uint32_t horizon,
                              real override_max, real rate_max, real rate_rate_max, real margin) {
    auto g = std::make_unique<Gov>();
    std::memset(&g->work, 0, sizeof g->work);
    std::memset(&g->gov, 0, sizeof g->gov);
    fill_model(g->model, dof, gravity, type, parent, rot, pos, axis, inertia, armature, viscous,
               coulomb, coulomb_band, has_limits, limits, tool_parent, tool_rot, tool_pos, payload);
    ffwd_status s = ffwd_work_init(&g->work, &g->model);
    if (s != FFWD_OK) fail(std::string("model: ") + ffwd_status_str(s));
    ffwd_gov_config cfg;
    std::memset(&cfg, 0, sizeof cfg);  // a field not set below stays 0
    cfg.dt = dt;
    cfg.ds = ds;
    cfg.horizon = horizon;
    cfg.override_max = override_max;
    cfg.rate_max = rate_max;
    cfg.rate_rate_max = rate_rate_max;
    cfg.margin = margin;
    g->init_status = static_cast<int>(ffwd_governor_init(&g->gov, &g->model, &g->work, &cfg));
    return g;
}

py::tuple step(Gov &g, real cmd) {
    ffwd_gov_output out;
    ffwd_status s = ffwd_governor_step(&g.gov, cmd, &out);
    const ssize n = g.n();
    py::array_t<real> q(n), qd(n), qdd(n), tau(n);
    std::memcpy(q.mutable_data(), out.q, n * sizeof(real));
    std::memcpy(qd.mutable_data(), out.qd, n * sizeof(real));
    std::memcpy(qdd.mutable_data(), out.qdd, n * sizeof(real));
    std::memcpy(tau.mutable_data(), out.tau, n * sizeof(real));
    return py::make_tuple(static_cast<int>(s), q, qd, qdd, tau, out.s, out.override, out.rate,
                          out.rate_rate, out.safe_override, out.flags);
}


// ---- offline reachability passes (ffwd.scaling.topp), the same arithmetic as the
// Python fallback in topp.py / constraints.py, in C++ for speed
constexpr double OFF_BIG = 1e30, OFF_CAP = 1e15;

double off_root1(double A, double B, double C) {
    if (C > 0.0) return 0.0;
    double disc = B * B - 4.0 * A * C;
    double r;
    if (B > 0.0)
        r = disc >= 0.0 ? (-2.0 * C) / (B + std::sqrt(disc)) : OFF_CAP;
    else
        r = A > 0.0 ? (std::sqrt(disc > 0.0 ? disc : 0.0) - B) / (2.0 * A) : OFF_CAP;
    if (!(r == r)) r = OFF_CAP;
    return r < OFF_CAP ? r : OFF_CAP;
}

using D2 = py::array_t<double, py::array::c_style | py::array::forcecast>;

// x_max: candidates velocity (n), pairs (P*P, i-major), pure (2P), next-nonnegative (P)
py::tuple offline_xmax(const D2 &Bl, const D2 &Gl, const D2 &Dl, const D2 &Bu, const D2 &Gu,
                       const D2 &Du, const D2 &Bp, const D2 &Gp, const D2 &Dp, const D2 &xv, double ds) {
    const ssize N = Bl.shape(0), P = Bl.shape(1), n = xv.shape(1);
    py::array_t<double> X(N);
    py::array_t<int64_t> kind(N), ra(N), rb(N);
    const double *bl = Bl.data(), *gl = Gl.data(), *dl = Dl.data(), *bu = Bu.data(), *gu = Gu.data(),
                 *du = Du.data(), *bp = Bp.data(), *gp = Gp.data(), *dp = Dp.data(), *v = xv.data();
    {
        py::gil_scoped_release release;
        for (ssize k = 0; k < N; ++k) {
            double best = OFF_BIG * 10;
            int64_t kd = 0, a = 0, b = -1;
            auto take = [&](double c, int64_t kk, int64_t aa, int64_t bb) {
                if (c < best) { best = c; kd = kk; a = aa; b = bb; }
            };
            for (ssize j = 0; j < n; ++j) take(v[k * n + j], 0, j, -1);
            for (ssize i = 0; i < P; ++i)
                for (ssize j = 0; j < P; ++j) {
                    double r = off_root1(bl[k * P + i] - bu[k * P + j], gl[k * P + i] - gu[k * P + j],
                                         dl[k * P + i] - du[k * P + j]);
                    take(r * r, 1, i, j);
                }
            for (ssize i = 0; i < 2 * P; ++i) {
                double r = off_root1(bp[k * 2 * P + i], gp[k * 2 * P + i], dp[k * 2 * P + i]);
                take(r * r, 2, i, -1);
            }
            for (ssize j = 0; j < P; ++j) {
                double r = off_root1(-1.0 - 2 * ds * bu[k * P + j], -2 * ds * gu[k * P + j], -2 * ds * du[k * P + j]);
                take(r * r, 3, j, -1);
            }
            X.mutable_data()[k] = best;
            kind.mutable_data()[k] = kd;
            ra.mutable_data()[k] = a;
            rb.mutable_data()[k] = b;
        }
    }
    return py::make_tuple(X, py::make_tuple(kind, ra, rb));
}

// backward and forward passes; returns (Xs, brake_row, x, u, at_upper, hi_row)
py::tuple offline_passes(const D2 &Bl, const D2 &Gl, const D2 &Dl, const D2 &Bu, const D2 &Gu,
                         const D2 &Du, const D2 &X, double ds, double x_start, double x_end) {
    const ssize N = Bl.shape(0), P = Bl.shape(1);
    py::array_t<double> Xs(N), x(N), u(N > 1 ? N - 1 : 0);
    py::array_t<int64_t> brake(N), hi_row(N > 1 ? N - 1 : 0);
    py::array_t<bool> at_upper(N > 1 ? N - 1 : 0);
    const double *bl = Bl.data(), *gl = Gl.data(), *dl = Dl.data(), *bu = Bu.data(), *gu = Gu.data(),
                 *du = Du.data(), *xm = X.data();
    double *xs = Xs.mutable_data(), *xx = x.mutable_data(), *uu = u.mutable_data();
    int64_t *br = brake.mutable_data(), *hr = hi_row.mutable_data();
    bool *au = at_upper.mutable_data();
    {
        py::gil_scoped_release release;
        xs[N - 1] = x_end < xm[N - 1] ? x_end : xm[N - 1];
        br[N - 1] = -1;
        for (ssize k = N - 2; k >= 0; --k) {
            double X1 = xs[k + 1], best = xm[k];
            int64_t arg = -1;
            for (ssize p = 0; p < P; ++p) {
                double r = off_root1(1.0 + 2.0 * ds * bl[k * P + p], 2.0 * ds * gl[k * P + p],
                                     2.0 * ds * dl[k * P + p] - X1);
                if (r * r < best) { best = r * r; arg = p; }
            }
            xs[k] = best;
            br[k] = arg;
        }
        xx[0] = x_start < xs[0] ? x_start : xs[0];
        for (ssize k = 0; k + 1 < N; ++k) {
            double xk = xx[k], kap = std::sqrt(xk), hi = 0;
            int64_t j = -1;
            for (ssize p = 0; p < P; ++p) {
                double h = bu[k * P + p] * xk + gu[k * P + p] * kap + du[k * P + p];
                if (j < 0 || h < hi) { hi = h; j = p; }
            }
            double reach = (xs[k + 1] - xk) / (2.0 * ds);
            double uk = hi <= reach ? hi : reach;
            au[k] = hi <= reach;
            hr[k] = j;
            double nx = xk + 2.0 * ds * uk;
            nx = nx > 0.0 ? nx : 0.0;
            xx[k + 1] = nx < xs[k + 1] ? nx : xs[k + 1];
            uu[k] = (xx[k + 1] - xk) / (2.0 * ds);
        }
    }
    return py::make_tuple(Xs, brake, x, u, at_upper, hi_row);
}

}  // namespace

PYBIND11_MODULE(_governor, mod) {
    mod.def("offline_xmax", &offline_xmax);
    mod.def("offline_passes", &offline_passes);
    mod.doc() = "pybind11 binding of the ffwd speed-override governor (use ffwd.scaling.Governor)";
    mod.attr("MAX_HORIZON") = static_cast<uint32_t>(FFWD_GOV_MAX_HORIZON);
    mod.attr("MAX_DOF") = static_cast<uint32_t>(FFWD_MAX_DOF);
    mod.attr("STATE_BYTES") = static_cast<uint64_t>(sizeof(ffwd_governor));
    mod.def("status_str", [](int s) { return std::string(ffwd_status_str(static_cast<ffwd_status>(s))); });

    py::class_<Gov>(mod, "Governor")
        .def(py::init(&make_gov), FFWD_MODEL_FIELD_ARGS, py::arg("dt"), py::arg("ds"),
             py::arg("horizon"), py::arg("override_max"), py::arg("rate_max"),
             py::arg("rate_rate_max"), py::arg("margin"))
        .def_readonly("init_status", &Gov::init_status)
        .def_property_readonly("fault_index", [](const Gov &g) { return g.gov.fault_index; })
        .def_property_readonly("fault_joint", [](const Gov &g) { return g.gov.fault_joint; })
        .def_property_readonly("fault_limit", [](const Gov &g) { return g.gov.fault_limit; })
        .def("room", [](const Gov &g) { return ffwd_governor_room(&g.gov); })
        .def("finish", [](Gov &g) { return static_cast<int>(ffwd_governor_finish(&g.gov)); })
        .def("push", [](Gov &g, const Arr &q, const Arr &dq, const Arr &ddq, const Arr &dddq) {
            const ssize n = g.n();
            if (q.size() != n || dq.size() != n || ddq.size() != n || dddq.size() != n)
                fail("push: q, dq, ddq, dddq need " + std::to_string(n) + " values each");
            return static_cast<int>(ffwd_governor_push(&g.gov, q.data(), dq.data(), ddq.data(), dddq.data()));
        })
        .def("push_from", [](Gov &g, const Arr &Q, const Arr &DQ, const Arr &DDQ, const Arr &DDDQ, ssize start) {
            ssize k = start;
            int st = 0;
            const ssize N = Q.ndim() == 2 ? Q.shape(0) : 0;
            while (k < N && ffwd_governor_room(&g.gov) > 0) {
                st = static_cast<int>(ffwd_governor_push(&g.gov, g.row(Q, k, "Q"), g.row(DQ, k, "DQ"),
                                                         g.row(DDQ, k, "DDQ"), g.row(DDDQ, k, "DDDQ")));
                if (st != 0) break;
                ++k;
            }
            return py::make_tuple(k - start, st);
        })
        .def("step", &step)
        .def("run", [](Gov &g, const Arr &Q, const Arr &DQ, const Arr &DDQ, const Arr &DDDQ, const Arr &cmds) {
            // the whole run in C: push what fits, step with cmds[i], until done or cmds end;
            // returns (status, fault, cycles, arrays dict)
            const ssize n = g.n(), N = Q.ndim() == 2 ? Q.shape(0) : 0, C = cmds.size();
            std::vector<real> q, qd, qdd, tau, sc;
            std::vector<uint32_t> flags;
            q.reserve(static_cast<size_t>(C * n));
            ssize k = 0, c = 0;
            int st = 0;
            ffwd_gov_output out;
            for (c = 0; c < C; ++c) {
                while (k < N && ffwd_governor_room(&g.gov) > 0) {
                    st = static_cast<int>(ffwd_governor_push(&g.gov, g.row(Q, k, "Q"), g.row(DQ, k, "DQ"),
                                                             g.row(DDQ, k, "DDQ"), g.row(DDDQ, k, "DDDQ")));
                    if (st != 0) break;
                    ++k;
                    if (k == N) ffwd_governor_finish(&g.gov);
                }
                if (st != 0) break;
                st = static_cast<int>(ffwd_governor_step(&g.gov, cmds.data()[c], &out));
                if (st != 0) break;
                q.insert(q.end(), out.q, out.q + n);
                qd.insert(qd.end(), out.qd, out.qd + n);
                qdd.insert(qdd.end(), out.qdd, out.qdd + n);
                tau.insert(tau.end(), out.tau, out.tau + n);
                real row[6] = {out.s, out.override, out.rate, out.rate_rate, out.safe_override,
                               static_cast<real>(k - 1) * g.gov.cfg.ds};
                sc.insert(sc.end(), row, row + 6);
                flags.push_back(out.flags);
                if (out.flags & FFWD_GOV_DONE) { ++c; break; }
            }
            const ssize m = static_cast<ssize>(flags.size());
            auto mat = [&](const std::vector<real> &v, ssize cols) {
                py::array_t<real> a({m, cols});
                if (m) std::memcpy(a.mutable_data(), v.data(), v.size() * sizeof(real));
                return a;
            };
            py::array_t<uint32_t> fl(m);
            if (m) std::memcpy(fl.mutable_data(), flags.data(), flags.size() * sizeof(uint32_t));
            py::dict d;
            d["q"] = mat(q, n); d["qd"] = mat(qd, n); d["qdd"] = mat(qdd, n); d["tau"] = mat(tau, n);
            d["scalars"] = mat(sc, 6); d["flags"] = fl;
            return py::make_tuple(st, py::make_tuple(g.gov.fault_index, g.gov.fault_joint, g.gov.fault_limit), d);
        })
        .def("time_cycles", [](Gov &g, const Arr &Q, const Arr &DQ, const Arr &DDQ, const Arr &DDDQ,
                               real cmd, ssize max_cycles) {
            // per cycle: push what fits, then one step; returns the ns of each cycle
            using clock = std::chrono::steady_clock;
            std::vector<double> ns;
            ns.reserve(static_cast<size_t>(max_cycles));
            const ssize N = Q.shape(0);
            ssize k = 0;
            ffwd_gov_output out;
            for (ssize c = 0; c < max_cycles; ++c) {
                auto t0 = clock::now();
                while (k < N && ffwd_governor_room(&g.gov) > 0) {
                    if (ffwd_governor_push(&g.gov, g.row(Q, k, "Q"), g.row(DQ, k, "DQ"),
                                           g.row(DDQ, k, "DDQ"), g.row(DDDQ, k, "DDDQ")) != FFWD_OK)
                        fail("time_cycles: push failed");
                    ++k;
                    if (k == N) ffwd_governor_finish(&g.gov);
                }
                ffwd_status s = ffwd_governor_step(&g.gov, cmd, &out);
                auto t1 = clock::now();
                if (s != FFWD_OK) fail(std::string("time_cycles: ") + ffwd_status_str(s));
                ns.push_back(std::chrono::duration<double, std::nano>(t1 - t0).count());
                if (out.flags & FFWD_GOV_DONE) break;
            }
            py::array_t<double> res(static_cast<ssize>(ns.size()));
            std::memcpy(res.mutable_data(), ns.data(), ns.size() * sizeof(double));
            return res;
        });
}
