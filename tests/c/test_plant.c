/* test_plant.c - the plant simulation (csrc/plant.c): energy conservation of the
 * integrators, saturation, sensor delay, quantisation, seeded noise, brake, bad input.
 *
 * Energy check: a frictionless arm with zero torque conserves kinetic plus potential
 * energy (Lagrangian mechanics, common textbook fact, from memory); the drift of a
 * fixed-step integrator is its error. Kinetic energy 1/2 qd^T M qd from
 * ffwd_mass_matrix (armature included), potential energy -sum m_i g . c_i with each
 * body's centre of mass placed by ffwd_tool_pose on a copy of the model whose tool
 * frame sits at that centre of mass.
 * Also the UDP frame codec of the plant server (csrc/programs/sim_frame.h): round trip,
 * CRC-32 check value, and random or mutated datagrams never accepted by mistake. */
#include "test_util.h"
#include "programs/sim_frame.h"

#define DT 1e-3
#define SECONDS 10.0

static ffwd_model g_model;
static ffwd_model g_probe[FFWD_MAX_DOF];
static ffwd_work g_probe_work[FFWD_MAX_DOF];
static ffwd_work g_work;
static ffwd_plant g_plant, g_plant2;

static void frictionless(ffwd_model *m)
{
    uint32_t i;
    for (i = 0; i < m->dof; i++) {
        m->joint[i].viscous = 0;
        m->joint[i].coulomb = 0;
    }
}

static void energy_setup(const ffwd_model *m)
{
    uint32_t i;
    int k;
    for (i = 0; i < m->dof; i++) {
        ffwd_real mass = m->joint[i].inertia[0];
        g_probe[i] = *m;
        g_probe[i].tool_parent = (int32_t)i;
        for (k = 0; k < 9; k++) g_probe[i].tool_rot[k] = (ffwd_real)(k % 4 == 0);
        for (k = 0; k < 3; k++) g_probe[i].tool_pos[k] = m->joint[i].inertia[1 + k] / mass;
        CHECK(ffwd_work_init(&g_probe_work[i], &g_probe[i]) == FFWD_OK, "probe model %u", i);
    }
    CHECK(ffwd_work_init(&g_work, m) == FFWD_OK, "work init");
}

/* kinetic and potential energy at (q, qd) */
static void energy(const ffwd_model *m, const ffwd_real *q, const ffwd_real *qd, double *ke,
                   double *pe)
{
    ffwd_real M[FFWD_MAX_DOF * FFWD_MAX_DOF], T[16];
    uint32_t i, j, n = m->dof;
    *ke = 0;
    *pe = 0;
    CHECK(ffwd_mass_matrix(m, &g_work, q, M) == FFWD_OK, "mass matrix");
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++) *ke += 0.5 * (double)qd[i] * (double)M[i * n + j] * (double)qd[j];
    for (i = 0; i < n; i++) {
        CHECK(ffwd_tool_pose(&g_probe[i], &g_probe_work[i], q, T) == FFWD_OK, "probe pose");
        *pe -= (double)m->joint[i].inertia[0]
               * ((double)m->gravity[0] * T[3] + (double)m->gravity[1] * T[7] + (double)m->gravity[2] * T[11]);
    }
}

/* relative energy drift over SECONDS with zero torque: max |E - E0| / max KE */
static double drift(uint32_t integrator, double *rel_e0)
{
    ffwd_plant_config cfg;
    ffwd_real q0[FFWD_MAX_DOF], qd0[FFWD_MAX_DOF], tau[FFWD_MAX_DOF], q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF];
    double ke, pe, e0, worst = 0, ke_max = 0;
    long k, steps = (long)(SECONDS / DT + 0.5);
    uint32_t i, n = g_model.dof;
    for (i = 0; i < n; i++) {
        q0[i] = (ffwd_real)(0.3 * (double)i - 0.4);
        qd0[i] = (ffwd_real)(1.0 - 0.3 * (double)i);
        tau[i] = 0;
    }
    CHECK(ffwd_plant_config_default(&cfg, (ffwd_real)DT) == FFWD_OK, "config");
    cfg.integrator = integrator;
    CHECK(ffwd_plant_init(&g_plant, &g_model, &cfg, q0, qd0) == FFWD_OK, "init");
    energy(&g_model, q0, qd0, &ke, &pe);
    e0 = ke + pe;
    ke_max = ke;
    for (k = 0; k < steps; k++) {
        CHECK(ffwd_plant_step(&g_plant, tau) == FFWD_OK, "step %ld", k);
        if (k % 10 == 9) {
            ffwd_plant_state(&g_plant, q, qd);
            energy(&g_model, q, qd, &ke, &pe);
            if (fabs(ke + pe - e0) > worst) worst = fabs(ke + pe - e0);
            if (ke > ke_max) ke_max = ke;
        }
    }
    *rel_e0 = worst / fabs(e0);
    return worst / ke_max;
}

static void test_energy(void)
{
    double e_rk4, e_eu, r_rk4, r_eu;
    g_rng = 12345;
    rand_model(&g_model, 4, 0, 0);
    frictionless(&g_model);
    CHECK(ffwd_model_check(&g_model) == FFWD_OK, "model");
    energy_setup(&g_model);
    e_rk4 = drift(FFWD_PLANT_RK4, &r_rk4);
    e_eu = drift(FFWD_PLANT_EULER, &r_eu);
    printf("energy drift over %.0f s at %.0f Hz, 4-joint frictionless arm (max |E-E0| / max KE; / |E0|):\n"
           "  rk4   %.3e  (%.3e)\n  euler %.3e  (%.3e)\n", SECONDS, 1 / DT, e_rk4, r_rk4, e_eu, r_eu);
#ifndef FFWD_SINGLE
    CHECK(e_rk4 < 1e-6, "rk4 energy drift %.3e >= 1e-6", e_rk4);
#endif
    CHECK(e_eu > e_rk4, "semi-implicit Euler drifts more than RK4 (%.3e vs %.3e)", e_eu, e_rk4);
    CHECK(e_eu < 0.1, "semi-implicit Euler stays bounded (%.3e)", e_eu);
}

static void init_plain(ffwd_plant *p, ffwd_plant_config *cfg)
{
    ffwd_real q0[FFWD_MAX_DOF] = {0};
    CHECK(ffwd_plant_init(p, &g_model, cfg, q0, NULL) == FFWD_OK, "init");
}

static void test_saturation_and_bad_input(void)
{
    ffwd_plant_config cfg;
    ffwd_real tau[FFWD_MAX_DOF] = {0}, q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF], q2[FFWD_MAX_DOF];
    uint32_t i, n;
    g_rng = 777;
    rand_model(&g_model, 3, 0, 1);
    n = g_model.dof;
    for (i = 0; i < n; i++) {
        g_model.joint[i].has_limits |= FFWD_LIM_TORQUE;
        g_model.joint[i].tau_max = (ffwd_real)(5.0 + (double)i);
    }
    CHECK(ffwd_model_check(&g_model) == FFWD_OK, "model");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    init_plain(&g_plant, &cfg);
    for (i = 0; i < n; i++) tau[i] = (ffwd_real)(i % 2 ? -100.0 : 100.0);
    CHECK(ffwd_plant_step(&g_plant, tau) == FFWD_OK, "step");
    for (i = 0; i < n; i++)
        CHECK(fabs((double)g_plant.tau[i]) == 5.0 + (double)i, "joint %u clamped to its limit (%g)",
              i, (double)g_plant.tau[i]);
    CHECK(g_plant.saturated_steps == 1, "one saturated step counted");
    tau[0] = 1;
    CHECK(ffwd_plant_step(&g_plant, tau) == FFWD_OK, "step");
    CHECK(g_plant.saturated_steps == 2, "second saturated step counted");
    for (i = 0; i < n; i++) tau[i] = 0;
    CHECK(ffwd_plant_step(&g_plant, tau) == FFWD_OK, "step");
    CHECK(g_plant.saturated_steps == 2, "unsaturated step not counted");
    /* bad input: refused, state unchanged */
    ffwd_plant_state(&g_plant, q, qd);
    tau[1] = (ffwd_real)NAN;
    CHECK(ffwd_plant_step(&g_plant, tau) == FFWD_E_NONFINITE, "NaN torque refused");
    tau[1] = (ffwd_real)INFINITY;
    CHECK(ffwd_plant_step(&g_plant, tau) == FFWD_E_NONFINITE, "Inf torque refused");
    ffwd_plant_state(&g_plant, q2, NULL);
    CHECK(max_diff(q, q2, n) == 0 && g_plant.steps == 3, "state unchanged by refused steps");
    CHECK(ffwd_plant_step(&g_plant, NULL) == FFWD_E_ARG, "NULL torque");
    CHECK(ffwd_plant_step(NULL, tau) == FFWD_E_ARG, "NULL plant");
    /* bad configs */
    cfg.dt = 0;
    CHECK(ffwd_plant_init(&g_plant2, &g_model, &cfg, q, NULL) == FFWD_E_ARG, "dt 0");
    cfg.dt = (ffwd_real)NAN;
    CHECK(ffwd_plant_init(&g_plant2, &g_model, &cfg, q, NULL) == FFWD_E_NONFINITE, "dt NaN");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.integrator = 7;
    CHECK(ffwd_plant_init(&g_plant2, &g_model, &cfg, q, NULL) == FFWD_E_ARG, "integrator");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.delay = FFWD_PLANT_MAX_DELAY + 1;
    CHECK(ffwd_plant_init(&g_plant2, &g_model, &cfg, q, NULL) == FFWD_E_ARG, "delay");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.substeps = 0;
    CHECK(ffwd_plant_init(&g_plant2, &g_model, &cfg, q, NULL) == FFWD_E_ARG, "substeps");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.noise_q = -1;
    CHECK(ffwd_plant_init(&g_plant2, &g_model, &cfg, q, NULL) == FFWD_E_ARG, "noise");
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    q[0] = (ffwd_real)NAN;
    CHECK(ffwd_plant_init(&g_plant2, &g_model, &cfg, q, NULL) == FFWD_E_NONFINITE, "q0 NaN");
    CHECK(ffwd_plant_measure(&g_plant2, q, qd) != FFWD_OK, "failed init leaves the plant unusable");
}

static void test_sensor(void)
{
    enum { K = 5, STEPS = 40 };
    ffwd_plant_config cfg;
    ffwd_real tau[FFWD_MAX_DOF], hist[STEPS + 1][FFWD_MAX_DOF], q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF];
    ffwd_real a[FFWD_MAX_DOF], b[FFWD_MAX_DOF];
    uint32_t i, n;
    int k;
    double cpr = 4096, quantum, sum = 0, sum2 = 0, err;
    long count = 0;
    g_rng = 99;
    rand_model(&g_model, 3, 0, 0);
    n = g_model.dof;
    CHECK(ffwd_model_check(&g_model) == FFWD_OK, "model");
    for (i = 0; i < n; i++) tau[i] = (ffwd_real)(1.0 + (double)i);
    /* delay of K steps: the measurement equals the true state K steps earlier */
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.delay = K;
    init_plain(&g_plant, &cfg);
    for (k = 0; k <= STEPS; k++) {
        ffwd_plant_state(&g_plant, hist[k], NULL);
        ffwd_plant_measure(&g_plant, q, NULL);
        CHECK(max_diff(q, hist[k >= K ? k - K : 0], n) == 0, "delayed sample at step %d", k);
        ffwd_plant_step(&g_plant, tau);
    }
    /* quantisation: a multiple of 2 pi / cpr within half a count of the truth */
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.counts_per_rev = (ffwd_real)cpr;
    quantum = 2 * 3.14159265358979323846 / cpr;
    init_plain(&g_plant, &cfg);
    for (k = 0; k < STEPS; k++) {
        ffwd_plant_step(&g_plant, tau);
        ffwd_plant_measure(&g_plant, q, qd);
        ffwd_plant_state(&g_plant, a, b);
        for (i = 0; i < n; i++) {
            double c = (double)q[i] / quantum;
            CHECK(fabs(c - floor(c + 0.5)) < 1e-6, "quantised joint %u", i);
            CHECK(fabs((double)q[i] - (double)a[i]) <= 0.5 * quantum * (1 + 1e-9), "within half a count");
            CHECK(qd[i] == b[i], "velocity not quantised");
        }
    }
    /* noise: same seed, same numbers; different seed, different; standard deviation */
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    cfg.noise_q = (ffwd_real)1e-3;
    cfg.noise_qd = (ffwd_real)1e-2;
    cfg.seed = 42;
    init_plain(&g_plant, &cfg);
    init_plain(&g_plant2, &cfg);
    for (k = 0; k < 2000; k++) {
        ffwd_plant_step(&g_plant, tau);
        ffwd_plant_step(&g_plant2, tau);
        ffwd_plant_measure(&g_plant, q, NULL);
        ffwd_plant_measure(&g_plant2, a, NULL);
        ffwd_plant_state(&g_plant, b, NULL);
        CHECK(max_diff(q, a, n) == 0, "same seed, same noise");
        for (i = 0; i < n; i++) {
            err = (double)q[i] - (double)b[i];
            sum += err;
            sum2 += err * err;
            count++;
        }
    }
    err = sqrt(sum2 / (double)count - (sum / (double)count) * (sum / (double)count));
    /* 6000 samples: the sample standard deviation is within ~2% (1 sigma) of 1e-3 */
    CHECK(fabs(err - 1e-3) < 0.1e-3, "position noise std %.4g, expected 1e-3", err);
    CHECK(fabs(sum / (double)count) < 0.1e-3, "noise mean %.3g", sum / (double)count);
    cfg.seed = 43;
    init_plain(&g_plant2, &cfg);
    ffwd_plant_step(&g_plant2, tau);
    init_plain(&g_plant, &cfg);
    cfg.seed = 42;
    init_plain(&g_plant, &cfg);
    ffwd_plant_step(&g_plant, tau);
    ffwd_plant_measure(&g_plant, q, NULL);
    ffwd_plant_measure(&g_plant2, a, NULL);
    CHECK(max_diff(q, a, n) > 0, "another seed, other noise");
}

static void test_brake(void)
{
    ffwd_plant_config cfg;
    ffwd_real tau[FFWD_MAX_DOF] = {0}, q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF], q2[FFWD_MAX_DOF];
    uint32_t n;
    int k;
    g_rng = 5;
    rand_model(&g_model, 4, 0, 0);
    n = g_model.dof;
    ffwd_plant_config_default(&cfg, (ffwd_real)DT);
    init_plain(&g_plant, &cfg);
    for (k = 0; k < 50; k++) ffwd_plant_step(&g_plant, tau); /* falls under gravity */
    ffwd_plant_state(&g_plant, q, qd);
    CHECK(max_abs(qd, n) > 0, "moving before the brake");
    CHECK(ffwd_plant_brake(&g_plant, 1) == FFWD_OK, "brake");
    ffwd_plant_state(&g_plant, NULL, qd);
    CHECK(max_abs(qd, n) == 0, "brake zeroes the velocity");
    for (k = 0; k < 100; k++) ffwd_plant_step(&g_plant, tau);
    ffwd_plant_state(&g_plant, q2, qd);
    CHECK(max_diff(q, q2, n) == 0 && max_abs(qd, n) == 0, "held by the brake under gravity");
    CHECK(g_plant.braked_steps == 100, "braked steps counted (%llu)", (unsigned long long)g_plant.braked_steps);
    CHECK(ffwd_plant_brake(&g_plant, 0) == FFWD_OK, "release");
    ffwd_plant_step(&g_plant, tau);
    ffwd_plant_state(&g_plant, q2, qd);
    CHECK(max_diff(q, q2, n) > 0, "moves again after release");
}

/* CRC-32 (IEEE) check value of "123456789" is 0xCBF43926 (the published check value of
 * the CRC-32 used by zlib and Ethernet, from memory). */
static void test_frame_codec(void)
{
    static uint8_t buf[1024], mut[1024];
    double v[SF_MAX_VALUES], w[SF_MAX_VALUES];
    sf_header h, back;
    size_t len;
    long k, accepted = 0;
    int i;
    CHECK(sf_crc32((const uint8_t *)"123456789", 9) == 0xCBF43926u, "CRC-32 check value");
    memset(&h, 0, sizeof h);
    h.kind = SF_COMMAND;
    h.n = 6;
    h.seq = 0xFFFFFFF0u;
    h.stamp = 0x0123456789ABCDEFull;
    for (i = 0; i < 6; i++) v[i] = srand1(100);
    len = sf_encode(buf, sizeof buf, &h, v);
    CHECK(len == 28 + 48, "frame length");
    CHECK(sf_decode(buf, len, &back, w) == SF_OK, "round trip");
    CHECK(back.seq == h.seq && back.stamp == h.stamp && back.n == 6 && back.kind == SF_COMMAND,
          "header round trip");
    CHECK(memcmp(v, w, 6 * sizeof(double)) == 0, "values round trip");
    h.n = SF_MAX_VALUES + 1;
    CHECK(sf_encode(buf, sizeof buf, &h, v) == 0, "too many values refused");
    h.n = 6;
    len = sf_encode(buf, sizeof buf, &h, v);
    for (k = 0; k < 200000; k++) {
        size_t n;
        int why;
        if (k % 2) { /* random bytes of random length */
            n = (size_t)(urand() * 600.0);
            for (i = 0; i < (int)n; i++) mut[i] = (uint8_t)(urand() * 256.0);
            if (n >= 4 && urand() < 0.5) memcpy(mut, "FFWD\1", n >= 5 ? 5 : 4);
        } else {   /* a valid frame with 1-3 flipped bits or a changed length */
            n = len;
            memcpy(mut, buf, len);
            if (urand() < 0.2) {
                n = (size_t)(urand() * 600.0);
                if (n == len) n = len - 1;
                if (n > len) memset(mut + len, 0, n - len);
            } else {
                int flips = 1 + (int)(urand() * 3.0);
                for (i = 0; i < flips; i++) {
                    size_t at = (size_t)(urand() * (double)len);
                    mut[at] ^= (uint8_t)(1u << (int)(urand() * 8.0));
                }
            }
        }
        why = sf_decode(mut, n, &back, w);
        CHECK(why >= SF_OK && why < SF_REASONS, "reason code in range");
        if (why == SF_OK && !(n == len && memcmp(mut, buf, len) == 0)) {
            accepted++; /* changed, yet accepted (flips that cancel leave the original) */
            CHECK(n == SF_MIN_LEN + 8u * back.n && n <= SF_MAX_LEN, "accepted length consistent");
        }
        if (n < SF_MIN_LEN) CHECK(why == SF_SHORT, "short");
        if (n > SF_MAX_LEN) CHECK(why == SF_OVERSIZED, "oversized");
    }
    /* CRC-32 detects all 1-3 bit errors in frames this short; random frames pass
     * with probability 2^-32: expect none */
    CHECK(accepted == 0, "%ld corrupted frames accepted", accepted);
}

int main(void)
{
    test_energy();
    test_saturation_and_bad_input();
    test_sensor();
    test_brake();
    test_frame_codec();
    return finish("test_plant");
}
