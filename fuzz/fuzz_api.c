/* fuzz_api.c - libFuzzer harness over the ffwd C API (docs/reliability.md).
 *
 * The fuzz bytes build a model: mostly a plausible one (valid rotations, positive
 * masses, inertias that obey the triangle inequality, drives, limits, trees), then
 * optionally corrupted by writing raw bytes at chosen offsets of the ffwd_model struct
 * (any field: dof, parents, types, NaN, Inf, huge or tiny numbers). ffwd_model_check
 * decides; when it passes, every function of the API is called with states from the
 * bytes (bounded, or raw doubles including NaN and Inf) and must return without a
 * sanitizer report and keep the contract of ffwd.h:
 *   status OK        -> every output finite;
 *   status not OK    -> every output zero;
 *   non-finite input -> status not OK;
 *   bounded inputs   -> torque parts sum to the inverse dynamics.
 * A broken rule calls abort(), which libFuzzer reports with the input that did it.
 *
 * Build: clang -fsanitize=fuzzer,address,undefined -Icsrc/include -Icsrc fuzz/fuzz_api.c csrc/ *.c
 * (mk/fuzz.mk does it); the same file also builds a plain replay program with
 * -DFUZZ_REPLAY_MAIN that runs the harness over files given on the command line.
 */
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "ffwd.h"
#include "programs/model_build.h"

#define NMAX FFWD_MAX_DOF

typedef struct bytes {
    const uint8_t *p;
    size_t n, i;
} bytes;

static uint8_t u8(bytes *b)
{
    return b->i < b->n ? b->p[b->i++] : 0u;
}

static double unit(bytes *b) /* [0, 1] */
{
    return (double)u8(b) / 255.0;
}

static double range(bytes *b, double lo, double hi)
{
    return lo + (hi - lo) * unit(b);
}

static double raw_double(bytes *b)
{
    uint8_t t[8];
    double d;
    for (int k = 0; k < 8; ++k) t[k] = u8(b);
    memcpy(&d, t, sizeof d);
    return d;
}

/* the state of the current input, printed when a rule breaks */
static const ffwd_model *g_model;
static int g_plausible = 1;
static const ffwd_real *g_state[4];

static void fail(const char *what, const char *fn, int detail)
{
    fprintf(stderr, "fuzz_api: %s in %s (%d)\n", what, fn, detail);
    if (g_model) {
        static const char *const names[4] = {"q", "qd", "qdd", "tau"};
        fprintf(stderr, "  plausible model %d, dof %u, gravity %g %g %g\n", g_plausible, (unsigned)g_model->dof,
                (double)g_model->gravity[0], (double)g_model->gravity[1], (double)g_model->gravity[2]);
        for (int k = 0; k < 4; ++k) {
            fprintf(stderr, "  %s:", names[k]);
            for (uint32_t i = 0; i < g_model->dof; ++i) fprintf(stderr, " %.17g", (double)g_state[k][i]);
            fprintf(stderr, "\n");
        }
    }
    abort();
}

static void rot_rpy(double r, double p, double y, ffwd_real R[9])
{
    double M[9];
    mb_rpy(r, p, y, M);
    for (int k = 0; k < 9; ++k) R[k] = (ffwd_real)M[k];
}

static void build_model(bytes *b, ffwd_model *m)
{
    uint8_t head = u8(b);
    uint32_t dof = 1u + (uint32_t)(head % 8u);
    if ((head & 0xC0u) == 0xC0u) dof = 1u + (uint32_t)(u8(b) % NMAX);
    memset(m, 0, sizeof *m);
    m->dof = dof;
    for (int k = 0; k < 3; ++k) m->gravity[k] = (ffwd_real)range(b, -12.0, 12.0);
    for (uint32_t i = 0; i < dof; ++i) {
        ffwd_joint *j = &m->joint[i];
        uint8_t flags = u8(b);
        double ax[3], n2 = 0.0, mass, c[3], d[3], lo, hi, Q[9];
        ffwd_real Qr[9];
        j->type = (flags & 1u) ? FFWD_PRISMATIC : FFWD_REVOLUTE;
        j->parent = (flags & 2u) && i > 0 ? (int32_t)(u8(b) % i) : (int32_t)i - 1;
        rot_rpy(range(b, -3.2, 3.2), range(b, -3.2, 3.2), range(b, -3.2, 3.2), j->rot);
        for (int k = 0; k < 3; ++k) j->pos[k] = (ffwd_real)range(b, -0.6, 0.6);
        for (int k = 0; k < 3; ++k) {
            ax[k] = range(b, -1.0, 1.0);
            n2 += ax[k] * ax[k];
        }
        if (n2 < 1e-6) {
            ax[0] = ax[1] = 0.0;
            ax[2] = 1.0;
            n2 = 1.0;
        }
        for (int k = 0; k < 3; ++k) j->axis[k] = (ffwd_real)(ax[k] / sqrt(n2));
        mass = range(b, 0.05, 30.0);
        for (int k = 0; k < 3; ++k) c[k] = range(b, -0.3, 0.3);
        d[0] = range(b, 1e-4, 0.5) * mass;
        d[1] = range(b, 1e-4, 0.5) * mass;
        lo = fabs(d[0] - d[1]);
        hi = d[0] + d[1];
        d[2] = lo + (hi - lo) * range(b, 0.05, 0.95);
        rot_rpy(range(b, -3.2, 3.2), range(b, -1.5, 1.5), range(b, -3.2, 3.2), Qr);
        for (int k = 0; k < 9; ++k) Q[k] = (double)Qr[k];
        mb_link_inertia(j, mass, c, d, Q);
        j->armature = (ffwd_real)(flags & 4u ? range(b, 0.0, 2.0) : 0.0);
        j->viscous = (ffwd_real)range(b, 0.0, 20.0);
        j->coulomb = (ffwd_real)(flags & 8u ? range(b, 0.0, 30.0) : 0.0);
        j->coulomb_band = (ffwd_real)range(b, 1e-4, 0.2);
        j->has_limits = (uint32_t)(u8(b) & 31u);
        if (flags & 16u) j->has_limits = 31u;
        j->q_min = (ffwd_real)range(b, -4.0, -0.1);
        j->q_max = (ffwd_real)range(b, 0.1, 4.0);
        j->v_max = (ffwd_real)range(b, 0.1, 6.0);
        j->a_max = (ffwd_real)range(b, 0.5, 50.0);
        j->j_max = (ffwd_real)range(b, 5.0, 2000.0);
        j->tau_max = (ffwd_real)range(b, 10.0, 3000.0);
    }
    m->tool_parent = (int32_t)(u8(b) % dof);
    rot_rpy(range(b, -3.2, 3.2), range(b, -3.2, 3.2), range(b, -3.2, 3.2), m->tool_rot);
    for (int k = 0; k < 3; ++k) m->tool_pos[k] = (ffwd_real)range(b, -0.3, 0.3);
    if (u8(b) & 1u) {
        double pm = range(b, 0.0, 20.0), pc[3];
        for (int k = 0; k < 3; ++k) pc[k] = range(b, -0.2, 0.2);
        m->payload[0] = (ffwd_real)pm;
        for (int k = 0; k < 3; ++k) m->payload[1 + k] = (ffwd_real)(pm * pc[k]);
        m->payload[4] = m->payload[7] = m->payload[9] =
            (ffwd_real)(pm * (0.01 + pc[0] * pc[0] + pc[1] * pc[1] + pc[2] * pc[2]));
    }
    /* corruption: raw bytes written over chosen offsets of the struct */
    {
        uint8_t k = u8(b) & 7u;
        if (k >= 5u) {
            uint32_t writes = (uint32_t)(k - 4u);
            for (uint32_t w = 0; w < writes; ++w) {
                size_t span = offsetof(ffwd_model, joint) + dof * sizeof(ffwd_joint);
                size_t off = ((size_t)u8(b) << 8 | u8(b)) % span;
                size_t len = 1u + (size_t)(u8(b) % 8u);
                if (off + len > sizeof *m) len = sizeof *m - off;
                for (size_t t = 0; t < len; ++t) ((uint8_t *)m)[off + t] = u8(b);
            }
        }
    }
}

static int all_finite(const ffwd_real *x, size_t n)
{
    for (size_t i = 0; i < n; ++i)
        if (!isfinite((double)x[i])) return 0;
    return 1;
}

static int all_zero(const ffwd_real *x, size_t n)
{
    for (size_t i = 0; i < n; ++i)
        if (x[i] != 0) return 0;
    return 1;
}

/* the contract of ffwd.h for one call */
static int plausible(const ffwd_model *m);

static void contract(const char *fn, ffwd_status s, int inputs_finite, ffwd_real *const *outs,
                     const size_t *sizes, int nout)
{
    for (int k = 0; k < nout; ++k) {
        /* finite outputs are required of plausible models: ffwd_model_check accepts any
         * finite number, and products of numbers near 1e300 overflow (see findings) */
        if (s == FFWD_OK && g_plausible && !all_finite(outs[k], sizes[k]))
            fail("non-finite output with FFWD_OK", fn, k);
        if (s != FFWD_OK && !all_zero(outs[k], sizes[k])) fail("output not zeroed on error", fn, (int)s);
    }
    if (!inputs_finite && s == FFWD_OK) fail("non-finite input accepted", fn, 0);
}

/* Raw doubles keep NaN and Inf; finite ones are folded into [-1e6, 1e6] unless the
 * environment sets FFWD_FUZZ_HUGE=1 (then any finite double goes in: the core returns
 * FFWD_OK with an overflowed, infinite torque for |qd| ~ 1e306, see
 * fuzz/findings/README.md). */
static int g_huge = -1;

static double fold(double x)
{
    if (g_huge < 0) {
        const char *e = getenv("FFWD_FUZZ_HUGE");
        g_huge = e != NULL && e[0] == '1';
    }
    if (g_huge || !isfinite(x) || fabs(x) <= 1e6) return x;
    return fmod(x, 1e6);
}

/* gravity and every number of the model within physical magnitudes (|x| <= 1e4) */
static int plausible(const ffwd_model *m)
{
    const ffwd_real *x = (const ffwd_real *)(const void *)m->gravity;
    for (int k = 0; k < 3; ++k)
        if (fabs((double)x[k]) > 1e4) return 0;
    for (uint32_t i = 0; i < m->dof; ++i) {
        const ffwd_joint *j = &m->joint[i];
        for (int k = 0; k < 10; ++k)
            if (fabs((double)j->inertia[k]) > 1e4) return 0;
        for (int k = 0; k < 3; ++k)
            if (fabs((double)j->pos[k]) > 1e4) return 0;
        if (fabs((double)j->armature) > 1e4 || fabs((double)j->viscous) > 1e4
            || fabs((double)j->coulomb) > 1e4 || (double)j->coulomb_band < 1e-9)
            return 0;
    }
    return 1;
}

static void fill_state(bytes *b, ffwd_real *x, uint32_t n, double scale, int raw)
{
    for (uint32_t i = 0; i < n; ++i)
        x[i] = (ffwd_real)(raw && (u8(b) & 3u) == 0 ? fold(raw_double(b)) : range(b, -scale, scale));
}

static void poison(ffwd_real *x, size_t n)
{
    for (size_t i = 0; i < n; ++i) x[i] = (ffwd_real)1234.5;
}

static void governor_part(bytes *b, const ffwd_model *m, ffwd_work *w)
{
    static ffwd_governor g;
    static ffwd_gov_output out;
    ffwd_gov_config cfg;
    ffwd_real q[NMAX], dq[NMAX], ddq[NMAX], dddq[NMAX];
    uint32_t n = m->dof, samples, steps;
    ffwd_status s;
    cfg.dt = (ffwd_real)range(b, 1e-4, 0.01);
    cfg.ds = (ffwd_real)range(b, 1e-3, 0.05);
    cfg.horizon = 2u + (uint32_t)(u8(b) % 30u);
    cfg.override_max = (ffwd_real)range(b, 0.1, 2.0);
    cfg.rate_max = (ffwd_real)range(b, 0.1, 20.0);
    cfg.rate_rate_max = (ffwd_real)range(b, 1.0, 500.0);
    cfg.margin = (ffwd_real)range(b, 0.0, 0.45);
    s = ffwd_governor_init(&g, m, w, &cfg);
    if (s != FFWD_OK) return;
    samples = 2u + (uint32_t)(u8(b) % 40u);
    steps = (uint32_t)(u8(b) % 120u);
    for (uint32_t k = 0; k < samples && ffwd_governor_room(&g) > 0; ++k) {
        fill_state(b, q, n, 1.0, 0);
        fill_state(b, dq, n, 1.5, 0);
        fill_state(b, ddq, n, 5.0, 0);
        fill_state(b, dddq, n, 50.0, 0);
        if (k == 0)
            for (uint32_t i = 0; i < n; ++i) dq[i] = ddq[i] = dddq[i] = 0;
        (void)ffwd_governor_push(&g, q, dq, ddq, dddq);
    }
    (void)ffwd_governor_finish(&g);
    for (uint32_t k = 0; k < steps; ++k) {
        ffwd_real cmd = (ffwd_real)range(b, -0.5, 2.5);
        ffwd_real *outs[4] = {out.q, out.qd, out.qdd, out.tau};
        size_t sz[4] = {n, n, n, n};
        s = ffwd_governor_step(&g, cmd, &out);
        contract("ffwd_governor_step", s, 1, outs, sz, 4);
        if (s == FFWD_OK && !(isfinite((double)out.override) && isfinite((double)out.rate)
                              && isfinite((double)out.s)))
            fail("non-finite override", "ffwd_governor_step", 0);
        if (out.flags & FFWD_GOV_DONE) break;
    }
}

static void plant_part(bytes *b, const ffwd_model *m)
{
    static ffwd_plant p;
    ffwd_plant_config cfg;
    ffwd_real q[NMAX], qd[NMAX], tau[NMAX];
    uint32_t n = m->dof, steps;
    if (ffwd_plant_config_default(&cfg, (ffwd_real)range(b, 1e-4, 0.005)) != FFWD_OK) return;
    cfg.integrator = u8(b) & 1u;
    cfg.substeps = 1u + (uint32_t)(u8(b) % 4u);
    cfg.delay = (uint32_t)(u8(b) % 5u);
    cfg.saturate = u8(b) & 1u;
    cfg.noise_q = (ffwd_real)range(b, 0.0, 1e-3);
    fill_state(b, q, n, 2.0, 0);
    if (ffwd_plant_init(&p, m, &cfg, q, NULL) != FFWD_OK) return;
    steps = (uint32_t)(u8(b) % 20u);
    for (uint32_t k = 0; k < steps; ++k) {
        ffwd_status s;
        /* bounded torques: a diverging simulation reaches |q| > 1e19, where the core's
         * sincos converts out of range (undefined behaviour, see findings); one step
         * with a NaN torque checks that it is refused */
        fill_state(b, tau, n, 100.0, 0);
        if (k == 0 && (u8(b) & 1u)) tau[0] = (ffwd_real)NAN;
        s = ffwd_plant_step(&p, tau);
        if (!all_finite(tau, n) && s == FFWD_OK) fail("non-finite torque accepted", "ffwd_plant_step", 0);
        s = ffwd_plant_measure(&p, q, qd);
        if (s == FFWD_OK && !(all_finite(q, n) && all_finite(qd, n)))
            fail("non-finite measurement", "ffwd_plant_measure", 0);
        if (u8(b) == 7u) (void)ffwd_plant_brake(&p, 1);
        /* an explicit integrator with stiff friction on a light link diverges; past
         * |q| = 1e6 stop before the core's sincos meets |q| > 1e19 (see findings) */
        if (s == FFWD_OK && ffwd_plant_state(&p, q, qd) == FFWD_OK)
            for (uint32_t i = 0; i < n; ++i)
                if (fabs((double)q[i]) > 1e6 || fabs((double)qd[i]) > 1e9) return;
    }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static ffwd_model m;
    static ffwd_work w;
    static ffwd_payload_box box;
    static ffwd_real big[NMAX * 13 * NMAX];
    ffwd_real q[NMAX], qd[NMAX], qdd[NMAX], tau[NMAX], a[NMAX], bb[NMAX], c[NMAX], d[NMAX];
    bytes b = {data, size, 0};
    ffwd_status s;
    uint32_t n;
    uint8_t mode;
    int raw, fin;

    build_model(&b, &m);
    s = ffwd_model_check(&m);
    if (ffwd_work_init(&w, &m) != s) fail("work_init disagrees with model_check", "ffwd_work_init", (int)s);
    if (s != FFWD_OK) return 0;
    n = m.dof;
    mode = u8(&b);
    raw = (mode & 1u) != 0;
    fill_state(&b, q, n, 7.0, raw);
    fill_state(&b, qd, n, 6.0, raw);
    fill_state(&b, qdd, n, 40.0, raw);
    fill_state(&b, tau, n, 500.0, raw);
    fin = all_finite(q, n) && all_finite(qd, n) && all_finite(qdd, n);
    g_plausible = plausible(&m);
    g_model = &m;
    g_state[0] = q; g_state[1] = qd; g_state[2] = qdd; g_state[3] = tau;

    if (mode & 2u) { /* run through a payload box */
        ffwd_real com[3], inert[6] = {0, 0, 0, 0, 0, 0};
        ffwd_real pm = (ffwd_real)(raw && (u8(&b) & 7u) == 0 ? fold(raw_double(&b)) : range(&b, 0.0, 25.0));
        for (int k = 0; k < 3; ++k) com[k] = (ffwd_real)range(&b, -0.2, 0.2);
        inert[0] = inert[3] = inert[5] = (ffwd_real)range(&b, 0.0, 0.3);
        if (ffwd_payload_init(&box, &m) != FFWD_OK) fail("payload_init refused a checked model", "ffwd_payload_init", 0);
        (void)ffwd_payload_set(&box, &m, pm, com, inert);
        if (ffwd_work_use_payload(&w, &box) != FFWD_OK) fail("use_payload", "ffwd_work_use_payload", 0);
    }

    {
        ffwd_real *o[1] = {a};
        size_t sz[1] = {n};
        ffwd_real id[NMAX];
        poison(a, n);
        s = ffwd_inverse_dynamics(&m, &w, q, qd, qdd, a);
        contract("ffwd_inverse_dynamics", s, fin, o, sz, 1);
        memcpy(id, a, sizeof id);
        {
            ffwd_real *o4[4] = {a, bb, c, d};
            size_t sz4[4] = {n, n, n, n};
            ffwd_status s2;
            poison(a, n); poison(bb, n); poison(c, n); poison(d, n);
            s2 = ffwd_torque_parts(&m, &w, q, qd, qdd, a, bb, c, d);
            contract("ffwd_torque_parts", s2, fin, o4, sz4, 4);
            /* the sum is compared for plausible models only: a corrupted gravity of
             * 1e303 m/s^2 passes ffwd_model_check and breaks it (see findings) */
            if (s == FFWD_OK && s2 == FFWD_OK && !raw && plausible(&m))
                for (uint32_t i = 0; i < n; ++i) {
                    double sum = (double)a[i] + (double)bb[i] + (double)c[i] + (double)d[i];
                    double scale = 1.0 + fabs((double)a[i]) + fabs((double)bb[i])
                                 + fabs((double)c[i]) + fabs((double)d[i]);
                    double tol = sizeof(ffwd_real) == 8 ? 1e-8 : 1e-3;
                    if (fabs(sum - (double)id[i]) > tol * scale) {
                        fprintf(stderr, "  joint %u: parts %.17g %.17g %.17g %.17g sum %.17g, "
                                "inverse dynamics %.17g\n", (unsigned)i, (double)a[i], (double)bb[i],
                                (double)c[i], (double)d[i], sum, (double)id[i]);
                        fail("torque parts do not sum to the inverse dynamics", "ffwd_torque_parts", (int)i);
                    }
                }
        }
    }
    {
        ffwd_real *o[1] = {a};
        size_t sz[1] = {n};
        int qf = all_finite(q, n);
        poison(a, n);
        s = ffwd_gravity_torque(&m, &w, q, a);
        contract("ffwd_gravity_torque", s, qf, o, sz, 1);
        o[0] = big; sz[0] = (size_t)n * n;
        poison(big, sz[0]);
        s = ffwd_mass_matrix(&m, &w, q, big);
        contract("ffwd_mass_matrix", s, qf, o, sz, 1);
        sz[0] = 16;
        poison(big, 16);
        s = ffwd_tool_pose(&m, &w, q, big);
        contract("ffwd_tool_pose", s, qf, o, sz, 1);
        sz[0] = (size_t)6 * n;
        poison(big, sz[0]);
        s = ffwd_tool_jacobian(&m, &w, q, big);
        contract("ffwd_tool_jacobian", s, qf, o, sz, 1);
        sz[0] = (size_t)13 * n * n;
        poison(big, sz[0]);
        s = ffwd_regressor(&m, &w, q, qd, qdd, big);
        contract("ffwd_regressor", s, fin, o, sz, 1);
        o[0] = a; sz[0] = n;
        poison(a, n);
        s = ffwd_forward_dynamics(&m, &w, q, qd, tau, a);
        contract("ffwd_forward_dynamics", s, qf && all_finite(qd, n) && all_finite(tau, n), o, sz, 1);
    }
    /* bad arguments must be refused, never crash */
    if (ffwd_inverse_dynamics(&m, &w, NULL, qd, qdd, a) == FFWD_OK)
        fail("NULL q accepted", "ffwd_inverse_dynamics", 0);
    if (ffwd_inverse_dynamics(&m, NULL, q, qd, qdd, a) == FFWD_OK)
        fail("NULL work accepted", "ffwd_inverse_dynamics", 0);
    (void)ffwd_status_str((ffwd_status)(mode % 9u));
    if (ffwd_work_use_payload(&w, NULL) != FFWD_OK) fail("use_payload(NULL)", "ffwd_work_use_payload", 0);
    if (!raw && (mode & 4u)) governor_part(&b, &m, &w);
    if (!raw && (mode & 8u)) plant_part(&b, &m);
    return 0;
}

#ifdef FUZZ_REPLAY_MAIN
/* replay: run the harness over the given files (for coverage and plain debugging) */
int main(int argc, char **argv)
{
    static uint8_t buf[1 << 16];
    for (int i = 1; i < argc; ++i) {
        FILE *f = fopen(argv[i], "rb");
        size_t n;
        if (!f) {
            perror(argv[i]);
            return 2;
        }
        n = fread(buf, 1, sizeof buf, f);
        fclose(f);
        (void)LLVMFuzzerTestOneInput(buf, n);
    }
    printf("replayed %d inputs\n", argc - 1);
    return 0;
}
#endif
