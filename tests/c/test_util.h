/* test_util.h - helpers shared by the C test programs: random models, checks, counters. */
#ifndef FFWD_TEST_UTIL_H
#define FFWD_TEST_UTIL_H

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "ffwd.h"

static int g_checks = 0, g_fail = 0;

#define CHECK(cond, ...) do { g_checks++; if (!(cond)) { g_fail++; \
    fprintf(stderr, "FAIL %s:%d: ", __FILE__, __LINE__); fprintf(stderr, __VA_ARGS__); \
    fprintf(stderr, "\n"); } } while (0)

#ifdef FFWD_SINGLE
#define TOL_REL 2e-3
#else
#define TOL_REL 1e-9
#endif

/* small deterministic generator (xorshift64*) */
static uint64_t g_rng = 0x9e3779b97f4a7c15ull;
static inline double urand(void)
{
    g_rng ^= g_rng >> 12; g_rng ^= g_rng << 25; g_rng ^= g_rng >> 27;
    return (double)((g_rng * 2685821657736338717ull) >> 11) * (1.0 / 9007199254740992.0);
}
static inline double srand1(double a) { return a * (2.0 * urand() - 1.0); }

/* random rotation, row-major, from a normalized random quaternion */
static inline void rand_rot(double R[9])
{
    double w = srand1(1), x = srand1(1), y = srand1(1), z = srand1(1);
    double n = sqrt(w * w + x * x + y * y + z * z);
    w /= n; x /= n; y /= n; z /= n;
    R[0] = 1 - 2 * (y * y + z * z); R[1] = 2 * (x * y - w * z); R[2] = 2 * (x * z + w * y);
    R[3] = 2 * (x * y + w * z); R[4] = 1 - 2 * (x * x + z * z); R[5] = 2 * (y * z - w * x);
    R[6] = 2 * (x * z - w * y); R[7] = 2 * (y * z + w * x); R[8] = 1 - 2 * (x * x + y * y);
}

/* 10 parameters about the frame origin from mass, COM and inertia about the COM (3x3) */
static inline void params_from(double mass, const double c[3], const double Ic[9], ffwd_real th[10])
{
    double cc = c[0] * c[0] + c[1] * c[1] + c[2] * c[2];
    th[0] = (ffwd_real)mass;
    th[1] = (ffwd_real)(mass * c[0]); th[2] = (ffwd_real)(mass * c[1]); th[3] = (ffwd_real)(mass * c[2]);
    th[4] = (ffwd_real)(Ic[0] + mass * (cc - c[0] * c[0]));
    th[5] = (ffwd_real)(Ic[1] - mass * c[0] * c[1]);
    th[6] = (ffwd_real)(Ic[2] - mass * c[0] * c[2]);
    th[7] = (ffwd_real)(Ic[4] + mass * (cc - c[1] * c[1]));
    th[8] = (ffwd_real)(Ic[5] - mass * c[1] * c[2]);
    th[9] = (ffwd_real)(Ic[8] + mass * (cc - c[2] * c[2]));
}

/* random physically valid body: Ic = tr(S) 1 - S with S = Q diag(s) Q^T, s > 0 */
static inline void rand_body(ffwd_real th[10])
{
    double s[3], Q[9], S[9], Ic[9], c[3], tr;
    int i, j, k;
    for (i = 0; i < 3; i++) { s[i] = 0.005 + 0.05 * urand(); c[i] = srand1(0.2); }
    rand_rot(Q);
    for (i = 0; i < 3; i++)
        for (j = 0; j < 3; j++) {
            S[3 * i + j] = 0;
            for (k = 0; k < 3; k++) S[3 * i + j] += Q[3 * i + k] * s[k] * Q[3 * j + k];
        }
    tr = S[0] + S[4] + S[8];
    for (i = 0; i < 9; i++) Ic[i] = -S[i];
    Ic[0] += tr; Ic[4] += tr; Ic[8] += tr;
    params_from(0.5 + 2.5 * urand(), c, Ic, th);
}

/* random model with n joints; tree = 1 gives random parents, else a chain */
static inline void rand_model(ffwd_model *m, uint32_t n, int tree, int allow_prismatic)
{
    uint32_t i;
    int k;
    double R[9], a[3], na;
    memset(m, 0, sizeof *m);
    m->dof = n;
    m->gravity[0] = (ffwd_real)0.3; m->gravity[1] = (ffwd_real)-0.2; m->gravity[2] = (ffwd_real)-9.81;
    for (i = 0; i < n; i++) {
        ffwd_joint *J = &m->joint[i];
        J->type = (allow_prismatic && urand() < 0.3) ? FFWD_PRISMATIC : FFWD_REVOLUTE;
        J->parent = tree && i > 0 ? (int32_t)(urand() * i) : (int32_t)i - 1;
        rand_rot(R);
        for (k = 0; k < 9; k++) J->rot[k] = (ffwd_real)R[k];
        for (k = 0; k < 3; k++) { J->pos[k] = (ffwd_real)srand1(0.4); a[k] = srand1(1); }
        na = sqrt(a[0] * a[0] + a[1] * a[1] + a[2] * a[2]);
        for (k = 0; k < 3; k++) J->axis[k] = (ffwd_real)(a[k] / na);
        rand_body(J->inertia);
        J->armature = (ffwd_real)(0.1 * urand());
        J->viscous = (ffwd_real)(0.5 * urand());
        J->coulomb = (ffwd_real)(2.0 * urand());
        J->coulomb_band = (ffwd_real)(0.01 + 0.1 * urand());
    }
    m->tool_parent = (int32_t)n - 1;
    rand_rot(R);
    for (k = 0; k < 9; k++) m->tool_rot[k] = (ffwd_real)R[k];
    for (k = 0; k < 3; k++) m->tool_pos[k] = (ffwd_real)srand1(0.1);
}

static inline double max_abs(const ffwd_real *x, uint32_t n)
{
    double r = 0;
    uint32_t i;
    for (i = 0; i < n; i++) if (fabs((double)x[i]) > r) r = fabs((double)x[i]);
    return r;
}

static inline double max_diff(const ffwd_real *x, const ffwd_real *y, uint32_t n)
{
    double r = 0;
    uint32_t i;
    for (i = 0; i < n; i++) if (fabs((double)x[i] - (double)y[i]) > r) r = fabs((double)x[i] - (double)y[i]);
    return r;
}

static inline int all_zero(const ffwd_real *x, uint32_t n)
{
    uint32_t i;
    for (i = 0; i < n; i++) if (x[i] != 0) return 0;
    return 1;
}

static inline int finish(const char *name)
{
    if (g_fail) {
        fprintf(stderr, "%s: %d of %d checks failed\n", name, g_fail, g_checks);
        return 1;
    }
    printf("%s: %d checks passed\n", name, g_checks);
    return 0;
}

#endif
