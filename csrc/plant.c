/* plant.c - simulated arm for closed-loop tests (see ffwd_plant.h).
 *
 * Fixed-step integration of ffwd_forward_dynamics with torque saturation and a
 * sensor model (encoder quantisation, seeded noise, delay of k steps).
 * No heap, no stdio, no globals, no libm. */
#include "ffwd.h"

#define PLANT_PI ((ffwd_real)3.14159265358979323846)

static int plant_finite(ffwd_real x)
{
    /* x - x is 0 for finite x and NaN for NaN or +-Inf. */
    ffwd_real d = x - x;
    return d == d;
}

static int plant_vec_finite(const ffwd_real *v, uint32_t n)
{
    uint32_t i;
    int ok = 1;
    for (i = 0; i < n; ++i) {
        ok &= plant_finite(v[i]);
    }
    return ok;
}

static void plant_zero(ffwd_real *v, uint32_t n)
{
    uint32_t i;
    if (v == 0) {
        return;
    }
    for (i = 0; i < n; ++i) {
        v[i] = (ffwd_real)0;
    }
}

/* xorshift64* (Marsaglia's xorshift with a multiplicative output scramble). */
static uint64_t plant_rand(uint64_t *s)
{
    uint64_t x = *s;
    x ^= x >> 12;
    x ^= x << 25;
    x ^= x >> 27;
    *s = x;
    return x * 0x2545F4914F6CDD1DULL;
}

/* Approximately standard normal: sum of 12 uniforms on [0, 1) minus 6 (variance 1). */
static ffwd_real plant_normal(uint64_t *s)
{
    double sum = 0.0;
    uint32_t k;
    for (k = 0; k < 12u; ++k) {
        sum += (double)(plant_rand(s) >> 11) * (1.0 / 9007199254740992.0);
    }
    return (ffwd_real)(sum - 6.0);
}

/* Nearest multiple of quantum (quantum > 0); values beyond +-2^52 counts are kept. */
static ffwd_real plant_quantise(ffwd_real x, ffwd_real quantum)
{
    double c = (double)x / (double)quantum;
    int64_t n;
    if (c > 4503599627370496.0 || c < -4503599627370496.0) {
        return x;
    }
    n = (int64_t)(c >= 0.0 ? c + 0.5 : c - 0.5);
    return (ffwd_real)((double)n * (double)quantum);
}

/* Takes a sensor sample of the current true state into the next ring slot. */
static void plant_sample(ffwd_plant *p)
{
    const uint32_t n = p->model->dof;
    const uint32_t slots = FFWD_PLANT_MAX_DELAY + 1u;
    uint32_t i;
    uint32_t h = p->head + 1u;
    if (h >= slots) {
        h = 0u;
    }
    for (i = 0; i < n; ++i) {
        ffwd_real q = p->q[i];
        ffwd_real qd = p->qd[i];
        if (p->cfg.counts_per_rev > (ffwd_real)0) {
            ffwd_real per = p->model->joint[i].type == FFWD_REVOLUTE ? 2 * PLANT_PI : (ffwd_real)1;
            q = plant_quantise(q, per / p->cfg.counts_per_rev);
        }
        if (p->cfg.noise_q > (ffwd_real)0) {
            q += p->cfg.noise_q * plant_normal(&p->rng);
        }
        if (p->cfg.noise_qd > (ffwd_real)0) {
            qd += p->cfg.noise_qd * plant_normal(&p->rng);
        }
        p->ring_q[h][i] = q;
        p->ring_qd[h][i] = qd;
    }
    p->head = h;
}

static void plant_fill_history(ffwd_plant *p)
{
    uint32_t k;
    for (k = 0; k <= FFWD_PLANT_MAX_DELAY; ++k) {
        plant_sample(p);
    }
}

ffwd_status ffwd_plant_config_default(ffwd_plant_config *cfg, ffwd_real dt)
{
    if (cfg == 0) {
        return FFWD_E_ARG;
    }
    cfg->dt = dt;
    cfg->integrator = FFWD_PLANT_RK4;
    cfg->substeps = 1u;
    cfg->delay = 0u;
    cfg->saturate = 1u;
    cfg->counts_per_rev = (ffwd_real)0;
    cfg->noise_q = (ffwd_real)0;
    cfg->noise_qd = (ffwd_real)0;
    cfg->seed = 1u;
    if (!plant_finite(dt) || dt <= (ffwd_real)0) {
        return FFWD_E_ARG;
    }
    return FFWD_OK;
}

static ffwd_status plant_check_config(const ffwd_plant_config *c)
{
    if (!plant_finite(c->dt) || !plant_finite(c->counts_per_rev) || !plant_finite(c->noise_q)
        || !plant_finite(c->noise_qd)) {
        return FFWD_E_NONFINITE;
    }
    if (c->dt <= (ffwd_real)0 || c->dt > (ffwd_real)1) {
        return FFWD_E_ARG;
    }
    if (c->integrator != FFWD_PLANT_EULER && c->integrator != FFWD_PLANT_RK4) {
        return FFWD_E_ARG;
    }
    if (c->substeps < 1u || c->substeps > FFWD_PLANT_MAX_SUBSTEPS) {
        return FFWD_E_ARG;
    }
    if (c->delay > FFWD_PLANT_MAX_DELAY) {
        return FFWD_E_ARG;
    }
    if (c->counts_per_rev < (ffwd_real)0 || c->noise_q < (ffwd_real)0 || c->noise_qd < (ffwd_real)0) {
        return FFWD_E_ARG;
    }
    return FFWD_OK;
}

ffwd_status ffwd_plant_init(ffwd_plant *p, const ffwd_model *m, const ffwd_plant_config *cfg,
                            const ffwd_real *q0, const ffwd_real *qd0)
{
    ffwd_status s;
    uint32_t i;
    uint32_t k;
    if (p == 0) {
        return FFWD_E_ARG;
    }
    p->model = 0;
    if (m == 0 || cfg == 0 || q0 == 0) {
        return FFWD_E_ARG;
    }
    s = plant_check_config(cfg);
    if (s != FFWD_OK) {
        return s;
    }
    s = ffwd_work_init(&p->work, m);
    if (s != FFWD_OK) {
        return s;
    }
    if (!plant_vec_finite(q0, m->dof) || (qd0 != 0 && !plant_vec_finite(qd0, m->dof))) {
        return FFWD_E_NONFINITE;
    }
    p->model = m;
    p->cfg = *cfg;
    for (i = 0; i < FFWD_MAX_DOF; ++i) {
        p->q[i] = i < m->dof ? q0[i] : (ffwd_real)0;
        p->qd[i] = (i < m->dof && qd0 != 0) ? qd0[i] : (ffwd_real)0;
        p->tau[i] = (ffwd_real)0;
    }
    for (k = 0; k <= FFWD_PLANT_MAX_DELAY; ++k) {
        plant_zero(p->ring_q[k], FFWD_MAX_DOF);
        plant_zero(p->ring_qd[k], FFWD_MAX_DOF);
    }
    p->t = (ffwd_real)0;
    p->steps = 0u;
    p->saturated_steps = 0u;
    p->braked_steps = 0u;
    p->rng = cfg->seed != 0u ? cfg->seed : 0x9E3779B97F4A7C15ULL;
    p->braked = 0u;
    p->head = 0u;
    plant_fill_history(p);
    return FFWD_OK;
}

static ffwd_status plant_ready(const ffwd_plant *p)
{
    if (p == 0) {
        return FFWD_E_ARG;
    }
    if (p->model == 0 || p->work.model != p->model) {
        return FFWD_E_MODEL;
    }
    return FFWD_OK;
}

ffwd_status ffwd_plant_set_state(ffwd_plant *p, const ffwd_real *q, const ffwd_real *qd)
{
    ffwd_status s = plant_ready(p);
    uint32_t i;
    uint32_t n;
    if (s != FFWD_OK) {
        return s;
    }
    if (q == 0) {
        return FFWD_E_ARG;
    }
    n = p->model->dof;
    if (!plant_vec_finite(q, n) || (qd != 0 && !plant_vec_finite(qd, n))) {
        return FFWD_E_NONFINITE;
    }
    for (i = 0; i < n; ++i) {
        p->q[i] = q[i];
        p->qd[i] = qd != 0 ? qd[i] : (ffwd_real)0;
    }
    p->braked = 0u;
    plant_fill_history(p);
    return FFWD_OK;
}

/* x' = x + h * k, for the q and qd halves of the state. */
static void plant_axpy(ffwd_real *out, const ffwd_real *x, ffwd_real h, const ffwd_real *k, uint32_t n)
{
    uint32_t i;
    for (i = 0; i < n; ++i) {
        out[i] = x[i] + h * k[i];
    }
}

/* One sub-step of length h from (q, qd), in place. */
static ffwd_status plant_substep(ffwd_plant *p, ffwd_real *q, ffwd_real *qd, const ffwd_real *tau,
                                 ffwd_real h)
{
    const ffwd_model *m = p->model;
    const uint32_t n = m->dof;
    /* stage accelerations and states in the plant's scratch (tmp[0..2] hold q, qd, tau) */
    ffwd_real *a1 = p->tmp[3], *a2 = p->tmp[4], *a3 = p->tmp[5], *a4 = p->tmp[6];
    ffwd_real *q2 = p->tmp[7], *v2 = p->tmp[8], *q3 = p->tmp[9], *v3 = p->tmp[10];
    ffwd_real *q4 = p->tmp[11], *v4 = p->tmp[12];
    ffwd_status s;
    uint32_t i;
    s = ffwd_forward_dynamics(m, &p->work, q, qd, tau, a1);
    if (s != FFWD_OK) {
        return s;
    }
    if (p->cfg.integrator == FFWD_PLANT_EULER) {
        for (i = 0; i < n; ++i) {
            qd[i] += h * a1[i];
            q[i] += h * qd[i];
        }
        return FFWD_OK;
    }
    /* classic RK4 on x = (q, qd), x' = (qd, qdd(q, qd, tau)) */
    plant_axpy(q2, q, h / 2, qd, n);
    plant_axpy(v2, qd, h / 2, a1, n);
    s = ffwd_forward_dynamics(m, &p->work, q2, v2, tau, a2);
    if (s != FFWD_OK) {
        return s;
    }
    plant_axpy(q3, q, h / 2, v2, n);
    plant_axpy(v3, qd, h / 2, a2, n);
    s = ffwd_forward_dynamics(m, &p->work, q3, v3, tau, a3);
    if (s != FFWD_OK) {
        return s;
    }
    plant_axpy(q4, q, h, v3, n);
    plant_axpy(v4, qd, h, a3, n);
    s = ffwd_forward_dynamics(m, &p->work, q4, v4, tau, a4);
    if (s != FFWD_OK) {
        return s;
    }
    for (i = 0; i < n; ++i) {
        q[i] += h / 6 * (qd[i] + 2 * v2[i] + 2 * v3[i] + v4[i]);
        qd[i] += h / 6 * (a1[i] + 2 * a2[i] + 2 * a3[i] + a4[i]);
    }
    return FFWD_OK;
}

ffwd_status ffwd_plant_step(ffwd_plant *p, const ffwd_real *tau)
{
    ffwd_real *q, *qd, *u;
    ffwd_status s = plant_ready(p);
    uint32_t i;
    uint32_t k;
    uint32_t n;
    uint32_t clamped = 0u;
    ffwd_real h;
    if (s != FFWD_OK) {
        return s;
    }
    if (tau == 0) {
        return FFWD_E_ARG;
    }
    n = p->model->dof;
    if (!plant_vec_finite(tau, n)) {
        return FFWD_E_NONFINITE;
    }
    q = p->tmp[0];
    qd = p->tmp[1];
    u = p->tmp[2];
    for (i = 0; i < n; ++i) {
        const ffwd_joint *j = &p->model->joint[i];
        u[i] = tau[i];
        if (p->cfg.saturate != 0u && (j->has_limits & FFWD_LIM_TORQUE) != 0u) {
            if (u[i] > j->tau_max) {
                u[i] = j->tau_max;
                clamped = 1u;
            } else if (u[i] < -j->tau_max) {
                u[i] = -j->tau_max;
                clamped = 1u;
            }
        }
        q[i] = p->q[i];
        qd[i] = p->qd[i];
    }
    if (p->braked == 0u) {
        h = p->cfg.dt / (ffwd_real)p->cfg.substeps;
        for (k = 0; k < p->cfg.substeps; ++k) {
            s = plant_substep(p, q, qd, u, h);
            if (s != FFWD_OK) {
                return s;
            }
        }
        if (!plant_vec_finite(q, n) || !plant_vec_finite(qd, n)) {
            return FFWD_E_NONFINITE;
        }
    }
    for (i = 0; i < n; ++i) {
        p->q[i] = q[i];
        p->qd[i] = qd[i];
        p->tau[i] = u[i];
    }
    p->t += p->cfg.dt;
    p->steps += 1u;
    p->saturated_steps += clamped;
    p->braked_steps += p->braked;
    plant_sample(p);
    return FFWD_OK;
}

ffwd_status ffwd_plant_measure(const ffwd_plant *p, ffwd_real *q, ffwd_real *qd)
{
    ffwd_status s = plant_ready(p);
    const uint32_t slots = FFWD_PLANT_MAX_DELAY + 1u;
    uint32_t idx;
    uint32_t i;
    if (s != FFWD_OK) {
        plant_zero(q, p != 0 && p->model != 0 ? p->model->dof : 0u);
        plant_zero(qd, p != 0 && p->model != 0 ? p->model->dof : 0u);
        return s;
    }
    idx = (p->head + slots - p->cfg.delay) % slots;
    for (i = 0; i < p->model->dof; ++i) {
        if (q != 0) {
            q[i] = p->ring_q[idx][i];
        }
        if (qd != 0) {
            qd[i] = p->ring_qd[idx][i];
        }
    }
    return FFWD_OK;
}

ffwd_status ffwd_plant_state(const ffwd_plant *p, ffwd_real *q, ffwd_real *qd)
{
    ffwd_status s = plant_ready(p);
    uint32_t i;
    if (s != FFWD_OK) {
        return s;
    }
    for (i = 0; i < p->model->dof; ++i) {
        if (q != 0) {
            q[i] = p->q[i];
        }
        if (qd != 0) {
            qd[i] = p->qd[i];
        }
    }
    return FFWD_OK;
}

ffwd_status ffwd_plant_brake(ffwd_plant *p, int on)
{
    ffwd_status s = plant_ready(p);
    uint32_t i;
    if (s != FFWD_OK) {
        return s;
    }
    if (on != 0) {
        for (i = 0; i < p->model->dof; ++i) {
            p->qd[i] = (ffwd_real)0;
        }
        p->braked = 1u;
    } else {
        p->braked = 0u;
    }
    return FFWD_OK;
}
