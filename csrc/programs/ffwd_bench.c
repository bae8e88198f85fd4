/* ffwd_bench.c - latency harness of the ffwd core (the program ffwd-bench).
 *
 * Times each core function call by call on this CPU and prints percentiles and a
 * histogram (text, or JSON with --json). Models:
 *   - built-in random serial chains of any size 1..FFWD_MAX_DOF (--dof N or --sizes
 *     1,2,6,...): revolute joints about z, random fixed transforms (offsets 5-40 cm),
 *     masses 0.5-8 kg, centres of mass within 15 cm, valid inertias, drive friction;
 *   - a model exported as C (ffwd export, or ffwd/export.py): build this file with
 *     -DFFWD_BENCH_EXTERNAL and a C file defining
 *         const ffwd_model *ffwd_bench_external_model(void);
 *     then --model selects it (it is the default in such a build);
 *   - with -DFFWD_BENCH_SYMBOLIC, a generated symbolic inverse dynamics of the same
 *     external model (bench/symbolic/), void ffwd_sym_id(q, qd, qdd, tau), is timed as
 *     the function "symbolic" in the same run, interleaved with ffwd's.
 *
 * Inputs cycle through a pool of random states (q in [-pi, pi], qd in [-2, 2],
 * qdd in [-10, 10], tau in [-50, 50]); each call is timed with CLOCK_MONOTONIC and the
 * median cost of an empty timed region (timer_ns) is subtracted from every sample.
 * --calls-only runs the calls without timing (for callgrind instruction counts).
 * This program may use stdio and the heap; the core it measures does not.
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "ffwd.h"
#include "model_build.h"

#ifdef FFWD_BENCH_EXTERNAL
const ffwd_model *ffwd_bench_external_model(void);
#endif
#ifdef FFWD_BENCH_SYMBOLIC
void ffwd_sym_id(const double *q, const double *qd, const double *qdd, double *tau);
#endif

#define POOL 1024u
#define N FFWD_MAX_DOF
#define MAX_FUNCS 10

/* ---- random numbers (xorshift64*) and random chains -------------------------------- */

static double uniform(uint64_t *s, double lo, double hi)
{
    *s ^= *s >> 12;
    *s ^= *s << 25;
    *s ^= *s >> 27;
    uint64_t r = *s * 2685821657736338717ull;
    return lo + (hi - lo) * ((double)(r >> 11) * (1.0 / 9007199254740992.0));
}

static void random_chain(ffwd_model *m, uint32_t dof, uint64_t seed)
{
    uint64_t s = seed * 0x9E3779B97F4A7C15ull + 1u;
    memset(m, 0, sizeof *m);
    m->dof = dof;
    m->gravity[2] = (ffwd_real)-9.81;
    for (uint32_t i = 0; i < dof; ++i) {
        ffwd_joint *j = &m->joint[i];
        double R[9], t[3], n = 0.0, len, mass, c[3], d[3], Q[9];
        j->type = FFWD_REVOLUTE;
        j->parent = (int32_t)i - 1;
        mb_rpy(uniform(&s, -3.14159, 3.14159), uniform(&s, -3.14159, 3.14159),
                   uniform(&s, -3.14159, 3.14159), R);
        for (int k = 0; k < 3; ++k) {
            t[k] = uniform(&s, -1.0, 1.0);
            n += t[k] * t[k];
        }
        len = uniform(&s, 0.05, 0.4) / sqrt(n > 1e-12 ? n : 1e-12);
        for (int k = 0; k < 9; ++k) j->rot[k] = (ffwd_real)R[k];
        for (int k = 0; k < 3; ++k) j->pos[k] = (ffwd_real)(t[k] * len);
        j->axis[2] = 1;
        mass = uniform(&s, 0.5, 8.0);
        for (int k = 0; k < 3; ++k) c[k] = uniform(&s, -0.15, 0.15);
        /* principal moments obeying the triangle inequality, in a random rotation */
        d[0] = uniform(&s, 0.01, 0.1) * mass;
        d[1] = uniform(&s, 0.01, 0.1) * mass;
        {   /* |d0 - d1| < d2 < d0 + d1 */
            double lo = fabs(d[0] - d[1]), hi = d[0] + d[1];
            d[2] = lo + (hi - lo) * uniform(&s, 0.1, 0.9);
        }
        mb_rpy(uniform(&s, -3.0, 3.0), uniform(&s, -1.5, 1.5), uniform(&s, -3.0, 3.0), Q);
        mb_link_inertia(j, mass, c, d, Q);
        j->armature = (ffwd_real)uniform(&s, 0.05, 1.0);
        j->viscous = (ffwd_real)uniform(&s, 0.1, 2.0);
        j->coulomb = (ffwd_real)uniform(&s, 0.5, 5.0);
        j->coulomb_band = (ffwd_real)0.02;
        j->has_limits = FFWD_LIM_POSITION | FFWD_LIM_VELOCITY | FFWD_LIM_ACCELERATION
                      | FFWD_LIM_JERK | FFWD_LIM_TORQUE;
        j->q_min = (ffwd_real)-3.0;
        j->q_max = (ffwd_real)3.0;
        j->v_max = (ffwd_real)3.0;
        j->a_max = (ffwd_real)15.0;
        j->j_max = (ffwd_real)200.0;
        j->tau_max = (ffwd_real)400.0;
    }
    m->tool_parent = (int32_t)dof - 1;
    m->tool_rot[0] = m->tool_rot[4] = m->tool_rot[8] = 1;
    m->tool_pos[2] = (ffwd_real)0.1;
}

/* ---- the functions under test --------------------------------------------------------- */

typedef struct state {
    ffwd_real q[POOL][N], qd[POOL][N], qdd[POOL][N], tau[POOL][N];
} state;

typedef struct outputs {
    ffwd_real a[N], b[N], c[N], d[N];
    ffwd_real big[N * 13 * N];
    double sym[N];
} outputs;

enum { F_ID, F_GRAV, F_PARTS, F_MASS, F_FD, F_POSE, F_JAC, F_REG, F_SYM, F_COUNT };
static const char *const func_names[F_COUNT] = {
    "inverse_dynamics", "gravity", "torque_parts", "mass_matrix", "forward_dynamics",
    "tool_pose", "tool_jacobian", "regressor", "symbolic"
};

/* one call of function f on state k; the return value is the status */
static ffwd_status call(int f, const ffwd_model *m, ffwd_work *w, const state *st, uint32_t k,
                        outputs *o)
{
    switch (f) {
    case F_ID: return ffwd_inverse_dynamics(m, w, st->q[k], st->qd[k], st->qdd[k], o->a);
    case F_GRAV: return ffwd_gravity_torque(m, w, st->q[k], o->a);
    case F_PARTS: return ffwd_torque_parts(m, w, st->q[k], st->qd[k], st->qdd[k], o->a, o->b, o->c, o->d);
    case F_MASS: return ffwd_mass_matrix(m, w, st->q[k], o->big);
    case F_FD: return ffwd_forward_dynamics(m, w, st->q[k], st->qd[k], st->tau[k], o->a);
    case F_POSE: return ffwd_tool_pose(m, w, st->q[k], o->big);
    case F_JAC: return ffwd_tool_jacobian(m, w, st->q[k], o->big);
    case F_REG: return ffwd_regressor(m, w, st->q[k], st->qd[k], st->qdd[k], o->big);
#ifdef FFWD_BENCH_SYMBOLIC
    case F_SYM: {
        double q[N], qd[N], qdd[N];
        for (uint32_t i = 0; i < m->dof; ++i) {
            q[i] = (double)st->q[k][i];
            qd[i] = (double)st->qd[k][i];
            qdd[i] = (double)st->qdd[k][i];
        }
        ffwd_sym_id(q, qd, qdd, o->sym);
        return FFWD_OK;
    }
#endif
    default: return FFWD_E_ARG;
    }
}

static void fill_states(state *st, uint32_t dof, uint64_t seed)
{
    uint64_t s = seed * 0xD1B54A32D192ED03ull + 7u;
    for (uint32_t k = 0; k < POOL; ++k)
        for (uint32_t i = 0; i < dof; ++i) {
            st->q[k][i] = (ffwd_real)uniform(&s, -3.14159, 3.14159);
            st->qd[k][i] = (ffwd_real)uniform(&s, -2.0, 2.0);
            st->qdd[k][i] = (ffwd_real)uniform(&s, -10.0, 10.0);
            st->tau[k][i] = (ffwd_real)uniform(&s, -50.0, 50.0);
        }
}

/* ---- timing ------------------------------------------------------------------------------ */

static uint64_t now_ns(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (uint64_t)ts.tv_sec * 1000000000ull + (uint64_t)ts.tv_nsec;
}

static int cmp_u64(const void *a, const void *b)
{
    uint64_t x = *(const uint64_t *)a, y = *(const uint64_t *)b;
    return (x > y) - (x < y);
}

static uint64_t pct(const uint64_t *sorted, size_t n, double p)
{
    size_t i = (size_t)(p * (double)(n - 1) + 0.5);
    return sorted[i < n ? i : n - 1];
}

#define BINS 40

typedef struct result {
    int func;
    uint32_t dof;
    size_t n;
    int status;
    double mean_ns, min_ns, median_ns, p90_ns, p99_ns, p999_ns, max_ns, batch_ns;
    double edge_lo, edge_hi;
    size_t counts[BINS], over;
} result;

static uint64_t timer_overhead(void)
{
    enum { K = 20001 };
    static uint64_t t[K];
    for (int i = 0; i < K; ++i) {
        uint64_t a = now_ns();
        uint64_t b = now_ns();
        t[i] = b - a;
    }
    qsort(t, K, sizeof t[0], cmp_u64);
    return t[K / 2];
}

/* Times `iters` calls of every function f with on[f], in rounds of CHUNK calls that
 * alternate between the functions, so slow drifts of a shared machine hit them alike
 * (this matters for ratios such as ffwd over symbolic). */
#define CHUNK 1000u

static void measure_all(result *res, const int *on, const ffwd_model *m, ffwd_work *w,
                        const state *st, outputs *o, size_t iters, size_t warm, uint64_t tov,
                        uint64_t **buf)
{
    uint64_t sums[F_COUNT] = {0}, block[F_COUNT] = {0};
    for (int f = 0; f < F_COUNT; ++f) {
        if (!on[f]) continue;
        memset(&res[f], 0, sizeof res[f]);
        res[f].func = f;
        res[f].dof = m->dof;
        res[f].n = iters;
        res[f].status = (int)call(f, m, w, st, 0, o);
        for (size_t i = 0; i < warm; ++i) (void)call(f, m, w, st, (uint32_t)(i % POOL), o);
    }
    for (size_t start = 0; start < iters; start += CHUNK) {
        size_t end = start + CHUNK < iters ? start + CHUNK : iters;
        for (int f = 0; f < F_COUNT; ++f) {
            uint64_t t0;
            if (!on[f]) continue;
            for (size_t i = start; i < end; ++i) {
                uint32_t k = (uint32_t)(i % POOL);
                uint64_t a = now_ns();
                (void)call(f, m, w, st, k, o);
                uint64_t b = now_ns();
                uint64_t d = b - a;
                buf[f][i] = d > tov ? d - tov : 0;
                sums[f] += buf[f][i];
            }
            /* the same calls timed as one block: no per-call timer cost */
            t0 = now_ns();
            for (size_t i = start; i < end; ++i) (void)call(f, m, w, st, (uint32_t)(i % POOL), o);
            block[f] += now_ns() - t0;
        }
    }
    for (int f = 0; f < F_COUNT; ++f) {
        result *r = &res[f];
        uint64_t *b = buf[f];
        if (!on[f]) continue;
        qsort(b, iters, sizeof b[0], cmp_u64);
        r->batch_ns = (double)block[f] / (double)iters;
        r->mean_ns = (double)sums[f] / (double)iters;
        r->min_ns = (double)b[0];
        r->median_ns = (double)pct(b, iters, 0.5);
        r->p90_ns = (double)pct(b, iters, 0.9);
        r->p99_ns = (double)pct(b, iters, 0.99);
        r->p999_ns = (double)pct(b, iters, 0.999);
        r->max_ns = (double)b[iters - 1];
        r->edge_lo = r->min_ns;
        r->edge_hi = r->p999_ns > r->min_ns ? r->p999_ns : r->min_ns + 1.0;
        for (size_t i = 0; i < iters; ++i) {
            double x = (double)b[i];
            if (x > r->edge_hi) {
                r->over++;
                continue;
            }
            size_t k = (size_t)((x - r->edge_lo) / (r->edge_hi - r->edge_lo) * BINS);
            r->counts[k < BINS ? k : BINS - 1]++;
        }
    }
}

/* ---- output ------------------------------------------------------------------------------- */

static void print_text(const result *r)
{
    size_t peak = 1;
    printf("%-17s dof %2u  median %9.1f ns  p99 %9.1f  p99.9 %9.1f  max %9.1f  mean %9.1f  "
           "block %9.1f ns/call%s\n", func_names[r->func], (unsigned)r->dof, r->median_ns,
           r->p99_ns, r->p999_ns, r->max_ns, r->mean_ns, r->batch_ns,
           r->status ? "  (status not OK!)" : "");
    for (int b = 0; b < BINS; ++b)
        if (r->counts[b] > peak) peak = r->counts[b];
    for (int b = 0; b < BINS; b += 4) {
        size_t c = 0;
        for (int k = b; k < b + 4 && k < BINS; ++k) c += r->counts[k];
        double lo = r->edge_lo + (r->edge_hi - r->edge_lo) * b / BINS;
        int bar = (int)(50.0 * (double)c / (double)r->n * 2.0);
        printf("    %9.1f ns |%-50.*s| %zu\n", lo, bar > 50 ? 50 : bar,
               "##################################################", c);
    }
    printf("    > %7.1f ns  %zu\n", r->edge_hi, r->over);
}

static void print_json(const result *r, int last)
{
    printf("    {\"function\": \"%s\", \"dof\": %u, \"iterations\": %zu, \"status\": %d, "
           "\"median_ns\": %.1f, \"mean_ns\": %.1f, \"min_ns\": %.1f, \"p90_ns\": %.1f, "
           "\"p99_ns\": %.1f, \"p999_ns\": %.1f, \"max_ns\": %.1f, \"block_ns\": %.2f,\n"
           "     \"histogram\": {\"lo_ns\": %.1f, \"hi_ns\": %.1f, \"counts\": [",
           func_names[r->func], (unsigned)r->dof, r->n, r->status, r->median_ns, r->mean_ns,
           r->min_ns, r->p90_ns, r->p99_ns, r->p999_ns, r->max_ns, r->batch_ns, r->edge_lo,
           r->edge_hi);
    for (int b = 0; b < BINS; ++b) printf("%s%zu", b ? ", " : "", r->counts[b]);
    printf("], \"over\": %zu}}%s\n", r->over, last ? "" : ",");
}

static void usage(void)
{
    puts("usage: ffwd-bench [--dof N | --sizes N,N,... | --model] [--functions LIST]\n"
         "                  [--iterations N] [--warmup N] [--seed S] [--json] [--calls-only]\n"
         "                  [--check]\n"
         "Times ffwd core functions call by call and prints median, p99, p99.9, max and a\n"
         "histogram (JSON with --json). LIST: all or a comma list of inverse_dynamics,\n"
         "gravity, torque_parts, mass_matrix, forward_dynamics, tool_pose, tool_jacobian,\n"
         "regressor, symbolic (symbolic needs a build with -DFFWD_BENCH_SYMBOLIC).\n"
         "--dof N: a built-in random chain of N joints; --sizes: several; --model: the\n"
         "model compiled in with -DFFWD_BENCH_EXTERNAL. --calls-only: no timing (for\n"
         "callgrind). --check: compare the symbolic torques with ffwd's and exit.");
}

static int parse_funcs(const char *s, int *on)
{
    char buf[512];
    size_t len = strlen(s);
    if (len >= sizeof buf) return -1;
    memcpy(buf, s, len + 1);
    for (int f = 0; f < F_COUNT; ++f) on[f] = 0;
    for (char *tok = strtok(buf, ","); tok; tok = strtok(NULL, ",")) {
        int found = 0;
        if (strcmp(tok, "all") == 0) {
            for (int f = 0; f < F_SYM; ++f) on[f] = 1;
#ifdef FFWD_BENCH_SYMBOLIC
            on[F_SYM] = 1;
#endif
            continue;
        }
        for (int f = 0; f < F_COUNT; ++f)
            if (strcmp(tok, func_names[f]) == 0) on[f] = found = 1;
        if (!found) {
            fprintf(stderr, "ffwd-bench: unknown function '%s'\n", tok);
            return -1;
        }
    }
#ifndef FFWD_BENCH_SYMBOLIC
    if (on[F_SYM]) {
        fprintf(stderr, "ffwd-bench: 'symbolic' needs a build with -DFFWD_BENCH_SYMBOLIC\n");
        return -1;
    }
#endif
    return 0;
}

static int parse_sizes(const char *s, uint32_t *sizes, int max)
{
    int n = 0;
    const char *p = s;
    while (*p && n < max) {
        char *end;
        long v = strtol(p, &end, 10);
        if (end == p || v < 1 || v > FFWD_MAX_DOF) {
            fprintf(stderr, "ffwd-bench: sizes must be 1..%d, got '%s'\n", FFWD_MAX_DOF, p);
            return -1;
        }
        sizes[n++] = (uint32_t)v;
        p = *end == ',' ? end + 1 : end;
        if (*end && *end != ',') return -1;
    }
    return n;
}

int main(int argc, char **argv)
{
    static state st;
    static outputs out;
    static ffwd_model model;
    static ffwd_work work;
    uint32_t sizes[64];
    int nsizes = 0, json = 0, calls_only = 0, check = 0, use_model = 0, on[F_COUNT];
    size_t iters = 100000, warm = 10000;
    uint64_t seed = 1;
    const ffwd_model *m = &model;
    uint64_t *buf[F_COUNT], tov = 0;
    int nres = 0, any_fail = 0;
    result *res;

    parse_funcs("inverse_dynamics", on);
#ifdef FFWD_BENCH_EXTERNAL
    use_model = 1;
#endif
    for (int i = 1; i < argc; ++i) {
        const char *a = argv[i], *v = i + 1 < argc ? argv[i + 1] : NULL;
        if (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0) {
            usage();
            return 0;
        } else if (strcmp(a, "--json") == 0) {
            json = 1;
        } else if (strcmp(a, "--calls-only") == 0) {
            calls_only = 1;
        } else if (strcmp(a, "--check") == 0) {
            check = 1;
        } else if (strcmp(a, "--model") == 0) {
#ifndef FFWD_BENCH_EXTERNAL
            fprintf(stderr, "ffwd-bench: --model needs a build with -DFFWD_BENCH_EXTERNAL "
                            "(see docs/bench.md)\n");
            return 2;
#else
            use_model = 1;
#endif
        } else if (v && strcmp(a, "--dof") == 0) {
            nsizes = parse_sizes(v, sizes, 1);
            use_model = 0;
            ++i;
        } else if (v && strcmp(a, "--sizes") == 0) {
            nsizes = parse_sizes(v, sizes, 64);
            use_model = 0;
            ++i;
        } else if (v && strcmp(a, "--functions") == 0) {
            if (parse_funcs(v, on)) return 2;
            ++i;
        } else if (v && strcmp(a, "--iterations") == 0) {
            iters = (size_t)strtoull(v, NULL, 10);
            ++i;
        } else if (v && strcmp(a, "--warmup") == 0) {
            warm = (size_t)strtoull(v, NULL, 10);
            ++i;
        } else if (v && strcmp(a, "--seed") == 0) {
            seed = (uint64_t)strtoull(v, NULL, 10);
            ++i;
        } else {
            fprintf(stderr, "ffwd-bench: unknown or incomplete option '%s' (--help)\n", a);
            return 2;
        }
    }
    if (nsizes < 0) return 2;
    if (iters < 1) iters = 1;
    if (!use_model && nsizes == 0) {
        sizes[0] = 6 <= FFWD_MAX_DOF ? 6 : FFWD_MAX_DOF;
        nsizes = 1;
    }
    if (use_model) nsizes = 1;
    if (on[F_SYM] && !use_model) {
        fprintf(stderr, "ffwd-bench: 'symbolic' belongs to the compiled-in model (--model)\n");
        return 2;
    }

    res = calloc((size_t)nsizes * F_COUNT, sizeof *res);
    for (int f = 0; f < F_COUNT; ++f) {
        buf[f] = on[f] ? calloc(iters, sizeof(uint64_t)) : NULL;
        if (on[f] && !buf[f]) res = NULL;
    }
    if (!res) {
        fprintf(stderr, "ffwd-bench: out of memory for %zu iterations\n", iters);
        return 2;
    }
    if (!calls_only) tov = timer_overhead();

    for (int s = 0; s < nsizes; ++s) {
        ffwd_status rc;
#ifdef FFWD_BENCH_EXTERNAL
        if (use_model) m = ffwd_bench_external_model();
#endif
        if (!use_model) {
            random_chain(&model, sizes[s], seed + sizes[s]);
            m = &model;
        }
        rc = ffwd_work_init(&work, m);
        if (rc != FFWD_OK) {
            fprintf(stderr, "ffwd-bench: model of %u joints rejected: %s\n", (unsigned)m->dof,
                    ffwd_status_str(rc));
            return 2;
        }
        fill_states(&st, m->dof, seed);
        if (check) {
#ifdef FFWD_BENCH_SYMBOLIC
            double worst = 0.0, scale = 0.0;
            for (uint32_t k = 0; k < POOL; ++k) {
                (void)call(F_ID, m, &work, &st, k, &out);
                (void)call(F_SYM, m, &work, &st, k, &out);
                for (uint32_t i = 0; i < m->dof; ++i) {
                    double d = fabs((double)out.a[i] - out.sym[i]);
                    if (d > worst) worst = d;
                    if (fabs(out.sym[i]) > scale) scale = fabs(out.sym[i]);
                }
            }
            printf("{\"check\": \"symbolic\", \"states\": %u, \"max_abs_diff\": %.3e, "
                   "\"max_abs_tau\": %.3e}\n", POOL, worst, scale);
            return worst <= 1e-9 * (1.0 + scale) ? 0 : 1;
#else
            fprintf(stderr, "ffwd-bench: --check needs a build with -DFFWD_BENCH_SYMBOLIC\n");
            return 2;
#endif
        }
        if (calls_only) {
            for (int f = 0; f < F_COUNT; ++f) {
                if (!on[f]) continue;
                for (size_t i = 0; i < iters; ++i)
                    if (call(f, m, &work, &st, (uint32_t)(i % POOL), &out) != FFWD_OK) any_fail = 1;
            }
            continue;
        }
        {
            result *r = &res[nres];
            measure_all(r, on, m, &work, &st, &out, iters, warm, tov, buf);
            /* pack the functions that ran next to each other */
            for (int f = 0; f < F_COUNT; ++f) {
                if (!on[f]) continue;
                if (r[f].status) any_fail = 1;
                res[nres++] = r[f];
            }
        }
    }
    if (calls_only) {
        printf("calls done%s\n", any_fail ? " (some status not OK)" : "");
        return any_fail;
    }

    if (json) {
        printf("{\n  \"program\": \"ffwd-bench\", \"max_dof\": %d, \"real_bytes\": %u, "
               "\"timer_ns\": %llu, \"model\": \"%s\", \"warmup\": %zu,\n  \"results\": [\n",
               FFWD_MAX_DOF, (unsigned)sizeof(ffwd_real), (unsigned long long)tov,
               use_model ? "compiled-in" : "random-chain", warm);
        for (int i = 0; i < nres; ++i) print_json(&res[i], i == nres - 1);
        printf("  ]\n}\n");
    } else {
        printf("ffwd-bench: FFWD_MAX_DOF %d, %s precision, timer cost %llu ns subtracted, "
               "%zu calls after %zu warm-up\n", FFWD_MAX_DOF,
               sizeof(ffwd_real) == 8 ? "double" : "single", (unsigned long long)tov, iters, warm);
        for (int i = 0; i < nres; ++i) print_text(&res[i]);
    }
    for (int f = 0; f < F_COUNT; ++f) free(buf[f]);
    free(res);
    return any_fail;
}
