/* test_governor.c - the override governor (ffwd_governor.h) through its public API:
 * configuration and argument errors, missing limits, push errors (full window, after
 * finish, non-finite, position limit, a sample the robot cannot hold), step errors,
 * override commands 1 -> 0 -> 1 and above the maximum, starvation, the end at rest,
 * capping, joint jerk limits present and absent, and closed runs in which torque,
 * velocity and acceleration are recomputed from the commanded state with
 * ffwd_inverse_dynamics and checked against the limits.
 *
 * Path per joint (rest to rest over T seconds of nominal time, chosen here):
 *   q(s) = q0 + A (s/T - sin(w s)/(2 pi)) + B (1 - cos(2 w s)),  w = 2 pi / T,
 * with its derivatives in closed form (q' = 0 at both ends).
 * Limits are set from that path so that some bind at override 1. Expected values are
 * the header's guarantees; no number comes from outside the project. */
#include "test_util.h"

#define PI 3.14159265358979323846
#define T_PATH 1.0
#define DS 0.01
#define NSAMP 101           /* samples 0 .. T_PATH at DS */
#define DT 1e-3
#define MAX_CYCLES 40000
#ifdef FFWD_SINGLE
#define REST_EPS 1e-6
#define S_TOL 1e-6
#else
#define REST_EPS 1e-12
#define S_TOL 1e-12
#endif
#ifdef FFWD_SINGLE
#define FFWD_REAL_MAX_TEST 3.0e38
#else
#define FFWD_REAL_MAX_TEST 1.7e308
#endif

static ffwd_model g_m;
static ffwd_work g_w;
static ffwd_governor g_g, g_copy;
static double g_A[FFWD_MAX_DOF], g_B[FFWD_MAX_DOF], g_q0[FFWD_MAX_DOF];
static double g_jmax[FFWD_MAX_DOF];   /* the jerk limits, also when not set in the model */

static void path_at(double s, ffwd_real *q, ffwd_real *dq, ffwd_real *ddq, ffwd_real *dddq)
{
    const double w = 2 * PI / T_PATH;
    uint32_t j;
    for (j = 0; j < g_m.dof; j++) {
        double a = g_A[j] / T_PATH, b = g_B[j];
        q[j] = (ffwd_real)(g_q0[j] + g_A[j] * (s / T_PATH - sin(w * s) / (2 * PI)) + b * (1 - cos(2 * w * s)));
        dq[j] = (ffwd_real)(a * (1 - cos(w * s)) + 2 * w * b * sin(2 * w * s));
        ddq[j] = (ffwd_real)(a * w * sin(w * s) + 4 * w * w * b * cos(2 * w * s));
        dddq[j] = (ffwd_real)(a * w * w * cos(w * s) - 8 * w * w * w * b * sin(2 * w * s));
    }
}

static ffwd_status push_sample(ffwd_governor *g, int k)
{
    ffwd_real q[FFWD_MAX_DOF], dq[FFWD_MAX_DOF], ddq[FFWD_MAX_DOF], dddq[FFWD_MAX_DOF];
    path_at(k * DS, q, dq, ddq, dddq);
    return ffwd_governor_push(g, q, dq, ddq, dddq);
}

/* A random 3-joint arm with a path, and limits from the path: torque above what holding
 * still needs everywhere but below the nominal torque peak, velocity and acceleration
 * below their nominal peaks (so override 1 is capped), position limits around the path,
 * jerk limits when `jerk` is set. */
static void setup(uint64_t seed, int jerk)
{
    ffwd_real q[FFWD_MAX_DOF], dq[FFWD_MAX_DOF], ddq[FFWD_MAX_DOF], dddq[FFWD_MAX_DOF];
    ffwd_real tau[FFWD_MAX_DOF], grav[FFWD_MAX_DOF];
    double gmax[FFWD_MAX_DOF] = {0}, tmax[FFWD_MAX_DOF] = {0}, vmax[FFWD_MAX_DOF] = {0};
    double amax[FFWD_MAX_DOF] = {0}, jmax[FFWD_MAX_DOF] = {0};
    uint32_t j, n;
    int k;
    g_rng = seed * 0x9E3779B97F4A7C15ull + 1u;
    rand_model(&g_m, 3, 0, 0);
    n = g_m.dof;
    for (j = 0; j < n; j++) {
        g_A[j] = (urand() < 0.5 ? -1 : 1) * (0.4 + 0.8 * urand());
        g_B[j] = srand1(0.03);
        g_q0[j] = srand1(1.0);
    }
    CHECK(ffwd_work_init(&g_w, &g_m) == FFWD_OK, "work init");
    for (k = 0; k < NSAMP; k++) {
        path_at(k * DS, q, dq, ddq, dddq);
        ffwd_inverse_dynamics(&g_m, &g_w, q, dq, ddq, tau);
        ffwd_gravity_torque(&g_m, &g_w, q, grav);
        for (j = 0; j < n; j++) {
            /* holding still costs gravity plus at most the Coulomb friction */
            double hold = fabs((double)grav[j]) + (double)g_m.joint[j].coulomb;
            if (hold > gmax[j]) gmax[j] = hold;
            if (fabs((double)tau[j]) > tmax[j]) tmax[j] = fabs((double)tau[j]);
            if (fabs((double)dq[j]) > vmax[j]) vmax[j] = fabs((double)dq[j]);
            if (fabs((double)ddq[j]) > amax[j]) amax[j] = fabs((double)ddq[j]);
            if (fabs((double)dddq[j]) > jmax[j]) jmax[j] = fabs((double)dddq[j]);
        }
    }
    for (j = 0; j < n; j++) {
        ffwd_joint *J = &g_m.joint[j];
        double lo = g_q0[j] < g_q0[j] + g_A[j] ? g_q0[j] : g_q0[j] + g_A[j];
        J->has_limits = FFWD_LIM_TORQUE | FFWD_LIM_VELOCITY | FFWD_LIM_ACCELERATION | FFWD_LIM_POSITION;
        J->tau_max = (ffwd_real)(1.5 * gmax[j] + 0.8 * tmax[j] + 0.5);
        J->v_max = (ffwd_real)(0.7 * vmax[j]);
        J->a_max = (ffwd_real)(0.9 * amax[j]);
        J->q_min = (ffwd_real)(lo - 0.2);
        J->q_max = (ffwd_real)(lo + fabs(g_A[j]) + 0.2);
        g_jmax[j] = 0.5 * jmax[j];
        if (jerk) {
            J->has_limits |= FFWD_LIM_JERK;
            J->j_max = (ffwd_real)g_jmax[j];
        }
    }
    CHECK(ffwd_model_check(&g_m) == FFWD_OK, "model with limits");
    CHECK(ffwd_work_init(&g_w, &g_m) == FFWD_OK, "work init");
}

static ffwd_gov_config default_cfg(void)
{
    ffwd_gov_config c;
    memset(&c, 0, sizeof c);
    c.dt = (ffwd_real)DT;
    c.ds = (ffwd_real)DS;
    c.horizon = 24;              /* shorter than the path: the window slides and wraps */
    c.override_max = (ffwd_real)1.5;
    c.rate_max = (ffwd_real)20.0;
    c.rate_rate_max = (ffwd_real)1000.0;
    c.margin = (ffwd_real)0.02;
    return c;
}

static int vec_finite(const ffwd_real *x, uint32_t n)
{
    uint32_t i;
    for (i = 0; i < n; i++)
        if (!isfinite((double)x[i])) return 0;
    return 1;
}

static int out_zero(const ffwd_gov_output *o)
{
    return all_zero(o->q, FFWD_MAX_DOF) && all_zero(o->qd, FFWD_MAX_DOF) && all_zero(o->qdd, FFWD_MAX_DOF)
           && all_zero(o->tau, FFWD_MAX_DOF) && o->s == 0 && o->override == 0 && o->rate == 0
           && o->rate_rate == 0 && o->safe_override == 0 && o->flags == 0;
}

static void fill_out(ffwd_gov_output *o)
{
    memset(o, 0x5a, sizeof *o);     /* not zero: the error path must clear it */
}

static void test_config_errors(void)
{
    static ffwd_model other;
    static ffwd_work other_w;
    ffwd_gov_config c;
    setup(11, 0);
    c = default_cfg();
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "valid config");
    CHECK(ffwd_governor_init(NULL, &g_m, &g_w, &c) == FFWD_E_ARG, "NULL governor");
    CHECK(ffwd_governor_init(&g_g, NULL, &g_w, &c) == FFWD_E_ARG, "NULL model");
    CHECK(ffwd_governor_init(&g_g, &g_m, NULL, &c) == FFWD_E_ARG, "NULL work");
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, NULL) == FFWD_E_ARG, "NULL config");
#define BAD(field, value, want) do { c = default_cfg(); c.field = value; \
        CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == (want), "config %s = %s", #field, #value); } while (0)
    BAD(dt, 0, FFWD_E_ARG);
    BAD(dt, (ffwd_real)-1e-3, FFWD_E_ARG);
    BAD(dt, (ffwd_real)NAN, FFWD_E_NONFINITE);
    BAD(ds, 0, FFWD_E_ARG);
    BAD(ds, (ffwd_real)-0.01, FFWD_E_ARG);
    BAD(ds, (ffwd_real)INFINITY, FFWD_E_NONFINITE);
    BAD(horizon, 0u, FFWD_E_ARG);
    BAD(horizon, 1u, FFWD_E_ARG);
    BAD(horizon, FFWD_GOV_MAX_HORIZON + 1u, FFWD_E_ARG);
    BAD(override_max, 0, FFWD_E_ARG);
    BAD(override_max, (ffwd_real)-1, FFWD_E_ARG);
    BAD(override_max, (ffwd_real)NAN, FFWD_E_NONFINITE);
    BAD(rate_max, 0, FFWD_E_ARG);
    BAD(rate_max, (ffwd_real)-INFINITY, FFWD_E_NONFINITE);
    BAD(rate_rate_max, 0, FFWD_E_ARG);
    BAD(rate_rate_max, (ffwd_real)NAN, FFWD_E_NONFINITE);
    BAD(margin, (ffwd_real)-0.01, FFWD_E_ARG);
    BAD(margin, (ffwd_real)0.5, FFWD_E_ARG);
    BAD(margin, (ffwd_real)NAN, FFWD_E_NONFINITE);
    /* the edges that are allowed */
    BAD(horizon, 2u, FFWD_OK);
    BAD(horizon, FFWD_GOV_MAX_HORIZON, FFWD_OK);
    BAD(margin, 0, FFWD_OK);
    BAD(margin, (ffwd_real)0.49, FFWD_OK);
#undef BAD
    /* work bound to another model */
    other = g_m;
    CHECK(ffwd_work_init(&other_w, &other) == FFWD_OK, "other work");
    c = default_cfg();
    CHECK(ffwd_governor_init(&g_g, &g_m, &other_w, &c) == FFWD_E_MODEL, "work bound to another model");
    /* after a failed init the governor refuses everything */
    CHECK(ffwd_governor_room(&g_g) == 0u, "no room after a failed init");
    CHECK(push_sample(&g_g, 0) == FFWD_E_ARG, "push after a failed init");
    CHECK(ffwd_governor_finish(&g_g) == FFWD_E_ARG, "finish after a failed init");
    CHECK(ffwd_governor_room(NULL) == 0u, "room(NULL) is 0");
    CHECK(ffwd_governor_finish(NULL) == FFWD_E_ARG, "finish(NULL)");
}

static void test_missing_limits(void)
{
    static const uint32_t need[3] = {FFWD_LIM_TORQUE, FFWD_LIM_VELOCITY, FFWD_LIM_ACCELERATION};
    ffwd_gov_config c = default_cfg();
    uint32_t k, j;
    for (k = 0; k < 3; k++) {
        for (j = 0; j < 3; j++) {
            setup(12, 0);
            g_m.joint[j].has_limits &= ~need[k];
            CHECK(ffwd_work_init(&g_w, &g_m) == FFWD_OK, "work init");
            CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_E_LIMIT,
                  "joint %u without limit bit %u: FFWD_E_LIMIT", j, need[k]);
        }
    }
    /* position and jerk limits are optional */
    setup(12, 0);
    for (j = 0; j < 3; j++) g_m.joint[j].has_limits &= ~(uint32_t)(FFWD_LIM_POSITION | FFWD_LIM_JERK);
    CHECK(ffwd_work_init(&g_w, &g_m) == FFWD_OK, "work init");
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "no position or jerk limits: accepted");
}

static void test_push_errors(void)
{
    ffwd_gov_config c = default_cfg();
    ffwd_real q[FFWD_MAX_DOF], dq[FFWD_MAX_DOF], ddq[FFWD_MAX_DOF], dddq[FFWD_MAX_DOF], bad[FFWD_MAX_DOF];
    ffwd_real grav[FFWD_MAX_DOF];
    uint32_t k, j, room;
    setup(13, 0);
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "init");
    CHECK(ffwd_governor_room(&g_g) == c.horizon, "empty window: room = horizon");
    CHECK(ffwd_governor_finish(&g_g) != FFWD_OK, "finish with nothing pushed");
    path_at(0, q, dq, ddq, dddq);
    CHECK(ffwd_governor_push(NULL, q, dq, ddq, dddq) == FFWD_E_ARG, "push NULL governor");
    CHECK(ffwd_governor_push(&g_g, NULL, dq, ddq, dddq) == FFWD_E_ARG, "push NULL q");
    CHECK(ffwd_governor_push(&g_g, q, NULL, ddq, dddq) == FFWD_E_ARG, "push NULL q'");
    CHECK(ffwd_governor_push(&g_g, q, dq, NULL, dddq) == FFWD_E_ARG, "push NULL q''");
    CHECK(ffwd_governor_push(&g_g, q, dq, ddq, NULL) == FFWD_E_ARG, "push NULL q'''");
    for (k = 0; k < 4; k++) {
        memcpy(bad, k == 0 ? q : k == 1 ? dq : k == 2 ? ddq : dddq, sizeof bad);
        bad[2] = (ffwd_real)(k % 2 ? INFINITY : NAN);
        CHECK(ffwd_governor_push(&g_g, k == 0 ? bad : q, k == 1 ? bad : dq, k == 2 ? bad : ddq,
                                 k == 3 ? bad : dddq) == FFWD_E_NONFINITE, "push non-finite array %u", k);
    }
    CHECK(ffwd_governor_room(&g_g) == c.horizon, "refused pushes take no room");
    /* out of the representable range: |q| >= 2^20 on a joint without position limit,
     * and a velocity so large that the torque overflows */
    g_m.joint[0].has_limits &= ~(uint32_t)FFWD_LIM_POSITION;
    CHECK(ffwd_work_init(&g_w, &g_m) == FFWD_OK, "work init");
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "init");
    memcpy(bad, q, sizeof bad);
    bad[0] = (ffwd_real)4e6;
    CHECK(ffwd_governor_push(&g_g, bad, dq, ddq, dddq) == FFWD_E_ARG, "push |q| beyond 2^20");
    memcpy(bad, dq, sizeof bad);
    bad[1] = (ffwd_real)1e200;
    CHECK(ffwd_governor_push(&g_g, q, bad, ddq, dddq) == FFWD_E_NONFINITE, "push q' 1e200: torque overflow");
    for (k = 0; k < 3; k++) bad[k] = (ffwd_real)(FFWD_REAL_MAX_TEST * (k == 1 ? -1 : 1));
    CHECK(ffwd_governor_push(&g_g, q, bad, ddq, dddq) == FFWD_E_NONFINITE, "push q' near the largest real: overflow");
    CHECK(ffwd_governor_room(&g_g) == c.horizon, "refused pushes take no room");
    setup(13, 0);
    /* full window */
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "init");
    for (k = 0; k < c.horizon; k++) {
        CHECK(push_sample(&g_g, (int)k) == FFWD_OK, "push %u", k);
        CHECK(ffwd_governor_room(&g_g) == c.horizon - k - 1u, "room after %u pushes", k + 1u);
    }
    CHECK(push_sample(&g_g, (int)c.horizon) == FFWD_E_ARG, "push into a full window");
    /* after finish */
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "init");
    CHECK(push_sample(&g_g, 0) == FFWD_OK && push_sample(&g_g, 1) == FFWD_OK, "two pushes");
    CHECK(ffwd_governor_finish(&g_g) == FFWD_OK, "finish");
    CHECK(ffwd_governor_room(&g_g) == 0u, "no room after finish");
    CHECK(push_sample(&g_g, 2) == FFWD_E_ARG, "push after finish");
    /* position limit: sample index, joint and limit reported */
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "init");
    for (k = 0; k < 5; k++) CHECK(push_sample(&g_g, (int)k) == FFWD_OK, "push %u", k);
    path_at(5 * DS, q, dq, ddq, dddq);
    q[1] = g_m.joint[1].q_max + (ffwd_real)0.01;
    CHECK(ffwd_governor_push(&g_g, q, dq, ddq, dddq) == FFWD_E_INFEASIBLE, "q above q_max");
    CHECK(g_g.fault_index == 5u && g_g.fault_joint == 1 && g_g.fault_limit == FFWD_LIM_POSITION,
          "fault at sample 5, joint 1, position (%u, %d, %u)", g_g.fault_index, (int)g_g.fault_joint,
          g_g.fault_limit);
    q[1] = g_m.joint[1].q_min - (ffwd_real)0.01;
    CHECK(ffwd_governor_push(&g_g, q, dq, ddq, dddq) == FFWD_E_INFEASIBLE, "q below q_min");
    CHECK(ffwd_governor_room(&g_g) == c.horizon - 5u, "refused pushes take no room");
    /* a sample where holding still needs more torque than the reduced limit allows */
    path_at(5 * DS, q, dq, ddq, dddq);
    ffwd_gravity_torque(&g_m, &g_w, q, grav);
    j = 0;
    for (k = 1; k < 3; k++) if (fabs((double)grav[k]) > fabs((double)grav[j])) j = k;
    CHECK(fabs((double)grav[j]) > 0.1, "gravity torque at the sample (%g)", (double)grav[j]);
    g_m.joint[j].tau_max = (ffwd_real)(0.5 * fabs((double)grav[j]));
    CHECK(ffwd_work_init(&g_w, &g_m) == FFWD_OK, "work init");
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "init");
    room = ffwd_governor_room(&g_g);
    CHECK(ffwd_governor_push(&g_g, q, dq, ddq, dddq) == FFWD_E_INFEASIBLE, "too little torque to hold the sample");
    CHECK(g_g.fault_index == 0u && g_g.fault_joint == (int32_t)j && g_g.fault_limit == FFWD_LIM_TORQUE,
          "fault at sample 0, joint %u, torque (%u, %d, %u)", j, g_g.fault_index, (int)g_g.fault_joint,
          g_g.fault_limit);
    CHECK(ffwd_governor_room(&g_g) == room, "the refused sample takes no room");
}

static void test_step_errors(void)
{
    ffwd_gov_config c = default_cfg();
    ffwd_gov_output o, o1, o2;
    int k;
    setup(14, 0);
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "init");
    CHECK(ffwd_governor_step(&g_g, 1, NULL) == FFWD_E_ARG, "step, NULL output");
    fill_out(&o);
    CHECK(ffwd_governor_step(NULL, 1, &o) == FFWD_E_ARG && out_zero(&o), "step, NULL governor: out zeroed");
    fill_out(&o);
    CHECK(ffwd_governor_step(&g_g, 1, &o) != FFWD_OK && out_zero(&o), "step with nothing pushed");
    for (k = 0; k < 10; k++) push_sample(&g_g, k);
    for (k = 0; k < 50; k++) ffwd_governor_step(&g_g, 1, &o);
    CHECK(o.override > 0, "moving");
    g_copy = g_g;
    fill_out(&o);
    CHECK(ffwd_governor_step(&g_g, (ffwd_real)NAN, &o) == FFWD_E_NONFINITE && out_zero(&o), "NaN override");
    fill_out(&o);
    CHECK(ffwd_governor_step(&g_g, (ffwd_real)INFINITY, &o) == FFWD_E_NONFINITE && out_zero(&o), "Inf override");
    memset(&o1, 0, sizeof o1);
    memset(&o2, 0, sizeof o2);
    CHECK(ffwd_governor_step(&g_g, 1, &o1) == FFWD_OK && ffwd_governor_step(&g_copy, 1, &o2) == FFWD_OK,
          "steps after the refused ones");
    CHECK(memcmp(&o1, &o2, sizeof o1) == 0, "refused steps left the state unchanged");
    /* a failed init makes step refuse */
    c.horizon = 1;
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_E_ARG, "bad init");
    fill_out(&o);
    CHECK(ffwd_governor_step(&g_g, 1, &o) != FFWD_OK && out_zero(&o), "step after a failed init");
}

/* One closed run with a command schedule; checks every cycle. */
typedef struct run_stats {
    long cycles, at_rest, capped, jerk_flag, conflict, starved, done_at, rest_exact, rest_hold;
    double worst_tau, worst_acc, worst_vel, worst_vel_reduced, worst_jerk, worst_jerk_unflagged;
    double max_override, s_end;
    int resumed;                /* moved again after stopping at override 0 */
} run_stats;

/* command: 0 = schedule 1 -> 0 -> 1 -> above max, 1 = constant override_max */
static void closed_run(const ffwd_gov_config *c, int command, run_stats *r)
{
    ffwd_gov_output o;
    ffwd_real tau[FFWD_MAX_DOF], prev_qdd[FFWD_MAX_DOF];
    uint32_t j, n = g_m.dof;
    int next = 0, phase = 0, have_prev = 0;
    long cyc, rest_cycles = 0, phase1_start = 0;
    double keep = 1 - (double)c->margin, prev_s = 0, rest_s = -1;
    memset(r, 0, sizeof *r);
    r->done_at = -1;
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, c) == FFWD_OK, "init");
    for (cyc = 0; cyc < MAX_CYCLES; cyc++) {
        double cmd, s_window_end;
        ffwd_status st;
        while (next < NSAMP && ffwd_governor_room(&g_g) > 0u) {
            CHECK(push_sample(&g_g, next) == FFWD_OK, "push sample %d", next);
            next++;
            if (next == NSAMP) CHECK(ffwd_governor_finish(&g_g) == FFWD_OK, "finish");
        }
        s_window_end = (next - 1) * DS;
        if (command == 1) {
            cmd = (double)c->override_max;
        } else {
            /* phase 0: 1 until 30 % of the path; 1: 0 for 600 cycles (braking takes
             * about 200 here); 2: 1 until 70 %; 3: 2 (above the maximum, clamped) */
            if (phase == 0 && prev_s > 0.3 * T_PATH) { phase = 1; phase1_start = cyc; }
            if (phase == 1 && cyc - phase1_start >= 600) phase = 2;
            if (phase == 2 && prev_s > 0.7 * T_PATH) phase = 3;
            cmd = phase == 1 ? 0.0 : phase == 3 ? 2.0 : 1.0;
        }
        st = ffwd_governor_step(&g_g, (ffwd_real)cmd, &o);
        CHECK(st == FFWD_OK, "step %ld: status %d", cyc, (int)st);
        if (st != FFWD_OK) break;
        r->cycles++;
        CHECK(vec_finite(o.q, n) && vec_finite(o.qd, n) && vec_finite(o.qdd, n)
              && vec_finite(o.tau, n), "finite output at cycle %ld", cyc);
        /* the torque is the inverse dynamics of the commanded state */
        CHECK(ffwd_inverse_dynamics(&g_m, &g_w, o.q, o.qd, o.qdd, tau) == FFWD_OK, "inverse dynamics");
        CHECK(max_diff(tau, o.tau, n) <= TOL_REL * (1 + max_abs(tau, n)), "cycle %ld: tau = ID(q, qd, qdd) (%g)",
              cyc, max_diff(tau, o.tau, n));
        for (j = 0; j < n; j++) {
            const ffwd_joint *J = &g_m.joint[j];
            double rt = fabs((double)tau[j]) / (keep * (double)J->tau_max);
            double ra = fabs((double)o.qdd[j]) / (keep * (double)J->a_max);
            double rv = fabs((double)o.qd[j]) / (double)J->v_max;
            if (rt > r->worst_tau) r->worst_tau = rt;
            if (ra > r->worst_acc) r->worst_acc = ra;
            if (rv > r->worst_vel) r->worst_vel = rv;
            if (rv / keep > r->worst_vel_reduced) r->worst_vel_reduced = rv / keep;
            CHECK(o.q[j] >= J->q_min && o.q[j] <= J->q_max, "cycle %ld joint %u: position in its limits", cyc, j);
            if (have_prev) {
                double jr = fabs((double)(o.qdd[j] - prev_qdd[j])) / DT / g_jmax[j];
                if (jr > r->worst_jerk) r->worst_jerk = jr;
                if (!(o.flags & FFWD_GOV_JERK) && jr > r->worst_jerk_unflagged) r->worst_jerk_unflagged = jr;
            }
        }
        CHECK(o.override >= 0 && o.override <= c->override_max, "override in [0, max] (%g)", (double)o.override);
        CHECK(fabs((double)o.rate) <= (double)c->rate_max * (1 + TOL_REL), "cycle %ld: |rate| <= rate_max (%g)",
              cyc, (double)o.rate);
        if (!(o.flags & FFWD_GOV_JERK))
            CHECK(fabs((double)o.rate_rate) <= (double)c->rate_rate_max * (1 + TOL_REL),
                  "cycle %ld: |rate_rate| %g over its bound without the JERK flag", cyc, (double)o.rate_rate);
        CHECK((double)o.s >= prev_s - S_TOL, "cycle %ld: progress never goes back", cyc);
        CHECK((double)o.s <= s_window_end + S_TOL, "cycle %ld: never past the last pushed sample", cyc);
        CHECK(((o.flags & FFWD_GOV_AT_REST) != 0) == (o.override == 0), "AT_REST flag iff override 0");
        if ((double)o.override > r->max_override) r->max_override = (double)o.override;
        r->at_rest += (o.flags & FFWD_GOV_AT_REST) != 0;
        r->capped += (o.flags & FFWD_GOV_CAPPED) != 0;
        r->jerk_flag += (o.flags & FFWD_GOV_JERK) != 0;
        r->conflict += (o.flags & FFWD_GOV_CONFLICT) != 0;
        r->starved += (o.flags & FFWD_GOV_STARVED) != 0;
        /* commanded 0: once the override is (practically) 0 the path position holds */
        if (phase == 1 && (double)o.override <= REST_EPS) {
            if (rest_cycles > 0)
                CHECK(fabs((double)o.s - rest_s) <= S_TOL, "held still at override 0 (s %.15g, was %.15g)",
                      (double)o.s, rest_s);
            rest_s = (double)o.s;
            rest_cycles++;
            r->rest_exact += (o.flags & FFWD_GOV_AT_REST) != 0;
        }
        r->rest_hold = rest_cycles;
        if (phase >= 2 && rest_cycles > 0 && (double)o.s > rest_s) r->resumed = 1;
        memcpy(prev_qdd, o.qdd, sizeof prev_qdd);
        have_prev = 1;
        prev_s = (double)o.s;
        if (o.flags & FFWD_GOV_DONE) {
            ffwd_real q[FFWD_MAX_DOF], dq[FFWD_MAX_DOF], ddq[FFWD_MAX_DOF], dddq[FFWD_MAX_DOF];
            r->done_at = cyc;
            path_at((NSAMP - 1) * DS, q, dq, ddq, dddq);
            CHECK(max_diff(o.q, q, n) < S_TOL && max_abs(o.qd, n) == 0 && o.override == 0,
                  "done: at the last sample, at rest");
            break;
        }
    }
    r->s_end = prev_s;
}

static void test_closed_runs(void)
{
    ffwd_gov_config c = default_cfg();
    run_stats r, rj;
    uint64_t seed;
    double worst_t = 0, worst_a = 0, worst_v = 0, worst_vr = 0;
    long conflicts = 0;
    for (seed = 21; seed < 27; seed++) {
        /* override 1 -> 0 -> 1 -> 2, no jerk limits */
        setup(seed, 0);
        closed_run(&c, 0, &r);
        CHECK(r.done_at > 0, "seed %llu: the end of the path is reached at rest", (unsigned long long)seed);
        CHECK(fabs(r.s_end - T_PATH) < 1e-9, "seed %llu: ends at s = T (%.12g)", (unsigned long long)seed, r.s_end);
        CHECK(r.resumed, "seed %llu: moved again after the stop at override 0", (unsigned long long)seed);
        CHECK(r.rest_hold >= 200, "seed %llu: commanded 0, held (practically) at rest (%ld cycles)",
              (unsigned long long)seed, r.rest_hold);
        /* (d): command 0 is feasible, so the override reaches exactly 0 (AT_REST) */
        CHECK(r.rest_exact > 0, "seed %llu: commanded 0, the override never reached exactly 0 (AT_REST)",
              (unsigned long long)seed);
        CHECK(r.capped > 0, "seed %llu: limits capped the command somewhere", (unsigned long long)seed);
        CHECK(r.max_override <= (double)c.override_max, "seed %llu: override at most the maximum",
              (unsigned long long)seed);
        CHECK(r.starved == 0, "seed %llu: never starved while samples were pushed", (unsigned long long)seed);
        conflicts += r.conflict;
        if (r.worst_tau > worst_t) worst_t = r.worst_tau;
        if (r.worst_acc > worst_a) worst_a = r.worst_acc;
        if (r.worst_vel > worst_v) worst_v = r.worst_vel;
        if (r.worst_vel_reduced > worst_vr) worst_vr = r.worst_vel_reduced;
        /* constant full command, with and without jerk limits */
        setup(seed, 0);
        closed_run(&c, 1, &r);
        setup(seed, 1);
        closed_run(&c, 1, &rj);
        CHECK(r.done_at > 0 && rj.done_at > 0, "seed %llu: both runs end", (unsigned long long)seed);
        CHECK(r.capped > 0 && rj.capped > 0, "seed %llu: override_max capped", (unsigned long long)seed);
        /* the governor bounds the joint jerk at the start of each cycle; the finite
         * difference of qdd over a cycle (measured here) may differ from that by the
         * change of jerk within the cycle: allowed 25 %. Without jerk limits the same
         * path runs far above them. */
#ifndef FFWD_SINGLE   /* float: the finite differences are rounding noise at this scale */
        CHECK(rj.worst_jerk_unflagged <= 1.25, "seed %llu: joint jerk within j_max where not flagged (%.4f)",
              (unsigned long long)seed, rj.worst_jerk_unflagged);
        CHECK(r.worst_jerk_unflagged > 2, "seed %llu: without jerk limits the jerk exceeds them (%.4f)",
              (unsigned long long)seed, r.worst_jerk_unflagged);
#endif
        printf("seed %llu: cycles %ld (jerk-limited %ld); jerk / j_max (finite differences) without jerk "
               "limits %.3f, with %.3f (%.3f where not flagged; %ld flagged cycles)\n", (unsigned long long)seed,
               r.done_at, rj.done_at, r.worst_jerk, rj.worst_jerk, rj.worst_jerk_unflagged, rj.jerk_flag);
        conflicts += r.conflict + rj.conflict;
        if (r.worst_tau > worst_t) worst_t = r.worst_tau;
        if (rj.worst_tau > worst_t) worst_t = rj.worst_tau;
        if (r.worst_acc > worst_a) worst_a = r.worst_acc;
        if (rj.worst_acc > worst_a) worst_a = rj.worst_acc;
        if (r.worst_vel > worst_v) worst_v = r.worst_vel;
        if (rj.worst_vel > worst_v) worst_v = rj.worst_vel;
        if (r.worst_vel_reduced > worst_vr) worst_vr = r.worst_vel_reduced;
        if (rj.worst_vel_reduced > worst_vr) worst_vr = rj.worst_vel_reduced;
    }
    printf("closed runs: worst |tau|/((1-margin) tau_max) %.6f, |qdd|/((1-margin) a_max) %.6f, "
           "|qd|/v_max %.6f (/((1-margin) v_max) %.6f), conflicts %ld\n", worst_t, worst_a, worst_v, worst_vr,
           conflicts);
    /* (a): torque and acceleration exact at the commanded state within the reduced
     * limits; velocity predicted over the cycle, the margin absorbs the rest */
    CHECK(worst_t <= 1 + TOL_REL, "torque within (1 - margin) tau_max (%.9f)", worst_t);
    CHECK(worst_a <= 1 + TOL_REL, "acceleration within (1 - margin) a_max (%.9f)", worst_a);
    CHECK(worst_v <= 1, "velocity within v_max (%.9f)", worst_v);
}

/* Pushing only part of the path without finishing: the governor stops at the last
 * pushed sample and reports STARVED, then continues when more samples come. */
static void test_starved_and_done(void)
{
    ffwd_gov_config c = default_cfg();
    ffwd_gov_output o;
    ffwd_real q[FFWD_MAX_DOF], dq[FFWD_MAX_DOF], ddq[FFWD_MAX_DOF], dddq[FFWD_MAX_DOF];
    uint32_t n;
    int k, starved = 0, done = 0;
    setup(31, 0);
    n = g_m.dof;
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "init");
    /* one sample: hold still there, starved */
    CHECK(push_sample(&g_g, 0) == FFWD_OK, "push 0");
    CHECK(ffwd_governor_step(&g_g, 1, &o) == FFWD_OK, "step");
    path_at(0, q, dq, ddq, dddq);
    CHECK((o.flags & FFWD_GOV_STARVED) && (o.flags & FFWD_GOV_AT_REST) && !(o.flags & FFWD_GOV_DONE),
          "one sample: STARVED and AT_REST (flags %u)", o.flags);
    CHECK(max_diff(o.q, q, n) == 0 && max_abs(o.qd, n) == 0 && o.override == 0, "holding the first sample");
    /* six samples, never finished: reaches the sixth and starves there */
    for (k = 1; k < 6; k++) push_sample(&g_g, k);
    for (k = 0; k < 20000 && !starved; k++) {
        CHECK(ffwd_governor_step(&g_g, 1, &o) == FFWD_OK, "step");
        CHECK((double)o.s <= 5 * DS + S_TOL, "never past the last pushed sample (%g)", (double)o.s);
        starved = (o.flags & FFWD_GOV_STARVED) != 0;
    }
    path_at(5 * DS, q, dq, ddq, dddq);
    CHECK(starved, "STARVED at the last pushed sample");
    CHECK(fabs((double)o.s - 5 * DS) < S_TOL && o.override == 0 && !(o.flags & FFWD_GOV_DONE),
          "starved at rest at s = 5 ds, not done (s %g, flags %u)", (double)o.s, o.flags);
    CHECK(max_diff(o.q, q, n) < S_TOL, "holding the last pushed sample");
    /* more samples: it moves on; then finish and run to the end */
    for (k = 6; k < 12; k++) push_sample(&g_g, k);
    for (k = 0; k < 20; k++) ffwd_governor_step(&g_g, 1, &o);
    CHECK((double)o.s > 5 * DS && o.override > 0 && !(o.flags & FFWD_GOV_STARVED),
          "moves on after more pushes (s %g, override %g)", (double)o.s, (double)o.override);
    CHECK(ffwd_governor_finish(&g_g) == FFWD_OK, "finish");
    for (k = 0; k < 20000 && !done; k++) {
        CHECK(ffwd_governor_step(&g_g, 1, &o) == FFWD_OK, "step");
        done = (o.flags & FFWD_GOV_DONE) != 0;
        if (done)
            CHECK(!(o.flags & FFWD_GOV_STARVED) && (o.flags & FFWD_GOV_AT_REST), "DONE, AT_REST, not STARVED");
    }
    path_at(11 * DS, q, dq, ddq, dddq);
    CHECK(done && fabs((double)o.s - 11 * DS) < S_TOL && max_diff(o.q, q, n) < S_TOL, "done at the last sample");
    CHECK(ffwd_governor_step(&g_g, 1, &o) == FFWD_OK && (o.flags & FFWD_GOV_DONE), "stays done");
    /* a path of one sample, finished: done at once */
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "init");
    push_sample(&g_g, 0);
    CHECK(ffwd_governor_finish(&g_g) == FFWD_OK, "finish one sample");
    CHECK(ffwd_governor_step(&g_g, 1, &o) == FFWD_OK && (o.flags & FFWD_GOV_DONE) && (o.flags & FFWD_GOV_AT_REST),
          "one finished sample: DONE at once (flags %u)", o.flags);
}

/* A path that stands still (q' = q'' = 0 at every sample) and a joint whose jerk limit
 * is all but unreachable (q steps by 1e-15 between samples, the limit is 1e-12): the
 * governor keeps it by crawling, without a JERK flag. */
static void test_still_path_and_jerk_flag(void)
{
    ffwd_gov_config c = default_cfg();
    ffwd_gov_output o;
    ffwd_real q[FFWD_MAX_DOF], z[FFWD_MAX_DOF] = {0}, d1[FFWD_MAX_DOF], d2[FFWD_MAX_DOF], d3[FFWD_MAX_DOF];
    int k, done = 0;
    long jerk = 0;
    ffwd_real kmax = 0, s_last = 0, qdd_prev = 0, worst = 0;
    setup(41, 0);
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "init");
    path_at(0.2, q, d1, d2, d3);
    for (k = 0; k < 3; k++)
        CHECK(ffwd_governor_push(&g_g, q, z, z, z) == FFWD_OK, "push a standing sample");
    ffwd_governor_finish(&g_g);
    for (k = 0; k < 5000 && !done; k++) {
        CHECK(ffwd_governor_step(&g_g, 1, &o) == FFWD_OK, "step");
        CHECK(max_abs(o.qd, g_m.dof) == 0 && max_abs(o.qdd, g_m.dof) == 0, "no joint motion on a standing path");
        done = (o.flags & FFWD_GOV_DONE) != 0;
    }
    CHECK(done, "a standing path ends");
    /* joint 0 moves by 1e-15 rad between samples while its jerk limit is 1e-12:
     * unreachable at any speed above 0 */
    setup(42, 1);
    g_m.joint[0].j_max = (ffwd_real)1e-12;
    g_m.joint[0].has_limits &= ~(uint32_t)FFWD_LIM_POSITION;
    CHECK(ffwd_work_init(&g_w, &g_m) == FFWD_OK, "work init");
    CHECK(ffwd_governor_init(&g_g, &g_m, &g_w, &c) == FFWD_OK, "init");
    for (k = 0; k < 20; k++) {
        ffwd_real dq[FFWD_MAX_DOF], ddq[FFWD_MAX_DOF], dddq[FFWD_MAX_DOF];
        path_at(0.3, q, dq, ddq, dddq);
        memset(dq, 0, sizeof dq);
        memset(ddq, 0, sizeof ddq);
        memset(dddq, 0, sizeof dddq);
        q[0] = (ffwd_real)(1e-15 * k);
        CHECK(ffwd_governor_push(&g_g, q, dq, ddq, dddq) == FFWD_OK, "push");
    }
    ffwd_governor_finish(&g_g);
    done = 0;
    for (k = 0; k < 20000 && !done; k++) {
        CHECK(ffwd_governor_step(&g_g, 1, &o) == FFWD_OK, "step");
        jerk += (o.flags & FFWD_GOV_JERK) != 0;
        done = (o.flags & FFWD_GOV_DONE) != 0;
        kmax = o.override > kmax ? o.override : kmax;
        worst = fabs((double)(o.qdd[0] - qdd_prev)) / (double)c.dt > worst
                    ? (ffwd_real)(fabs((double)(o.qdd[0] - qdd_prev)) / (double)c.dt) : worst;
        qdd_prev = o.qdd[0];
        s_last = o.s;
    }
    CHECK(jerk == 0, "no JERK flag: the limit is kept (%ld cycles flagged)", jerk);
    CHECK(worst <= (ffwd_real)1e-12, "joint jerk within the tiny limit (%g)", (double)worst);
    CHECK(s_last > 0 && kmax < (ffwd_real)0.1, "it moves forward, slowly (s %g, largest override %g)",
          (double)s_last, (double)kmax);
}

int main(void)
{
    test_config_errors();
    test_missing_limits();
    test_push_errors();
    test_step_errors();
    test_starved_and_done();
    test_still_path_and_jerk_flag();
    test_closed_runs();
    return finish("test_governor");
}
