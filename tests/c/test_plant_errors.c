/* test_plant_errors.c - the plant (ffwd_plant.h) on bad input and at its edges: every
 * configuration field out of range, null pointers, an unbound plant, set_state,
 * a step whose integration leaves the representable range (refused, state kept),
 * encoder quantisation of prismatic joints and beyond 2^52 counts, seed 0, and the
 * measure/state/brake calls with null outputs. Behaviour as documented in the header;
 * nothing here looks inside the plant struct except its documented counters. */
#include "test_util.h"

#define DT 1e-3
#ifdef FFWD_SINGLE
#define QTOL 1e-3
#else
#define QTOL 1e-6
#endif

static ffwd_model g_m, g_bad;
static ffwd_plant g_p, g_p2;

static void base_model(void)
{
    g_rng = 4242;
    rand_model(&g_m, 3, 0, 0);
    CHECK(ffwd_model_check(&g_m) == FFWD_OK, "model");
}

static ffwd_status init_with(const ffwd_plant_config *cfg)
{
    ffwd_real q0[FFWD_MAX_DOF] = {0};
    return ffwd_plant_init(&g_p2, &g_m, cfg, q0, NULL);
}

static void test_config(void)
{
    ffwd_plant_config cfg;
    const double bad_dt[] = {0.0, -1e-3, 1.5};
    size_t k;
    /* ffwd_plant_config_default */
    CHECK(ffwd_plant_config_default(NULL, (ffwd_real)DT) == FFWD_E_ARG, "default: NULL config");
    CHECK(ffwd_plant_config_default(&cfg, (ffwd_real)NAN) == FFWD_E_ARG, "default: dt NaN");
    CHECK(ffwd_plant_config_default(&cfg, (ffwd_real)INFINITY) == FFWD_E_ARG, "default: dt Inf");
    CHECK(ffwd_plant_config_default(&cfg, 0) == FFWD_E_ARG, "default: dt 0");
    CHECK(ffwd_plant_config_default(&cfg, (ffwd_real)-1e-3) == FFWD_E_ARG, "default: dt < 0");
    CHECK(ffwd_plant_config_default(&cfg, (ffwd_real)DT) == FFWD_OK, "default: dt 1e-3");
    CHECK(cfg.dt == (ffwd_real)DT && cfg.integrator == FFWD_PLANT_RK4 && cfg.substeps == 1u
          && cfg.delay == 0u && cfg.saturate != 0u && cfg.counts_per_rev == 0 && cfg.noise_q == 0
          && cfg.noise_qd == 0 && cfg.seed == 1u, "default values as documented");
    CHECK(init_with(&cfg) == FFWD_OK, "default config accepted");
    /* each field out of range, one at a time */
    for (k = 0; k < sizeof bad_dt / sizeof bad_dt[0]; k++) {
        ffwd_plant_config_default(&cfg, (ffwd_real)DT);
        cfg.dt = (ffwd_real)bad_dt[k];
        CHECK(init_with(&cfg) == FFWD_E_ARG, "dt %g refused", bad_dt[k]);
    }
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.dt = 1;
    CHECK(init_with(&cfg) == FFWD_OK, "dt 1 s accepted");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.dt = (ffwd_real)INFINITY;
    CHECK(init_with(&cfg) == FFWD_E_NONFINITE, "dt Inf");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.counts_per_rev = (ffwd_real)NAN;
    CHECK(init_with(&cfg) == FFWD_E_NONFINITE, "counts_per_rev NaN");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.noise_q = (ffwd_real)INFINITY;
    CHECK(init_with(&cfg) == FFWD_E_NONFINITE, "noise_q Inf");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.noise_qd = (ffwd_real)NAN;
    CHECK(init_with(&cfg) == FFWD_E_NONFINITE, "noise_qd NaN");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.integrator = FFWD_PLANT_EULER;
    CHECK(init_with(&cfg) == FFWD_OK, "Euler accepted");
    cfg.integrator = 2;
    CHECK(init_with(&cfg) == FFWD_E_ARG, "integrator 2");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.substeps = FFWD_PLANT_MAX_SUBSTEPS;
    CHECK(init_with(&cfg) == FFWD_OK, "substeps at the maximum");
    cfg.substeps = FFWD_PLANT_MAX_SUBSTEPS + 1u;
    CHECK(init_with(&cfg) == FFWD_E_ARG, "substeps over the maximum");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.delay = FFWD_PLANT_MAX_DELAY;
    CHECK(init_with(&cfg) == FFWD_OK, "delay at the maximum");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.counts_per_rev = -1;
    CHECK(init_with(&cfg) == FFWD_E_ARG, "counts_per_rev < 0");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.noise_qd = (ffwd_real)-1e-3;
    CHECK(init_with(&cfg) == FFWD_E_ARG, "noise_qd < 0");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.noise_q = (ffwd_real)-1e-3;
    cfg.noise_qd = (ffwd_real)-1e-3;
    CHECK(init_with(&cfg) == FFWD_E_ARG, "noise_q < 0");
}

static void test_init_args(void)
{
    ffwd_plant_config cfg;
    ffwd_real q0[FFWD_MAX_DOF] = {0}, qd0[FFWD_MAX_DOF] = {0}, q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF];
    uint32_t i, n = g_m.dof;
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    CHECK(ffwd_plant_init(NULL, &g_m, &cfg, q0, NULL) == FFWD_E_ARG, "NULL plant");
    CHECK(ffwd_plant_init(&g_p2, NULL, &cfg, q0, NULL) == FFWD_E_ARG, "NULL model");
    CHECK(ffwd_plant_init(&g_p2, &g_m, NULL, q0, NULL) == FFWD_E_ARG, "NULL config");
    CHECK(ffwd_plant_init(&g_p2, &g_m, &cfg, NULL, NULL) == FFWD_E_ARG, "NULL q0");
    /* a model that fails ffwd_model_check */
    g_bad = g_m;
    g_bad.joint[1].inertia[0] = -1;
    CHECK(ffwd_plant_init(&g_p2, &g_bad, &cfg, q0, NULL) == FFWD_E_MODEL, "bad model");
    g_bad = g_m;
    g_bad.dof = 0;
    CHECK(ffwd_plant_init(&g_p2, &g_bad, &cfg, q0, NULL) == FFWD_E_MODEL, "dof 0");
    /* non-finite start */
    qd0[n - 1] = (ffwd_real)NAN;
    CHECK(ffwd_plant_init(&g_p2, &g_m, &cfg, q0, qd0) == FFWD_E_NONFINITE, "qd0 NaN");
    q0[0] = (ffwd_real)-INFINITY;
    CHECK(ffwd_plant_init(&g_p2, &g_m, &cfg, q0, NULL) == FFWD_E_NONFINITE, "q0 -Inf");
    /* every call on a plant whose init failed: refused, outputs zeroed where given */
    for (i = 0; i < n; i++) { q[i] = 7; qd[i] = 7; }
    CHECK(ffwd_plant_measure(&g_p2, q, qd) == FFWD_E_MODEL, "measure after a failed init");
    CHECK(ffwd_plant_state(&g_p2, q, qd) == FFWD_E_MODEL, "state after a failed init");
    CHECK(ffwd_plant_step(&g_p2, q0) == FFWD_E_MODEL, "step after a failed init");
    CHECK(ffwd_plant_brake(&g_p2, 1) == FFWD_E_MODEL, "brake after a failed init");
    CHECK(ffwd_plant_set_state(&g_p2, q, NULL) == FFWD_E_MODEL, "set_state after a failed init");
    /* null plant everywhere */
    CHECK(ffwd_plant_measure(NULL, q, qd) == FFWD_E_ARG, "measure NULL plant");
    CHECK(ffwd_plant_measure(NULL, NULL, NULL) == FFWD_E_ARG, "measure NULL plant, no outputs");
    CHECK(ffwd_plant_state(NULL, q, qd) == FFWD_E_ARG, "state NULL plant");
    CHECK(ffwd_plant_brake(NULL, 0) == FFWD_E_ARG, "brake NULL plant");
    CHECK(ffwd_plant_set_state(NULL, q, qd) == FFWD_E_ARG, "set_state NULL plant");
    CHECK(ffwd_plant_step(NULL, q) == FFWD_E_ARG, "step NULL plant");
}

static void test_set_state(void)
{
    enum { K = 3 };
    ffwd_plant_config cfg;
    ffwd_real q0[FFWD_MAX_DOF] = {0}, tau[FFWD_MAX_DOF] = {0}, q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF];
    ffwd_real q1[FFWD_MAX_DOF], qd1[FFWD_MAX_DOF], mq[FFWD_MAX_DOF], mqd[FFWD_MAX_DOF];
    ffwd_real bad[FFWD_MAX_DOF];
    uint32_t i, n = g_m.dof;
    int k;
    double t;
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.delay = K;
    CHECK(ffwd_plant_init(&g_p, &g_m, &cfg, q0, NULL) == FFWD_OK, "init");
    for (k = 0; k < 10; k++) ffwd_plant_step(&g_p, tau);
    CHECK(ffwd_plant_brake(&g_p, 1) == FFWD_OK, "brake on");
    ffwd_plant_step(&g_p, tau);
    t = (double)g_p.t;
    for (i = 0; i < n; i++) {
        q1[i] = (ffwd_real)(0.2 * (double)i - 0.1);
        qd1[i] = (ffwd_real)(0.5 - 0.25 * (double)i);
        bad[i] = q1[i];
    }
    ffwd_plant_state(&g_p, q, qd);
    /* refused: null q, non-finite q or qd; state unchanged */
    CHECK(ffwd_plant_set_state(&g_p, NULL, qd1) == FFWD_E_ARG, "set_state NULL q");
    bad[n - 1] = (ffwd_real)NAN;
    CHECK(ffwd_plant_set_state(&g_p, bad, NULL) == FFWD_E_NONFINITE, "set_state NaN q");
    CHECK(ffwd_plant_set_state(&g_p, q1, bad) == FFWD_E_NONFINITE, "set_state NaN qd");
    ffwd_plant_state(&g_p, mq, mqd);
    CHECK(max_diff(q, mq, n) == 0 && max_diff(qd, mqd, n) == 0, "refused set_state keeps the state");
    /* accepted with a velocity */
    CHECK(ffwd_plant_set_state(&g_p, q1, qd1) == FFWD_OK, "set_state");
    ffwd_plant_state(&g_p, mq, mqd);
    CHECK(max_diff(q1, mq, n) == 0 && max_diff(qd1, mqd, n) == 0, "state set");
    ffwd_plant_measure(&g_p, mq, mqd);
    CHECK(max_diff(q1, mq, n) == 0 && max_diff(qd1, mqd, n) == 0,
          "sensor history refilled: the delayed sample is the new state");
    CHECK((double)g_p.t == t && g_p.steps == 11u && g_p.braked_steps == 1u, "time and counters kept");
    ffwd_plant_step(&g_p, tau);
    ffwd_plant_state(&g_p, mq, NULL);
    CHECK(max_diff(q1, mq, n) > 0, "brake released by set_state: the arm moves");
    CHECK(g_p.braked_steps == 1u, "no braked step after set_state");
    /* accepted at rest (qd NULL) */
    CHECK(ffwd_plant_set_state(&g_p, q1, NULL) == FFWD_OK, "set_state at rest");
    ffwd_plant_state(&g_p, mq, mqd);
    CHECK(max_diff(q1, mq, n) == 0 && max_abs(mqd, n) == 0, "at rest");
    /* null outputs are allowed in measure and state */
    for (i = 0; i < n; i++) mq[i] = 9;
    CHECK(ffwd_plant_measure(&g_p, NULL, mqd) == FFWD_OK, "measure, q NULL");
    CHECK(max_abs(mqd, n) == 0, "measured velocity at rest");
    CHECK(ffwd_plant_measure(&g_p, mq, NULL) == FFWD_OK, "measure, qd NULL");
    CHECK(max_diff(q1, mq, n) == 0, "measured position");
    CHECK(ffwd_plant_state(&g_p, NULL, NULL) == FFWD_OK, "state, no outputs");
}

/* Steps whose integration would leave the range of joint positions the dynamics
 * accept (|q| < 2^20, 2^14 in float) are refused and leave the state, time and
 * counters as they were. Joint 0 starts just below that bound, moving towards it:
 * Euler crosses it after a few steps; RK4 starts are placed so that the crossing
 * falls in its second, third (a large torque on joint 0, no saturation) or fourth
 * stage of the first step. */
static void test_step_out_of_range(void)
{
    static const struct { uint32_t integ; double below, qd, tau0; int steps; } cases[] = {
        {FFWD_PLANT_EULER, 2.0, 1000.0, 0.0, 10},
        {FFWD_PLANT_RK4, 0.03, 100.0, 0.0, 1},
        {FFWD_PLANT_RK4, 0.06, 100.0, 1e6, 1},
        {FFWD_PLANT_RK4, 0.08, 100.0, 0.0, 1},
    };
    ffwd_plant_config cfg;
    ffwd_real q0[FFWD_MAX_DOF] = {0}, qd0[FFWD_MAX_DOF] = {0}, tau[FFWD_MAX_DOF] = {0};
    ffwd_real q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF], q2[FFWD_MAX_DOF], qd2[FFWD_MAX_DOF];
    uint32_t n = g_m.dof;
    size_t c;
    uint64_t steps = 0;
#ifdef FFWD_SINGLE
    const double qmax = 16384.0;
#else
    const double qmax = 1048576.0;
#endif
    for (c = 0; c < sizeof cases / sizeof cases[0]; c++) {
        ffwd_status st = FFWD_OK;
        int k;
        ffwd_plant_config_default(&cfg, (ffwd_real)DT);
        cfg.integrator = cases[c].integ;
        cfg.saturate = 0;
        q0[0] = (ffwd_real)(qmax - cases[c].below);
        qd0[0] = (ffwd_real)cases[c].qd;
        tau[0] = (ffwd_real)cases[c].tau0;
        CHECK(ffwd_plant_init(&g_p, &g_m, &cfg, q0, qd0) == FFWD_OK, "case %u: init near the range end", (unsigned)c);
        for (k = 0; k < cases[c].steps && st == FFWD_OK; k++) {
            ffwd_plant_state(&g_p, q, qd);
            steps = g_p.steps;
            st = ffwd_plant_step(&g_p, tau);
        }
        CHECK(st == FFWD_E_ARG, "case %u: step past |q| = 2^20 refused (%d)", (unsigned)c, (int)st);
        ffwd_plant_state(&g_p, q2, qd2);
        CHECK(max_diff(q, q2, n) == 0 && max_diff(qd, qd2, n) == 0 && g_p.steps == steps,
              "case %u: state and counters kept by the refused step", (unsigned)c);
    }
}

/* A one-joint prismatic arm, frictionless, centre of mass on the joint axis: its
 * velocity may reach the top of the floating-point range, where one more Euler
 * step overflows to Inf; the step is refused and the state kept. */
static void test_step_overflow(void)
{
    static ffwd_model m1;
    ffwd_plant_config cfg;
    ffwd_real q0[1] = {0}, qd0[1], tau[1], q[1], qd[1];
    uint32_t integ;
    const double c[3] = {0, 0, 0}, Ic[9] = {0.01, 0, 0, 0, 0.01, 0, 0, 0, 0.01};
    memset(&m1, 0, sizeof m1);
    m1.dof = 1;
    m1.gravity[2] = (ffwd_real)-9.81;
    m1.joint[0].type = FFWD_PRISMATIC;
    m1.joint[0].parent = -1;
    m1.joint[0].rot[0] = m1.joint[0].rot[4] = m1.joint[0].rot[8] = 1;
    m1.joint[0].axis[2] = 1;
    params_from(1.0, c, Ic, m1.joint[0].inertia);
    m1.joint[0].coulomb_band = (ffwd_real)0.01;
    m1.tool_parent = 0;
    m1.tool_rot[0] = m1.tool_rot[4] = m1.tool_rot[8] = 1;
    CHECK(ffwd_model_check(&m1) == FFWD_OK, "one-joint prismatic model");
#ifdef FFWD_SINGLE
    qd0[0] = (ffwd_real)3.0e38;
    tau[0] = (ffwd_real)3.0e38;
#else
    qd0[0] = (ffwd_real)1.7e308;
    tau[0] = (ffwd_real)1.7e308;
#endif
    for (integ = 0; integ < 2; integ++) {
        ffwd_status st;
        ffwd_plant_config_default(&cfg, (ffwd_real)DT);
        cfg.integrator = integ == 0 ? FFWD_PLANT_EULER : FFWD_PLANT_RK4;
        cfg.dt = 1;
        CHECK(ffwd_plant_init(&g_p, &m1, &cfg, q0, qd0) == FFWD_OK, "init at top speed");
        st = ffwd_plant_step(&g_p, tau);
        /* refused by the plant or by the forward dynamics (non-finite, out of range
         * or singular: which one depends on where the overflow happens first) */
        CHECK(st != FFWD_OK, "integrator %u: overflowing step refused (%d)", integ, (int)st);
        ffwd_plant_state(&g_p, q, qd);
        CHECK(q[0] == q0[0] && qd[0] == qd0[0] && g_p.steps == 0u,
              "integrator %u: state kept by the refused step", integ);
    }
}

static void test_quantise(void)
{
    ffwd_plant_config cfg;
    ffwd_real q0[FFWD_MAX_DOF] = {0}, q[FFWD_MAX_DOF], qt[FFWD_MAX_DOF];
    uint32_t i, n;
    double cpr = 1000.0;
    /* prismatic joints: counts per metre */
    g_rng = 31337;
    rand_model(&g_bad, 3, 0, 0);
    g_bad.joint[1].type = FFWD_PRISMATIC;
    CHECK(ffwd_model_check(&g_bad) == FFWD_OK, "model with a prismatic joint");
    n = g_bad.dof;
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.counts_per_rev = (ffwd_real)cpr;
    for (i = 0; i < n; i++) q0[i] = (ffwd_real)(0.12345 + 0.1 * (double)i);
    CHECK(ffwd_plant_init(&g_p, &g_bad, &cfg, q0, NULL) == FFWD_OK, "init");
    ffwd_plant_measure(&g_p, q, NULL);
    for (i = 0; i < n; i++) {
        double quantum = g_bad.joint[i].type == FFWD_PRISMATIC ? 1.0 / cpr : 2 * 3.14159265358979323846 / cpr;
        double c = (double)q[i] / quantum;
        CHECK(fabs(c - floor(c + 0.5)) < QTOL, "joint %u: whole counts (%g)", i, c);
        CHECK(fabs((double)q[i] - (double)q0[i]) <= 0.5 * quantum * (1 + 1e-9), "joint %u: within half a count", i);
    }
    CHECK(fabs((double)q[1] - 0.223) < 1e-3 * QTOL, "prismatic joint in millimetre counts (%.9g)", (double)q[1]);
    /* more than 2^52 counts: the position is passed through unchanged */
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
#ifdef FFWD_SINGLE
    cfg.counts_per_rev = (ffwd_real)1e30;
#else
    cfg.counts_per_rev = (ffwd_real)1e18;
#endif
    for (i = 0; i < n; i++) q0[i] = (ffwd_real)((i % 2 ? -1.0 : 1.0) * (0.3 + 0.1 * (double)i));
    CHECK(ffwd_plant_init(&g_p, &g_bad, &cfg, q0, NULL) == FFWD_OK, "init");
    ffwd_plant_measure(&g_p, q, NULL);
    ffwd_plant_state(&g_p, qt, NULL);
    CHECK(max_diff(q, qt, n) == 0, "beyond 2^52 counts the position is exact");
}

static void test_seed_zero(void)
{
    ffwd_plant_config cfg;
    ffwd_real q0[FFWD_MAX_DOF] = {0}, tau[FFWD_MAX_DOF] = {0}, a[FFWD_MAX_DOF], b[FFWD_MAX_DOF];
    ffwd_real c[FFWD_MAX_DOF];
    uint32_t n = g_m.dof;
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.noise_qd = (ffwd_real)1e-2;
    cfg.seed = 0;
    CHECK(ffwd_plant_init(&g_p, &g_m, &cfg, q0, NULL) == FFWD_OK, "init, seed 0");
    CHECK(ffwd_plant_init(&g_p2, &g_m, &cfg, q0, NULL) == FFWD_OK, "init, seed 0 again");
    ffwd_plant_brake(&g_p, 1);
    ffwd_plant_brake(&g_p2, 1);
    ffwd_plant_measure(&g_p, NULL, a);
    ffwd_plant_step(&g_p, tau);
    ffwd_plant_measure(&g_p, NULL, b);
    ffwd_plant_step(&g_p2, tau);
    ffwd_plant_measure(&g_p2, NULL, c);
    /* at rest under the brake the measured velocity is pure noise */
    CHECK(max_abs(a, n) > 0 && max_abs(b, n) > 0, "seed 0 still gives noise");
    CHECK(max_diff(a, b, n) > 0, "seed 0: the noise changes from sample to sample");
    CHECK(max_diff(b, c, n) == 0, "seed 0 is reproducible");
}

int main(void)
{
    base_model();
    test_config();
    test_init_args();
    test_set_state();
    test_step_out_of_range();
    test_step_overflow();
    test_quantise();
    test_seed_zero();
    return finish("test_plant_errors");
}
