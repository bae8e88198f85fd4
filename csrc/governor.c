/* governor.c - the online speed-override governor (see ffwd_governor.h).
 *
 * Notation: kappa = ds/dt (the applied override), x = kappa^2, u = d kappa/dt.
 * Along the path every limit is a row  alpha u + beta x + gamma kappa + delta <= 0
 * (torque: alpha = a = M q', beta = b = M q'' + C(q, q') q', gamma = viscous q',
 * delta = c + Coulomb - tau_max; acceleration: alpha = q', beta = q''), giving an
 * interval of u for each kappa. Per pushed sample we store its braking rows and its
 * largest admissible x; a backward pass over the window (x = 0 at its last sample)
 * gives the safe curve Xs; each step picks u by a jerk-bounded tracker of the
 * command and clips it into the limits (the torque exactly: tau0 + a u from the
 * inverse dynamics at the current point) and under the safe curve; a u is applied only
 * if a braking plan from where it leads is verified. Where the window holds the speed,
 * the plan that the fit accepts repeats u one cycle before it brakes, so the next cycle
 * may apply that u again without a check of its own (held cycles).
 * ffwd/twin/governor.py is the same algorithm in numpy-free Python, operation for
 * operation; tests/test_governor_equivalence.py keeps them equal. Only here, as
 * shortcuts that give the same output: the kept boxes of the box tests, the ramp runs
 * of plan D, the backward pass's stop at an unchanged sample, the order in which push
 * tries the lower bounds for dominance, and one sin/cos for the dynamics at a point.
 */
#include "spatial.h"

#define BIG FR(1e30)
#define CAP FR(1e15)
#define ALPHA_TOL FR(1e-12)
#define REST_TOL FR(1e-12)
#define GOV_BISECT 4u   /* halvings between the stored plan's u and the step's */
#define GOV_FIT_ITER 20u  /* stop_fit_u: the width of this many halvings, at most this many steps */
#define GOV_EXACT_CYCLES 2048u  /* plan D cycles checked one by one at most (pass 2) */
#define GOV_HOLD 1u   /* where the window holds the speed: cycles plan D repeats u before it brakes */

#if defined(__GNUC__) || defined(__clang__)
#ifdef FFWD_SINGLE
#define GOV_SQRT(x) __builtin_sqrtf(x)
#else
#define GOV_SQRT(x) __builtin_sqrt(x)
#endif
#else
/* Newton's iteration from a power-of-two start; enough steps for double precision. */
static ffwd_real gov_sqrt_newton(ffwd_real x)
{
    ffwd_real r = FR(1);
    int i;
    if (!(x > FR(0)))
        return FR(0);
    for (i = 0; i < 1100 && r * r < x; i++)
        r *= FR(2);
    for (i = 0; i < 1100 && r * r > FR(4) * x; i++)
        r *= FR(0.5);
    for (i = 0; i < 8; i++)
        r = FR(0.5) * (r + x / r);
    return r;
}
#define GOV_SQRT(x) gov_sqrt_newton(x)
#endif

static inline ffwd_real sqrt0(ffwd_real x) { return GOV_SQRT(x > FR(0) ? x : FR(0)); }
static inline ffwd_real minr(ffwd_real a, ffwd_real b) { return b < a ? b : a; }
static inline ffwd_real maxr(ffwd_real a, ffwd_real b) { return b > a ? b : a; }
static inline ffwd_real absr(ffwd_real a) { return abs_real(a); }   /* (spatial.h: no branch) */
static inline ffwd_real sgnr(ffwd_real a) { return a > FR(0) ? FR(1) : (a < FR(0) ? FR(-1) : FR(0)); }

/* Largest k >= 0 with A t^2 + B t + C <= 0 on all of [0, k], given C <= 0
 * (0 when C > 0, CAP when there is no positive root). */
static inline ffwd_real root1(ffwd_real A, ffwd_real B, ffwd_real C)
{
    ffwd_real disc = B * B - FR(4) * A * C;
    ffwd_real r;
    if (C > FR(0))
        return FR(0);
    if (B > FR(0))
        r = disc >= FR(0) ? (FR(-2) * C) / (B + sqrt0(disc)) : CAP;
    else
        r = A > FR(0) ? (sqrt0(disc) - B) / (FR(2) * A) : CAP;
    return minr(r, CAP);
}

/* root1 squared: the largest x = k^2; without a square root when B = 0. */
static inline ffwd_real xroot(ffwd_real A, ffwd_real B, ffwd_real C)
{
    ffwd_real r;
    if (C > FR(0))
        return FR(0);
    if (B == FR(0))
        return A > FR(0) ? minr(-C / A, BIG) : BIG;
    r = root1(A, B, C);
    return r * r;
}

static const ffwd_gov_slot *slot_at_c(const ffwd_governor *g, uint32_t k)
{
    uint32_t i = g->head + k;     /* head, k < horizon: one wrap at most */
    return &g->slot[i >= g->cfg.horizon ? i - g->cfg.horizon : i];
}

static ffwd_gov_slot *slot_at(ffwd_governor *g, uint32_t k)
{
    return (ffwd_gov_slot *)slot_at_c(g, k);   /* g is not const: the slot may be written */
}

/* The slot after and before sl in the ring of slots [first, end) (a walk over the
 * window without index arithmetic; the caller keeps first and end in registers). */
static inline ffwd_gov_slot *ring_next(ffwd_gov_slot *first, const ffwd_gov_slot *end, ffwd_gov_slot *sl)
{
    return sl + 1 == end ? first : sl + 1;
}

static inline ffwd_gov_slot *ring_prev(ffwd_gov_slot *first, ffwd_gov_slot *end, ffwd_gov_slot *sl)
{
    return sl == first ? end - 1 : sl - 1;
}

static int cfg_finite(const ffwd_gov_config *c)
{
    ffwd_real v[6];
    v[0] = c->dt; v[1] = c->ds; v[2] = c->override_max;
    v[3] = c->rate_max; v[4] = c->rate_rate_max; v[5] = c->margin;
    return ffwd_finite_(v, 6);
}

ffwd_status ffwd_governor_init(ffwd_governor *g, const ffwd_model *model, ffwd_work *work,
                               const ffwd_gov_config *cfg)
{
    const uint32_t need = FFWD_LIM_TORQUE | FFWD_LIM_VELOCITY | FFWD_LIM_ACCELERATION;
    ffwd_real reach;
    uint32_t j, p;
    if (g == NULL)
        return FFWD_E_ARG;
    g->model = NULL;
    g->work = NULL;
    g->count = 0;
    g->head = 0;
    g->fault_index = 0;
    g->fault_joint = -1;
    g->fault_limit = 0;
    if (model == NULL || work == NULL || cfg == NULL)
        return FFWD_E_ARG;
    if (!cfg_finite(cfg))
        return FFWD_E_NONFINITE;
    if (!(cfg->dt > FR(0)) || !(cfg->ds > FR(0)) || cfg->horizon < 2u
        || cfg->horizon > (uint32_t)FFWD_GOV_MAX_HORIZON || !(cfg->override_max > FR(0))
        || !(cfg->rate_max > FR(0)) || !(cfg->rate_rate_max > FR(0))
        || !(cfg->margin >= FR(0)) || !(cfg->margin < FR(0.5)))
        return FFWD_E_ARG;
    if (!ffwd_bound_(model, work))
        return FFWD_E_MODEL;
    for (j = 0; j < model->dof; j++) {
        uint32_t missing = need & ~model->joint[j].has_limits;
        if (missing != 0u) {
            g->fault_joint = (int32_t)j;
            g->fault_limit = missing & (0u - missing);   /* lowest missing bit */
            return FFWD_E_LIMIT;
        }
    }
    g->model = model;
    g->work = work;
    g->cfg = *cfg;
    g->base = 0;
    g->pushed = 0;
    g->finished = 0;
    g->dirty = 0;
    g->sigma = FR(0);
    g->kappa = FR(0);
    g->u = FR(0);
    g->u_last = FR(0);
    g->plan = FFWD_GOV_PLAN_REST;
    g->any_jerk = 0;
    g->pc_seg = FFWD_GOV_MAX_HORIZON;
    for (j = 0; j < model->dof; j++)
        g->any_jerk |= (model->joint[j].has_limits & FFWD_LIM_JERK) != 0u;
    ffwd_zero_(g->qdd_prev, FFWD_MAX_DOF);
    g->plan_D = FR(0);
    g->plan_Vp = FR(0);
    g->hold_left = 0u;
    g->try_first = 1u;
    g->try_last = 0u;
    g->mins_ok = 0u;
    g->clean = 0u;
    ffwd_zero_(g->am2, FFWD_MAX_DOF);
    for (j = 0; j < model->dof; j++)    /* for the box tests of plan D */
        g->am2[j] = (FR(1) - FR(2) * cfg->margin) * model->joint[j].a_max;
    g->vp_min = BIG;
    g->dr_min = BIG;
    /* window segments a cycle can reach: ceil(reach / ds) + 1, at most horizon - 1 */
    reach = cfg->override_max * cfg->dt + FR(0.5) * cfg->rate_max * cfg->dt * cfg->dt;
    g->pieces = 1;
    for (p = 1; p < cfg->horizon - 1u; p++)
        if ((ffwd_real)(p - 1u) * cfg->ds < reach)
            g->pieces = p + 1u;
    if (g->pieces > cfg->horizon - 1u)
        g->pieces = cfg->horizon - 1u;
    return FFWD_OK;
}

uint32_t ffwd_governor_room(const ffwd_governor *g)
{
    if (g == NULL || g->model == NULL || g->finished)
        return 0;
    return g->cfg.horizon - g->count;
}

ffwd_status ffwd_governor_finish(ffwd_governor *g)
{
    if (g == NULL || g->model == NULL || g->count == 0u)
        return FFWD_E_ARG;
    g->finished = 1;
    return FFWD_OK;
}

static ffwd_status push_fault(ffwd_governor *g, int32_t joint, uint32_t limit)
{
    g->fault_index = g->pushed;
    g->fault_joint = joint;
    g->fault_limit = limit;
    return FFWD_E_INFEASIBLE;
}

static void seg_bounds(const ffwd_governor *g, ffwd_gov_slot *s0, const ffwd_gov_slot *s1);

ffwd_status ffwd_governor_push(ffwd_governor *g, const ffwd_real *q, const ffwd_real *dq,
                               const ffwd_real *ddq, const ffwd_real *dddq)
{
    const ffwd_model *m;
    ffwd_gov_slot *sl;
    ffwd_real *a, *grav, *iner, *zero;
    ffwd_real *lB, *lG, *lD, *uB, *uG, *uD;
    ffwd_real keep, ds, X, r;
    uint32_t n, j, p, i, cols, hint;
    ffwd_status st;
    if (g == NULL || g->model == NULL || q == NULL || dq == NULL || ddq == NULL || dddq == NULL)
        return FFWD_E_ARG;
    if (g->finished || g->count >= g->cfg.horizon)
        return FFWD_E_ARG;
    m = g->model;
    n = m->dof;
    lB = g->lB;
    lG = g->lG;
    lD = g->lD;
    uB = g->uB;
    uG = g->uG;
    uD = g->uD;
    a = g->ta;          /* the step's scratch, free between steps */
    grav = g->gq;
    iner = g->tau0;
    zero = g->zq;
    if (!ffwd_finite_(q, n) || !ffwd_finite_(dq, n) || !ffwd_finite_(ddq, n) || !ffwd_finite_(dddq, n))
        return FFWD_E_NONFINITE;
    for (j = 0; j < n; j++) {
        const ffwd_joint *J = &m->joint[j];
        if ((J->has_limits & FFWD_LIM_POSITION) && (q[j] < J->q_min || q[j] > J->q_max))
            return push_fault(g, (int32_t)j, FFWD_LIM_POSITION);
    }
    /* a = M q' = ID(q, 0, q') - g ;  b = M q'' + C(q, q') q' = ID(q, q', q'') - g - friction(q') */
    ffwd_zero_(zero, FFWD_MAX_DOF);
    st = ffwd_id_pair_gravity_(m, g->work, q, zero, dq, a, dq, ddq, iner, grav);
    if (st != FFWD_OK)
        return st;
    sl = slot_at(g, g->count);
    /* the safe curve keeps twice the margin: a state on it can follow it between
     * samples and still meet the limits reduced once (checked at every step) */
    keep = FR(1) - FR(2) * g->cfg.margin;
    ds = g->cfg.ds;
    cols = 2u * n + 1u;
    X = g->cfg.override_max * g->cfg.override_max;   /* never above the largest override */
    for (j = 0; j < n; j++) {
        sl->q[j] = q[j];
        sl->dq[j] = dq[j];
        sl->ddq[j] = ddq[j];
        sl->dddq[j] = dddq[j];
        const ffwd_joint *J = &m->joint[j];
        ffwd_real ramp = dq[j] / J->coulomb_band;
        ramp = ramp > FR(1) ? FR(1) : (ramp < FR(-1) ? FR(-1) : ramp);
        sl->a[j] = a[j] - grav[j];
        sl->b[j] = iner[j] - grav[j] - (J->viscous * dq[j] + J->coulomb * ramp);
        sl->c[j] = grav[j];
    }
    /* rows: column p < n torque of joint p, n <= p < 2n acceleration of joint p - n, 2n rate */
    for (p = 0; p < cols; p++) {
        ffwd_real al, be, ga, dp, dm, sa;
        int32_t jj = -1;
        uint32_t lim = 0;
        int pure;
        if (p < n) {
            const ffwd_joint *J = &m->joint[p];
            ffwd_real fc = J->coulomb * sgnr(dq[p]);
            ffwd_real tau = keep * J->tau_max;
            al = sl->a[p];
            be = sl->b[p];
            ga = J->viscous * dq[p];
            dp = sl->c[p] + maxr(fc, FR(0)) - tau;
            dm = -sl->c[p] - minr(fc, FR(0)) - tau;
            jj = (int32_t)p;
            lim = FFWD_LIM_TORQUE;
        } else if (p < 2u * n) {
            const ffwd_joint *J = &m->joint[p - n];
            al = dq[p - n];
            be = ddq[p - n];
            ga = FR(0);
            dp = -(keep * J->a_max);
            dm = dp;
            jj = (int32_t)(p - n);
            lim = FFWD_LIM_ACCELERATION;
        } else {
            al = FR(1);
            be = FR(0);
            ga = FR(0);
            dp = -g->cfg.rate_max;
            dm = dp;
        }
        pure = absr(al) <= ALPHA_TOL * (FR(1) + absr(dp) + absr(dm));
        sa = pure ? FR(1) : al;
        uB[p] = pure ? FR(0) : -be / sa;
        uG[p] = pure ? FR(0) : -ga / sa;
        lB[p] = uB[p];
        lG[p] = uG[p];
        if (pure) {
            uD[p] = BIG;
            lD[p] = -BIG;
            if (dp > REST_TOL || dm > REST_TOL)
                return push_fault(g, jj, lim);
            X = minr(X, xroot(be, ga, dp));
            X = minr(X, xroot(-be, -ga, dm));
        } else if (al > FR(0)) {
            uD[p] = -dp / sa;
            lD[p] = dm / sa;
        } else {
            uD[p] = dm / sa;
            lD[p] = -dp / sa;
        }
        if (lD[p] > REST_TOL || uD[p] < -REST_TOL)
            return push_fault(g, jj, lim);
    }
    /* velocity limits bound x alone */
    for (j = 0; j < n; j++) {
        ffwd_real vq = keep * m->joint[j].v_max;
        ffwd_real d = absr(dq[j]);
        ffwd_real xv = BIG;
        if (d * FR(1e-15) < vq) {
            ffwd_real t = vq / maxr(d, vq * FR(1e-15));
            xv = minr(t * t, BIG);
        }
        X = minr(X, xv);
    }
    /* every lower bound under every upper bound; next x >= 0 reachable */
    for (i = 0; i < cols; i++) {
        for (p = 0; p < cols; p++) {
            if (p != i)   /* a column's own two bounds never cross */
                X = minr(X, xroot(lB[i] - uB[p], lG[i] - uG[p], lD[i] - uD[p]));
        }
    }
    for (p = 0; p < cols; p++)
        X = minr(X, xroot(FR(-1) - FR(2) * ds * uB[p], -(FR(2) * ds * uG[p]), -(FR(2) * ds * uD[p])));
    /* where q'_j or a_j changes sign between the previous sample and this one, the
     * limit of joint j bounds x alone somewhere in between: bound x at both samples */
    if (g->count > 0u) {
        ffwd_gov_slot *pv = slot_at(g, g->count - 1u);
        pv->fit_ok = 0u;            /* its x_max may drop below: no box kept from before */
        if (g->clean > g->count - 1u)
            g->clean = g->count - 1u;   /* nor its x_safe (it was the end's) */
        for (j = 0; j < n; j++) {
            const ffwd_joint *J = &m->joint[j];
            if (pv->dq[j] * dq[j] <= FR(0)) {
                ffwd_real qq = maxr(absr(pv->ddq[j]), absr(ddq[j]));
                ffwd_real xb = qq > FR(0) ? minr(keep * J->a_max / qq, BIG) : BIG;
                X = minr(X, xb);
                pv->x_max = minr(pv->x_max, xb);
            }
            if (pv->a[j] * sl->a[j] <= FR(0)) {
                ffwd_real bb = maxr(absr(pv->b[j]), absr(sl->b[j]));
                ffwd_real cc = maxr(absr(pv->c[j]), absr(sl->c[j]));
                ffwd_real vm = J->viscous * maxr(absr(pv->dq[j]), absr(dq[j]));
                ffwd_real num = keep * J->tau_max - cc - J->coulomb;
                if (num > FR(0)) {
                    r = xroot(bb, vm, -num);
                    X = minr(X, r);
                    pv->x_max = minr(pv->x_max, r);
                }
            }
        }
    }
    /* keep the lower bounds that are the largest somewhere on [0, sqrt(X)] (each is
     * tried against the others from the last one found above another: the answer is the
     * same in any order, and one bound is often above many) */
    sl->ncols = 0;
    r = sqrt0(X);
    hint = 0;
    for (i = 0; i < cols; i++) {
        int dominated = 0;
        uint32_t t;
        for (t = 0; t < cols && !dominated; t++) {
            ffwd_real dB, dG, dD;
            int ok;
            p = hint + t < cols ? hint + t : hint + t - cols;
            dB = lB[p] - lB[i];
            dG = lG[p] - lG[i];
            dD = lD[p] - lD[i];
            if (p == i)
                continue;
            if (dB == FR(0) && dG == FR(0) && dD == FR(0)) {
                ok = p < i;
            } else {
                ok = dD >= FR(0) && dB * r * r + dG * r + dD >= FR(0);
                if (ok && dB > FR(0)) {
                    ffwd_real kv = -dG / (FR(2) * dB);
                    if (kv > FR(0) && kv < r)
                        ok = dB * kv * kv + dG * kv + dD >= FR(0);
                }
            }
            dominated |= ok;
        }
        if (dominated) {
            hint = p;
        } else {
            sl->bA[sl->ncols] = FR(1) + FR(2) * ds * lB[i];
            sl->bB[sl->ncols] = FR(2) * ds * lG[i];
            sl->bC[sl->ncols] = FR(2) * ds * lD[i];
            sl->ncols++;
        }
    }
    sl->x_max = X;
    sl->x_safe = FR(0);
    sl->x_try = FR(0);              /* the fastest-stop plan's x here (0: at rest) */
    sl->x_plan = FR(0);
    sl->u_try = FR(0);
    sl->u_plan = FR(0);
    /* for plan D: its ramp rate may use half of what the jerk limits allow for this q'
     * (vp); the deceleration every limit allows at rest (dr) */
    sl->vp = BIG;
    sl->dr = BIG;
    /* and for the box tests of plan D: each torque row's room, the viscous term, its
     * interior maximum where b < 0, the largest kappa every velocity limit allows */
    sl->k_vel = BIG;
    sl->fit_ok = 0u;
    for (j = 0; j < n; j++) {
        const ffwd_joint *J = &m->joint[j];
        const ffwd_real d = absr(sl->dq[j]), bb = sl->b[j];
        const ffwd_real fc = J->coulomb * sgnr(sl->dq[j]), tm = keep * J->tau_max;
        const ffwd_real gv = J->viscous * sl->dq[j];
        if ((J->has_limits & FFWD_LIM_JERK) && d > FR(0))
            sl->vp = minr(sl->vp, FR(0.5) * keep * J->j_max / d);
        if (absr(sl->a[j]) > FR(0)) {
            ffwd_real room = keep * J->tau_max - absr(sl->c[j]) - J->coulomb;
            sl->dr = minr(sl->dr, maxr(room, FR(0)) / absr(sl->a[j]));
        }
        if (d > FR(0)) {
            sl->dr = minr(sl->dr, keep * J->a_max / d);
            sl->k_vel = minr(sl->k_vel, keep * J->v_max / d);
        }
        sl->thi[j] = tm - sl->c[j] - maxr(fc, FR(0));
        sl->tlo[j] = -tm - sl->c[j] - minr(fc, FR(0));
        sl->gv[j] = gv;
        sl->kv[j] = FR(-1);
        sl->fv[j] = FR(0);
        if (bb < FR(0)) {
            const ffwd_real kv = -gv / (FR(2) * bb);
            sl->kv[j] = kv;
            sl->fv[j] = bb * (kv * kv) + gv * kv;
        }
    }
    ffwd_zero_(sl->jb[0], FFWD_MAX_DOF);
    ffwd_zero_(sl->jb[1], FFWD_MAX_DOF);
    ffwd_zero_(sl->jb[2], FFWD_MAX_DOF);
    sl->jr[0] = FR(0);
    sl->jr[1] = FR(0);
    sl->jr[2] = FR(0);
    if (g->count > 0u)
        seg_bounds(g, slot_at(g, g->count - 1u), sl);
    g->vp_min = minr(g->vp_min, sl->vp);
    g->dr_min = minr(g->dr_min, sl->dr);
    g->count++;
    g->pushed++;
    g->dirty = 1;
    return FFWD_OK;
}

/* Xs over the window: Xs = 0 at the last sample, then per sample the largest x <= X
 * from which braking at the lower bound of this sample reaches the next Xs, and
 * whose straight line in (s, x) to the next Xs also respects the next sample's
 * lower bound (limits hold at both ends of every segment of the safe curve). */
static void backward_pass(ffwd_governor *g)
{
    uint32_t i, p;
    ffwd_real X1, L1, k1;
    ffwd_gov_slot *sl, *next, *const first = g->slot, *const end = g->slot + g->cfg.horizon;
    if (g->count == 0u)
        return;
    sl = slot_at(g, g->count - 1u);
    sl->x_safe = FR(0);
    X1 = FR(0);
    for (i = g->count - 1u; i > 0u; i--) {
        ffwd_real best;
        next = sl;
        sl = ring_prev(first, end, sl);     /* sample i - 1 */
        best = sl->x_max;
        k1 = sqrt0(X1);
        L1 = -BIG;                      /* 2 ds times the next sample's lower bound at X1 */
        for (p = 0; p < sl->ncols; p++)
            best = minr(best, xroot(sl->bA[p], sl->bB[p], sl->bC[p] - X1));
        for (p = 0; p < next->ncols; p++)
            L1 = maxr(L1, (next->bA[p] - FR(1)) * X1 + next->bB[p] * k1 + next->bC[p]);
        best = minr(best, maxr(X1 - L1, FR(0)));
        /* samples 0 .. i - 1 as the last pass saw them and the same x here (bit for
         * bit): every x_safe before is the last pass's */
        if (i - 1u < g->clean && memcmp(&best, &sl->x_safe, sizeof best) == 0)
            break;
        sl->x_safe = best;
        X1 = best;
    }
    g->clean = g->count;
    g->dirty = 0;
}

/* The Hermite data of joint j between two samples: p0, v0, w0, w1, v1, p1 (scaled by ds). */
static void hermite_points(const ffwd_gov_slot *s0, const ffwd_gov_slot *s1, uint32_t j, ffwd_real ds,
                           ffwd_real P[6])
{
    P[0] = s0->q[j];
    P[1] = ds * s0->dq[j];
    P[2] = ds * ds * s0->ddq[j];
    P[3] = ds * ds * s1->ddq[j];
    P[4] = ds * s1->dq[j];
    P[5] = s1->q[j];
}

/* Quintic Hermite basis (value, d/dth, d2, d3) at th for v0, w0, w1, v1 and p1 - p0: the
 * value is p0 plus the row's sum, a derivative the row's sum alone (p0's own basis function
 * is 1 less p1's). So a path that stands (p1 = p0, the rest 0) has q = p0 and zero
 * derivatives exactly, also where a compiler fuses a * b + c, and q is p0 plus a small
 * correction instead of a difference of two large products. */
static void hermite_basis(ffwd_real th, ffwd_real H[4][5])
{
    ffwd_real t2 = th * th, t3 = t2 * th, t4 = t3 * th, t5 = t4 * th;
    H[0][0] = th - FR(6) * t3 + FR(8) * t4 - FR(3) * t5;
    H[0][1] = FR(0.5) * t2 - FR(1.5) * t3 + FR(1.5) * t4 - FR(0.5) * t5;
    H[0][2] = FR(0.5) * t3 - t4 + FR(0.5) * t5;
    H[0][3] = FR(-4) * t3 + FR(7) * t4 - FR(3) * t5;
    H[0][4] = FR(10) * t3 - FR(15) * t4 + FR(6) * t5;
    H[1][0] = FR(1) - FR(18) * t2 + FR(32) * t3 - FR(15) * t4;
    H[1][1] = th - FR(4.5) * t2 + FR(6) * t3 - FR(2.5) * t4;
    H[1][2] = FR(1.5) * t2 - FR(4) * t3 + FR(2.5) * t4;
    H[1][3] = FR(-12) * t2 + FR(28) * t3 - FR(15) * t4;
    H[1][4] = FR(30) * t2 - FR(60) * t3 + FR(30) * t4;
    H[2][0] = FR(-36) * th + FR(96) * t2 - FR(60) * t3;
    H[2][1] = FR(1) - FR(9) * th + FR(18) * t2 - FR(10) * t3;
    H[2][2] = FR(3) * th - FR(12) * t2 + FR(10) * t3;
    H[2][3] = FR(-24) * th + FR(84) * t2 - FR(60) * t3;
    H[2][4] = FR(60) * th - FR(180) * t2 + FR(120) * t3;
    H[3][0] = FR(-36) + FR(192) * th - FR(180) * t2;
    H[3][1] = FR(-9) + FR(36) * th - FR(30) * t2;
    H[3][2] = FR(3) - FR(24) * th + FR(30) * t2;
    H[3][3] = FR(-24) + FR(168) * th - FR(180) * t2;
    H[3][4] = FR(60) - FR(360) * th + FR(360) * t2;
}

/* The sum of basis row h times the Hermite data P (p0, v0, w0, w1, v1, p1): p1 - p0 for p1. */
static ffwd_real hermite_row(const ffwd_real h[5], const ffwd_real P[6])
{
    return h[0] * P[1] + h[1] * P[2] + h[2] * P[3] + h[3] * P[4] + h[4] * (P[5] - P[0]);
}

/* Largest u whose constant-u motion over this cycle stays under the safe curve (plan:
 * under the stored fastest-stop plan's curve). */
static ffwd_real safety_cap(ffwd_governor *g, ffwd_real x, int plan)
{
    const ffwd_real dt = g->cfg.dt, ds = g->cfg.ds;
    const ffwd_real e0 = g->kappa * dt, e1 = FR(0.5) * dt * dt;
    ffwd_real cap = -g->kappa / dt;          /* stopping within the cycle is always safe */
    uint32_t j;
    for (j = 0; j < g->pieces; j++) {
        if (j + 1u < g->count) {
            ffwd_real Sj = (ffwd_real)j * ds;
            const ffwd_gov_slot *sa = slot_at(g, j), *sb = slot_at(g, j + 1u);
            /* plan P: its line on this segment (it may reach 0 inside) */
            ffwd_real Xa = plan ? sa->x_plan : sa->x_safe;
            ffwd_real mj = plan ? FR(2) * sa->u_plan : (sb->x_safe - Xa) / ds;
            ffwd_real A = FR(2) * e1;
            ffwd_real B = FR(2) * e0 - mj * e1;
            ffwd_real C = x - Xa - mj * (g->sigma + e0 - Sj);
            ffwd_real disc = B * B - FR(4) * A * C;
            if (disc >= FR(0)) {
                ffwd_real sq = sqrt0(disc);
                ffwd_real qq = B >= FR(0) ? FR(-0.5) * (B + sq) : FR(-0.5) * (B - sq);
                ffwd_real r1 = qq != FR(0) ? qq / A : FR(0);
                ffwd_real r2 = qq != FR(0) ? C / qq : FR(0);
                ffwd_real rp = maxr(r1, r2), rm = minr(r1, r2);
                ffwd_real ulo = (Sj - g->sigma - e0) / e1;
                ffwd_real uhi = (Sj + ds - g->sigma - e0) / e1;
                if (maxr(rm, ulo) <= minr(rp, uhi))
                    cap = maxr(cap, minr(rp, uhi));
            }
        }
    }
    return cap;
}


/* ---- (b) with (c): the braking plans that vouch for a step ---- */

/* The smallest admissible u at sample sl for x (twice the margin). */
static ffwd_real brake_u(const ffwd_governor *g, const ffwd_gov_slot *sl, ffwd_real x)
{
    ffwd_real k = sqrt0(x), L = -BIG;
    uint32_t p;
    for (p = 0; p < sl->ncols; p++)
        L = maxr(L, ((sl->bA[p] - FR(1)) * x + sl->bB[p] * k + sl->bC[p]) / (FR(2) * g->cfg.ds));
    return L;
}

/* The joint jerk limits (twice the margin) at sample sl for x, u and du/dt = v. */
static int jerk_ok(const ffwd_governor *g, const ffwd_gov_slot *sl, ffwd_real x, ffwd_real u,
                   ffwd_real v)
{
    const ffwd_real keep2 = FR(1) - FR(2) * g->cfg.margin;
    ffwd_real k = sqrt0(x);
    uint32_t j;
    for (j = 0; j < g->model->dof; j++) {
        const ffwd_joint *J = &g->model->joint[j];
        if (J->has_limits & FFWD_LIM_JERK) {
            ffwd_real jj = sl->dddq[j] * x * k + FR(3) * sl->ddq[j] * k * u + sl->dq[j] * v;
            if (absr(jj) > keep2 * J->j_max)
                return 0;
        }
    }
    return 1;
}

/* q', q'' and q''' of joint j in window segment i where the Hermite basis is H (the
 * step's quintic interpolation) into d[0..2]. */
static void path_d123(const ffwd_governor *g, uint32_t i, ffwd_real H[4][5], uint32_t j, ffwd_real *d)
{
    const ffwd_real ds = g->cfg.ds;
    const ffwd_gov_slot *s0 = slot_at_c(g, i), *s1 = slot_at_c(g, i + 1u);
    ffwd_real P[6], v[3];
    uint32_t r;
    hermite_points(s0, s1, j, ds, P);
    for (r = 0; r < 3u; r++)
        v[r] = hermite_row(H[r + 1], P);
    d[0] = v[0] / ds;
    d[1] = v[1] / (ds * ds);
    d[2] = v[2] / (ds * ds * ds);
}

/* The coefficients of q' and q'' of every jerk-limited joint over window segment i as
 * polynomials in th (the step's quintic Hermite interpolation, expanded once per
 * segment: q(th) = p0 + v0 th + w0 th^2 / 2 + a3 th^3 + a4 th^4 + a5 th^5). */
static inline void hermite_a345(const ffwd_real *P, ffwd_real *a)
{
    const ffwd_real dp = P[5] - P[0];
    a[0] = FR(10) * dp - FR(6) * P[1] - FR(4) * P[4] - FR(1.5) * P[2] + FR(0.5) * P[3];
    a[1] = FR(-15) * dp + FR(8) * P[1] + FR(7) * P[4] + FR(1.5) * P[2] - P[3];
    a[2] = FR(6) * dp - FR(3) * P[1] - FR(3) * P[4] - FR(0.5) * P[2] + FR(0.5) * P[3];
}

/* Bounds of |q'|, |q''|, |q'''| of every jerk-limited joint on the segment from s0 to s1
 * (sums of the absolute coefficients of each polynomial in th on [0, 1]), into s0->jb. */
static void seg_bounds(const ffwd_governor *g, ffwd_gov_slot *s0, const ffwd_gov_slot *s1)
{
    const ffwd_real ds = g->cfg.ds, i1 = FR(1) / ds, i2 = i1 * i1, i3 = i2 * i1;
    const ffwd_real keep2 = FR(1) - FR(2) * g->cfg.margin;
    uint32_t j, t;
    for (t = 0; t < 3u; t++)
        s0->jr[t] = FR(0);
    for (j = 0; j < g->model->dof; j++) {
        ffwd_real P[6], a[3], jm;
        if (!(g->model->joint[j].has_limits & FFWD_LIM_JERK))
            continue;
        hermite_points(s0, s1, j, ds, P);
        hermite_a345(P, a);
        s0->jb[0][j] = (absr(P[1]) + absr(P[2]) + absr(FR(3) * a[0]) + absr(FR(4) * a[1])
                        + absr(FR(5) * a[2])) * i1;
        s0->jb[1][j] = (absr(P[2]) + absr(FR(6) * a[0]) + absr(FR(12) * a[1]) + absr(FR(20) * a[2])) * i2;
        s0->jb[2][j] = (absr(FR(6) * a[0]) + absr(FR(24) * a[1]) + absr(FR(60) * a[2])) * i3;
        jm = keep2 * g->model->joint[j].j_max;
        for (t = 0; t < 3u; t++)
            s0->jr[t] = maxr(s0->jr[t], s0->jb[t][j] / jm);
    }
}

static void seg_poly(ffwd_governor *g, uint32_t i)
{
    const ffwd_real ds = g->cfg.ds, i1 = FR(1) / ds, i2 = i1 * i1;
    const ffwd_gov_slot *s0 = slot_at_c(g, i), *s1 = slot_at_c(g, i + 1u);
    uint32_t j;
    if (g->pc_seg == i)
        return;
    g->pc_seg = i;
    for (j = 0; j < g->model->dof; j++) {
        ffwd_real P[6], aa[3], a3, a4, a5;
        if (!(g->model->joint[j].has_limits & FFWD_LIM_JERK))
            continue;
        hermite_points(s0, s1, j, ds, P);
        hermite_a345(P, aa);
        a3 = aa[0];
        a4 = aa[1];
        a5 = aa[2];
        g->pc1[j][0] = P[1] * i1;
        g->pc1[j][1] = P[2] * i1;
        g->pc1[j][2] = FR(3) * a3 * i1;
        g->pc1[j][3] = FR(4) * a4 * i1;
        g->pc1[j][4] = FR(5) * a5 * i1;
        g->pc2[j][0] = P[2] * i2;
        g->pc2[j][1] = FR(6) * a3 * i2;
        g->pc2[j][2] = FR(12) * a4 * i2;
        g->pc2[j][3] = FR(20) * a5 * i2;
    }
}

/* The joint jerk limits (twice the margin) for a change of u from u0 to u1 in one cycle at
 * pos (in window segment i), with the path's q', q'', q''' there. */
static int jump_ok(const ffwd_governor *g, uint32_t i, ffwd_real pos, ffwd_real x, ffwd_real u0,
                   ffwd_real u1)
{
    const ffwd_real keep2 = FR(1) - FR(2) * g->cfg.margin, k = sqrt0(x), v = (u1 - u0) / g->cfg.dt;
    ffwd_real H[4][5], d[3];
    uint32_t j, c;
    if (!g->any_jerk)
        return 1;
    hermite_basis(minr(maxr(pos / g->cfg.ds - (ffwd_real)i, FR(0)), FR(1)), H);
    for (j = 0; j < g->model->dof; j++) {
        const ffwd_joint *J = &g->model->joint[j];
        if (!(J->has_limits & FFWD_LIM_JERK))
            continue;
        path_d123(g, i, H, j, d);
        for (c = 0; c < 2u; c++) {
            ffwd_real uu = c == 0u ? u0 : u1;
            if (absr(d[2] * x * k + FR(3) * d[1] * k * uu + d[0] * v) > keep2 * J->j_max)
                return 0;
        }
    }
    return 1;
}

/* Plan P: brake at each sample's smallest admissible u (the fastest stop, what the safe
 * curve assumes) from (sig, kap) after a cycle at u; the changes of u at the samples and
 * the last one, to rest, must each fit in one cycle's rate of rate h. Writes the plan's
 * x and u per sample into x_try, u_try from sample try_first to try_last (0 elsewhere:
 * before it, or at rest); 1 if it holds. */
static int plan_fast(ffwd_governor *g, ffwd_real sig, ffwd_real kap, ffwd_real u, ffwd_real h)
{
    const ffwd_real ds = g->cfg.ds, dt = g->cfg.dt;
    const uint32_t last = g->count - 1u;
    const uint32_t i0 = (uint32_t)(sig / ds);
    uint32_t i = i0, k;
    ffwd_real x = kap * kap, pos = sig, up = u;
    int first = 1;
    if (i >= last)
        return 0;
    g->try_first = i0;                       /* x_try, u_try are written from here on */
    for (;;) {
        ffwd_gov_slot *s0 = slot_at(g, i), *s1 = slot_at(g, i + 1u);
        ffwd_real d = (ffwd_real)(i + 1u) * ds - pos, L, xe;
        L = brake_u(g, s0, x);
        if (first)
            L = maxr(L, brake_u(g, s1, x));
        for (k = 0; k < 3u; k++) {           /* admissible at the segment's end too */
            ffwd_real L1 = brake_u(g, s1, maxr(x + FR(2) * d * L, FR(0)));
            if (L1 <= L)
                break;
            L = L1;
        }
        xe = x + FR(2) * d * L;
        /* the change of u here, at the anchor or at the sample (where the cycle that
         * crosses it starts, up to kappa dt before: both ends) */
        if (absr(L - up) > h)
            return 0;
        if (first) {
            if (!jump_ok(g, i, pos, x, up, L))
                return 0;
        } else if (!(jump_ok(g, i, pos, x, up, L) && jump_ok(g, i - 1u, pos - sqrt0(x) * dt, x, up, L))) {
            return 0;
        }
        if (!jump_ok(g, i, pos, x, L, L))     /* holding L from the segment's start */
            return 0;
        /* the first cycle may cross into this segment: from u to a u between the first
         * two segments' (affine rows: checking both ends covers it) */
        if (i == i0 + 1u && (absr(L - u) > h || !jump_ok(g, i, pos, x, u, L)
                             || !jump_ok(g, i - 1u, pos - sqrt0(x) * dt, x, u, L)))
            return 0;
        s0->x_try = x - FR(2) * L * (pos - (ffwd_real)i * ds);
        s0->u_try = L;
        g->try_last = i;
        if (xe <= FR(0))
            return absr(L) <= h;
        if (i + 1u >= last || xe > s1->x_max || brake_u(g, s1, xe) > L + FR(1e-9) * (FR(1) + absr(L))
            || !jerk_ok(g, s1, xe, L, FR(0)))
            return 0;
        s1->x_try = xe;
        x = xe;
        up = L;
        pos = (ffwd_real)(i + 1u) * ds;
        first = 0;
        i++;
    }
}

/* kappa used up while u < 0 steps back to 0 by Vp dt per cycle. */
static ffwd_real ramp_need(const ffwd_governor *g, ffwd_real u, ffwd_real Vp)
{
    const ffwd_real dt = g->cfg.dt, h = Vp * dt;
    ffwd_real mm = FR(0);
    if (u < FR(0)) {
        mm = minr(-u / h, FR(1e9));
        mm = (ffwd_real)(uint32_t)mm;     /* floor, for 0 <= mm <= 1e9 */
    }
    return dt * (mm * (-u) - h * mm * (mm + FR(1)) / FR(2));
}

/* Plan D's constants for one simulation: its deceleration D, ramp rate Vp, h = Vp dt
 * (u's change per cycle), and c = h dt / 2, ih = 1 / h for need_below. */
typedef struct {
    ffwd_real dt, D, Vp, h, c, ih;
} plan_k;

static plan_k plan_consts(const ffwd_governor *g, ffwd_real D, ffwd_real Vp)
{
    plan_k P;
    P.dt = g->cfg.dt;
    P.D = D;
    P.Vp = Vp;
    P.h = Vp * P.dt;
    P.c = FR(0.5) * P.h * P.dt;
    P.ih = FR(1) / P.h;
    return P;
}

/* The band that holds ramp_need(d) for d = -r h, r >= 1: with m = floor(r),
 * ramp_need = h dt (m r - m (m + 1) / 2) lies in c [r (r - 1), (r - 1/2)^2] (the parabola
 * in m between m = r - 1 and m = r), here widened by 2e-9 r^2, far beyond rounding. A kn
 * above the band is surely >= ramp_need(d) (band_above), one below it surely < (band_below). */
static inline int band_above(const plan_k *P, ffwd_real kn, ffwd_real r)
{
    return kn >= P->c * (((FR(1) + FR(2e-9)) * r - FR(1)) * r + FR(0.25));
}

static inline int band_below(const plan_k *P, ffwd_real kn, ffwd_real r)
{
    return kn < P->c * (((FR(1) - FR(2e-9)) * r - FR(1)) * r);
}

/* kn >= ramp_need(d) (d < 0), its division and floor only for a kn inside the band: the
 * answer is ramp_need's. */
static inline int need_below(const ffwd_governor *g, const plan_k *P, ffwd_real kn, ffwd_real d)
{
    const ffwd_real r = -d * P->ih;
    if (r >= FR(1) && r <= FR(1e8)) {
        if (band_above(P, kn, r))
            return 1;
        if (band_below(P, kn, r))
            return 0;
    }
    return kn >= ramp_need(g, d, P->Vp);
}

/* Plan D's u for the next cycle: u ramps at -Vp to -D, holds, and ramps back at +Vp to
 * reach rest (u changes by at most Vp dt a cycle). */
static inline ffwd_real plan_act(const ffwd_governor *g, const plan_k *P, ffwd_real kap, ffwd_real u)
{
    const ffwd_real dt = P->dt, h = P->h, D = P->D;
    ffwd_real d, kn;
    if (kap <= FR(0))
        return FR(0);
    if (kap <= h * dt && kap <= D * dt && -kap / dt >= u - h && -kap / dt <= u + h)
        return -kap / dt;                       /* rest at the end of this cycle */
    d = u > -D ? maxr(u - h, -D) : minr(u + h, -D);
    kn = kap + d * dt;
    if (kn > FR(0) && (d >= FR(0) || need_below(g, P, kn, d)))
        return d;
    return minr(u + h, FR(0));
}

static ffwd_real plan_action(const ffwd_governor *g, ffwd_real kap, ffwd_real u, ffwd_real D,
                             ffwd_real Vp)
{
    const plan_k P = plan_consts(g, D, Vp);
    return plan_act(g, &P, kap, u);
}

/* Every limit of sample sl (twice the margin) over the box b of states
 * (kappa low, high, u low, high). Each row is a sum of a term in u and one in kappa, so
 * its extremes over the box are the sums of theirs: a u at the u ends; b x + gv kappa at
 * the kappa ends and, where b < 0, its interior maximum. */
static int box_fits(const ffwd_governor *g, const ffwd_gov_slot *sl, const ffwd_real *b)
{
    const ffwd_real kl = b[0], kh = b[1], ul = b[2], uh = b[3], xl = kl * kl, xh = kh * kh;
    uint32_t j;
    if (xh > sl->x_max || kh > sl->k_vel)
        return 0;
    for (j = 0; j < g->model->dof; j++) {
        const ffwd_real ddq = sl->ddq[j], dq = sl->dq[j], a = sl->a[j], bb = sl->b[j], gv = sl->gv[j];
        const ffwd_real am = g->am2[j], kv = sl->kv[j];
        const ffwd_real f0 = bb * xl + gv * kl, f1 = bb * xh + gv * kh, u0 = a * ul, u1 = a * uh;
        const ffwd_real e0 = ddq * xl, e1 = ddq * xh, v0 = dq * ul, v1 = dq * uh;
        ffwd_real fhi = maxr(f0, f1);
        if (kl < kv && kv < kh)
            fhi = maxr(fhi, sl->fv[j]);     /* interior maximum of b x + gv kappa */
        if (maxr(u0, u1) + fhi > sl->thi[j] || minr(u0, u1) + minr(f0, f1) < sl->tlo[j])
            return 0;
        if (maxr(e0, e1) + maxr(v0, v1) > am || minr(e0, e1) + minr(v0, v1) < -am)
            return 0;
    }
    return 1;
}


/* box_fits with the sample's kept box: a box inside one known to fit fits (each row's
 * extremes over a box only grow with the box: the answer box_fits would give, up to a
 * rounding of the rows' values); else a box 20 % wider (and its highest kappa 5 % of the
 * largest override higher still: near the plan's rest kappa grows from step to step) is
 * tried first and kept when it fits, so that the boxes of the next steps' plans, near
 * this one, fall inside it (on the bench path about 4 tests in 5 are saved so) */
static int box_fits_kept(const ffwd_governor *g, ffwd_gov_slot *sl, const ffwd_real *b)
{
    const ffwd_real e = FR(0.2), du = e * (absr(b[2]) + absr(b[3]));
    ffwd_real w[4];
    if (sl->fit_ok && b[0] >= sl->fit_box[0] && b[1] <= sl->fit_box[1] && b[2] >= sl->fit_box[2]
        && b[3] <= sl->fit_box[3])
        return 1;
    w[0] = b[0] * (FR(1) - e);
    w[1] = b[1] * (FR(1) + e) + FR(0.05) * g->cfg.override_max;
    w[2] = b[2] - du;
    w[3] = b[3] + du;
    if (box_fits(g, sl, w)) {
        memcpy(sl->fit_box, w, sizeof w);
        sl->fit_ok = 1u;
        return 1;
    }
    if (!box_fits(g, sl, b))
        return 0;
    memcpy(sl->fit_box, b, sizeof sl->fit_box);
    sl->fit_ok = 1u;
    return 1;
}

/* The window segment of progress s (the last one past the end). */
static uint32_t seg_of(const ffwd_governor *g, ffwd_real s)
{
    uint32_t i = (uint32_t)(s / g->cfg.ds);
    return i > g->count - 2u ? g->count - 2u : i;
}

/* Plan D holding u = -D from (s, kap): the cycles up to two before the ramp back, as
 * one block (x is affine in s along them: x = kap^2 - 2 D (s' - s)). Returns their
 * number (0: none worth a block) and the last of them in *last (s, kappa, u). */
static long hold_block(const ffwd_governor *g, ffwd_real s, ffwd_real k, ffwd_real D, ffwd_real Vp,
                       ffwd_real *last)
{
    const ffwd_real dt = g->cfg.dt;
    ffwd_real mm = minr((k - ramp_need(g, -D, Vp)) / (D * dt), FR(1e9));
    long m;
    if (!(mm >= FR(0)))
        return 0;
    m = (long)(uint32_t)mm - 2;              /* floor, less the last two hold cycles */
    if (m < 2)
        return 0;
    last[0] = s + (ffwd_real)(m - 1) * k * dt - FR(0.5) * D * dt * dt * (ffwd_real)(m - 1) * (ffwd_real)(m - 1);
    last[1] = k - (ffwd_real)(m - 1) * D * dt;
    last[2] = -D;
    if (last[0] > (ffwd_real)(g->count - 1u) * g->cfg.ds)
        return 0;                            /* beyond the window: the cycles say so */
    return m;
}

/* Segment i's box of plan D states grows to hold kappa in [kl, kh] and u in [ul, uh]. */
static void box_join(ffwd_governor *g, uint32_t i, ffwd_real kl, ffwd_real kh, ffwd_real ul,
                     ffwd_real uh)
{
    ffwd_real *b = g->box[i];
    if (!g->box_used[i]) {
        g->box_used[i] = 1;
        b[0] = kl;
        b[1] = kh;
        b[2] = ul;
        b[3] = uh;
    } else {
        b[0] = minr(b[0], kl);
        b[1] = maxr(b[1], kh);
        b[2] = minr(b[2], ul);
        b[3] = maxr(b[3], uh);
    }
}

/* The boxes of a hold block from (s, kap) to its last cycle at s_last join the
 * segments' (pass 1 of decel_cycles). */
static void hold_boxes(ffwd_governor *g, ffwd_real s, ffwd_real k, ffwd_real D, ffwd_real s_last)
{
    const ffwd_real ds = g->cfg.ds, x0 = k * k;
    uint32_t i, i1 = seg_of(g, s_last);
    for (i = seg_of(g, s); i <= i1; i++) {
        ffwd_real lo_s = maxr(s, (ffwd_real)i * ds), hi_s = minr(s_last, (ffwd_real)(i + 1u) * ds);
        ffwd_real kh = sqrt0(x0 - FR(2) * D * (lo_s - s)), kl = sqrt0(x0 - FR(2) * D * (hi_s - s));
        box_join(g, i, kl, kh, -D, -D);
    }
}

/* Path length plan D covers to rest in continuous time (u ramps at -V to -D or less,
 * holds, ramps back at +V), and its duration into *dur when dur is not NULL: quick
 * tests before its cycles are simulated. */
static inline ffwd_real stop_length(ffwd_real k, ffwd_real u, ffwd_real D, ffwd_real V, ffwd_real *dur)
{
    ffwd_real F, um, T[3], v[3], s = FR(0);
    uint32_t p;
    if (dur != NULL)
        *dur = FR(0);
    D = maxr(D, -u);
    F = k + u * absr(u) / (FR(2) * V);      /* kappa once u is ramped to 0 (u < 0: less) */
    if (F <= FR(0))
        return FR(0);
    um = F >= D * D / V ? -D : -sqrt0(V * F);
    T[0] = (u - um) / V;
    v[0] = -V;
    T[1] = (F - um * um / V) / -um;        /* hold at um */
    v[1] = FR(0);
    T[2] = -um / V;
    v[2] = V;
    for (p = 0; p < 3u; p++) {
        s += k * T[p] + FR(0.5) * u * T[p] * T[p] + v[p] * T[p] * T[p] * T[p] / FR(6);
        k += u * T[p] + FR(0.5) * v[p] * T[p] * T[p];
        u += v[p] * T[p];
    }
    if (dur != NULL)
        *dur = T[0] + T[1] + T[2];
    return s;
}

/* stop_length of plan D from (k, u) when it first repeats u for `hold` cycles of dt
 * (rest within them: the length to rest at that u), its duration into *dur. */
static inline ffwd_real held_stop_length(ffwd_real k, ffwd_real u, ffwd_real D, ffwd_real V,
                                         ffwd_real dt, uint32_t hold, ffwd_real *dur)
{
    const ffwd_real T = (ffwd_real)hold * dt, kh = k + u * T;
    ffwd_real L;
    if (hold == 0u)
        return stop_length(k, u, D, V, dur);
    if (u < FR(0) && kh <= FR(0)) {
        if (dur != NULL)
            *dur = k / -u;
        return k * k / (FR(-2) * u);
    }
    L = stop_length(kh, u, D, V, dur);
    if (dur != NULL)
        *dur += T;
    return k * T + FR(0.5) * u * T * T + L;
}

/* How far plan D (repeating u `hold` cycles first) from the state after a cycle at u
 * overshoots the window's end by its continuous stop length (<= 0: it fits; rest within
 * the cycle fits, -ds). */
static ffwd_real stop_gap(const ffwd_governor *g, ffwd_real uc, ffwd_real D, ffwd_real Vp,
                          uint32_t hold)
{
    const ffwd_real dt = g->cfg.dt, send = (ffwd_real)(g->count - 1u) * g->cfg.ds;
    const ffwd_real kc = g->kappa + uc * dt, sc = g->sigma + g->kappa * dt + FR(0.5) * dt * dt * uc;
    if (uc < FR(0) && kc <= FR(0))
        return -g->cfg.ds;
    return sc + held_stop_length(kc, uc, D, Vp, dt, hold, NULL) - send;
}

/* The largest u in [ua, ub] after which plan D (deceleration D, ramps at Vp) stops
 * inside the window by its continuous stop length (ua if none does): what a full check
 * of plan D can accept at most. The gap grows with u; its root is bracketed and found by
 * the Illinois variant of the false position (a halving where a step would leave the
 * bracket), to the width GOV_FIT_ITER halvings would leave, in at most that many steps. */
static ffwd_real stop_fit_u(const ffwd_governor *g, ffwd_real ua, ffwd_real ub, ffwd_real D,
                            ffwd_real Vp, uint32_t hold)
{
    ffwd_real fa, fb, w;
    uint32_t it;
    int side = 0;
    fb = stop_gap(g, ub, D, Vp, hold);
    if (fb <= FR(0))
        return ub;
    fa = stop_gap(g, ua, D, Vp, hold);
    if (fa > FR(0))
        return ua;                          /* none fits (the gap grows with u) */
    w = (ub - ua) / (ffwd_real)(1ul << GOV_FIT_ITER);
    for (it = 0; it < GOV_FIT_ITER && ub - ua > w; it++) {
        ffwd_real m = ua - fa * ((ub - ua) / (fb - fa)), fm;
        if (!(m > ua && m < ub))
            m = FR(0.5) * (ua + ub);
        fm = stop_gap(g, m, D, Vp, hold);
        if (fm <= FR(0)) {
            ua = m;
            fa = fm;
            if (side < 0)
                fb *= FR(0.5);
            side = -1;
        } else {
            ub = m;
            fb = fm;
            if (side > 0)
                fa *= FR(0.5);
            side = 1;
        }
    }
    return ua;
}

/* The command's qdd = q'' kappa^2 + q' u of every jerk-limited joint at a plan D cycle
 * c = (s, kappa, u) (the path's interpolation) into qn. */
static void cycle_qdd(ffwd_governor *g, const ffwd_real *c, ffwd_real *qn)
{
    const uint32_t i = seg_of(g, c[0]);
    const ffwd_real th = c[0] / g->cfg.ds - (ffwd_real)i, k = c[1];
    uint32_t j;
    seg_poly(g, i);
    for (j = 0; j < g->model->dof; j++) {
        if (g->model->joint[j].has_limits & FFWD_LIM_JERK) {
            const ffwd_real *c1 = g->pc1[j], *c2 = g->pc2[j];
            ffwd_real q1 = (((c1[4] * th + c1[3]) * th + c1[2]) * th + c1[1]) * th + c1[0];
            ffwd_real q2 = ((c2[3] * th + c2[2]) * th + c2[1]) * th + c2[0];
            qn[j] = q2 * k * k + q1 * c[2];
        }
    }
}

/* |qb - qa| <= the jerk limit times dt for every jerk-limited joint (twice the margin). */
static int jerk_step_ok(const ffwd_governor *g, const ffwd_real *qa, const ffwd_real *qb)
{
    const ffwd_real keep2 = FR(1) - FR(2) * g->cfg.margin;
    uint32_t j;
    for (j = 0; j < g->model->dof; j++) {
        const ffwd_joint *J = &g->model->joint[j];
        if ((J->has_limits & FFWD_LIM_JERK) && absr(qb[j] - qa[j]) > keep2 * J->j_max * g->cfg.dt)
            return 0;
    }
    return 1;
}

/* The joint jerk between the plan D cycles a and c (s, kappa, u each), exactly. */
static int cycles_jerk_ok(ffwd_governor *g, const ffwd_real *a, const ffwd_real *c)
{
    cycle_qdd(g, a, g->pq);
    cycle_qdd(g, c, g->pq2);
    return jerk_step_ok(g, g->pq, g->pq2);
}

/* Does the jerk bound cover every change of qdd between a cycle starting in segment a
 * and the next (in a or a + 1)? With the bounds B1, B2, B3 of |q'|, |q''|, |q'''| over
 * both segments and the largest kappa and |u| of their boxes, the change over a cycle
 * at constant u whose next u differs by at most Vp dt is at most
 *   dt (B3 kappa^3 + 3 B2 kappa |u| + B1 Vp)
 * (d/dt (q'' kappa^2 + q' u) = q''' kappa^3 + 3 q'' kappa u + q' du/dt). */
static int seg_jerk_safe(const ffwd_governor *g, uint32_t a, const ffwd_gov_slot *sa,
                         const ffwd_gov_slot *sb, ffwd_real Vp)
{
    const ffwd_real keep2 = FR(1) - FR(2) * g->cfg.margin;
    const uint32_t nseg = g->count - 1u;
    const ffwd_real *b = g->box[a];
    ffwd_real kk = b[1], uu = maxr(absr(b[2]), absr(b[3]));
    uint32_t j;
    ffwd_real r1 = sa->jr[0], r2 = sa->jr[1], r3 = sa->jr[2];
    if (a + 1u < nseg && g->box_used[a + 1u]) {
        const ffwd_real *c = g->box[a + 1u];
        kk = maxr(kk, c[1]);
        uu = maxr(uu, maxr(absr(c[2]), absr(c[3])));
    }
    if (a + 1u < nseg) {
        r1 = maxr(r1, sb->jr[0]);
        r2 = maxr(r2, sb->jr[1]);
        r3 = maxr(r3, sb->jr[2]);
    }
    /* the largest ratios of all joints at once: where they fit, every joint does */
    if (r3 * kk * kk * kk + FR(3) * r2 * kk * uu + r1 * Vp * (FR(1) + FR(1e-9)) <= FR(1))
        return 1;
    for (j = 0; j < g->model->dof; j++) {
        const ffwd_joint *J = &g->model->joint[j];
        if (J->has_limits & FFWD_LIM_JERK) {
            ffwd_real B1 = sa->jb[0][j], B2 = sa->jb[1][j], B3 = sa->jb[2][j];
            if (a + 1u < nseg) {
                B1 = maxr(B1, sb->jb[0][j]);
                B2 = maxr(B2, sb->jb[1][j]);
                B3 = maxr(B3, sb->jb[2][j]);
            }
            if (B3 * kk * kk * kk + FR(3) * B2 * kk * uu + B1 * Vp * (FR(1) + FR(1e-9)) > keep2 * J->j_max)
                return 0;
        }
    }
    return 1;
}

/* Pass 1 of decel_cycles over a run of cycles that neither start a hold nor come to
 * rest (the ramps of u): the same steps as its loop without their rarer cases, the state
 * in registers (R: the loop's state in and out; prev: the run's last cycle). */
typedef struct {
    ffwd_real s, k, u, box[4], prev[3];
    uint32_t cycles, ip, bi;
    int wide;
} ramp_state;

/* Pass 1 gathers the box of the segment its cycles are in (gathered segment *bi, or
 * FFWD_GOV_MAX_HORIZON: none yet) and joins it to the segment's box when the cycles move
 * on. gather: n cycles in segment i with kappa in [kl, kh] and u in [ul, uh]; gather_end:
 * the gathered box joined, none left. */
static inline void gather(ffwd_governor *g, uint32_t n, uint32_t i, ffwd_real kl, ffwd_real kh,
                          ffwd_real ul, ffwd_real uh, uint32_t *bi, ffwd_real *box)
{
    if (n == 0u)
        return;
    if (*bi == i) {
        box[0] = minr(box[0], kl);
        box[1] = maxr(box[1], kh);
        box[2] = minr(box[2], ul);
        box[3] = maxr(box[3], uh);
        return;
    }
    if (*bi != FFWD_GOV_MAX_HORIZON)
        box_join(g, *bi, box[0], box[1], box[2], box[3]);
    *bi = i;
    box[0] = kl;
    box[1] = kh;
    box[2] = ul;
    box[3] = uh;
}

static inline void gather_end(ffwd_governor *g, uint32_t *bi, const ffwd_real *box)
{
    if (*bi != FFWD_GOV_MAX_HORIZON)
        box_join(g, *bi, box[0], box[1], box[2], box[3]);
    *bi = FFWD_GOV_MAX_HORIZON;
}

static FFWD_NOINLINE void ramp_run(ffwd_governor *g, const plan_k *P, ramp_state *R, ffwd_real send)
{
    const ffwd_real dt = P->dt, h = P->h, D = P->D, ih = P->ih;
    const ffwd_real kmin = minr(h * dt, D * dt), dt2 = FR(0.5) * dt * dt, ds = g->cfg.ds;
    const uint32_t imax = g->count - 2u, cmax = (uint32_t)FFWD_GOV_PLAN_CYCLES;
    ffwd_real s = R->s, k = R->k, uu = R->u, box[4], ps = FR(0), d, kn, r;
    ffwd_real k1 = FR(0), u1 = FR(0), dl = FR(0), kl = FR(0);
    uint32_t cycles = R->cycles, ip = R->ip, bi = R->bi, ib = (uint32_t)(s / ds), c0, n;
    int wide = R->wide, up;
    memcpy(box, R->box, sizeof box);
    if (!(D * ih <= FR(1e8)))
        return;                                 /* (r up to 1e8 below: ramp_need's m is not capped) */
    ib = ib > imax ? imax : ib;
    /* Along a run kappa falls (d < 0, or d <= 0 rising to 0) and u moves one way, so the
     * n cycles of a segment in it span kappa [kl, k1] (last, first) and u from u1 (the u
     * before its first) to dl (its last): gathered when the segment changes. */
    do {
        c0 = cycles;
        for (up = 0; up < 2; up++) {
            n = 0;
            while (uu > -D && k > kmin && cycles < cmax && s <= send) {
                d = maxr(uu - h, -D);
                kn = k + d * dt;
                r = -d * ih;
                if (!up) {
                    /* down: u falls by h (d <= -h), kn surely above ramp_need(d) */
                    if (!(r >= FR(1) && band_above(P, kn, r)))
                        break;
                } else {
                    /* up: one more fall surely leaves kappa below ramp_need: u rises by h */
                    if (!(kn <= FR(0) || (r >= FR(1) && band_below(P, kn, r))))
                        break;
                    d = minr(uu + h, FR(0));
                    kn = k + d * dt;
                    if (d < FR(0) && kn <= FR(0))
                        break;                  /* rest in this cycle: decel_cycles */
                }
                if (ib != ip || n == 0u) {      /* a new segment (or the run's first cycle) */
                    gather(g, n, ip, kl, k1, up ? u1 : dl, up ? dl : u1, &bi, box);
                    wide |= ib > ip + 1u;
                    ip = ib;
                    k1 = k;
                    u1 = uu;
                }
                n++;
                cycles++;
                kl = k;
                dl = d;
                ps = s;
                s += k * dt + dt2 * d;
                k = kn;
                uu = d;
                ib = (uint32_t)(s / ds);
                ib = ib > imax ? imax : ib;
            }
            gather(g, n, ip, kl, k1, up ? u1 : dl, up ? dl : u1, &bi, box);
        }
    } while (cycles != c0);
    R->s = s; R->k = k; R->u = uu; R->cycles = cycles; R->ip = ip; R->bi = bi; R->wide = wide;
    memcpy(R->box, box, sizeof box);
    R->prev[0] = ps; R->prev[1] = kl; R->prev[2] = dl;
}

/* Plan D's cycles from (sig, kap > 0, u), the middle of a hold as one block. Pass 1
 * records the per-segment boxes and the first and last cycle (returns 2 when a cycle
 * steps over a whole segment: pass 2 is needed); pass 2 checks the joint jerk exactly
 * wherever the segments' bound does not cover it (box_used 2: covered), at most
 * GOV_EXACT_CYCLES cycles (more: the plan is not vouched for). 0: the plan fails. */
static int decel_cycles(ffwd_governor *g, ffwd_real sig, ffwd_real kap, ffwd_real u, ffwd_real D,
                        ffwd_real Vp, int pass, uint32_t hold)
{
    const plan_k P = plan_consts(g, D, Vp);
    const ffwd_real ds = g->cfg.ds, dt = g->cfg.dt, dt2 = FR(0.5) * dt * dt;
    const ffwd_real send = (ffwd_real)(g->count - 1u) * ds;
    ffwd_real s = sig, k = kap, uu = u;
    ffwd_real box[4] = { 0 };              /* gathered, of segment bi (pass 1) */
    uint32_t cycles = 0, exact = 0, i, ip = 0, bi = FFWD_GOV_MAX_HORIZON;
    int wide = 0, first = 1;
    while (k > FR(0)) {
        ffwd_real un;
        if (uu == -D && !first && hold == 0u) {   /* holding -D: the middle as one block */
            ffwd_real last[3];
            long mk = hold_block(g, s, k, D, Vp, last);
            int skip = mk > 0;
            i = seg_of(g, s);
            if (skip && pass == 2) {
                /* only where the bound covers every change in it and into it */
                uint32_t a, i1 = seg_of(g, last[0]);
                skip = g->box_used[ip] == 2u && i <= ip + 1u && k * dt < ds;
                for (a = i; skip && a <= i1; a++)
                    skip = g->box_used[a] == 2u;
            }
            if (skip) {
                ffwd_real mr = (ffwd_real)mk;
                wide |= i > ip + 1u || k * dt >= ds;   /* a step over a whole segment */
                if (pass == 1) {
                    gather_end(g, &bi, box);
                    hold_boxes(g, s, k, D, last[0]);
                }
                cycles += (uint32_t)mk;
                s += mr * k * dt - FR(0.5) * D * dt * dt * mr * mr;
                k -= mr * D * dt;
                memcpy(g->cyc_prev, last, sizeof last);
                ip = seg_of(g, last[0]);
                continue;
            }
        }
        if (pass == 1 && !first && uu != -D && hold == 0u) {
            ramp_state R;
            R.s = s; R.k = k; R.u = uu; R.cycles = cycles; R.ip = ip; R.bi = bi; R.wide = wide;
            memcpy(R.box, box, sizeof box);
            ramp_run(g, &P, &R, send);
            s = R.s; k = R.k; uu = R.u; ip = R.ip; bi = R.bi; wide = R.wide;
            memcpy(box, R.box, sizeof box);
            if (R.cycles != cycles)
                memcpy(g->cyc_prev, R.prev, sizeof R.prev);
            cycles = R.cycles;
            if (uu == -D)
                continue;
        }
        cycles++;
        if (cycles > (uint32_t)FFWD_GOV_PLAN_CYCLES || s > send)
            return 0;
        if (hold > 0u) {             /* the cycles that repeat u first */
            un = uu;
            hold--;
        } else {
            un = plan_act(g, &P, k, uu);
        }
        i = seg_of(g, s);
        if (first) {
            g->cyc_first[0] = s;
            g->cyc_first[1] = k;
            g->cyc_first[2] = un;
        } else {
            wide |= i > ip + 1u;
            if (pass == 2 && (g->box_used[ip] != 2u || i > ip + 1u)) {
                const ffwd_real c[3] = { s, k, un };
                if (++exact > GOV_EXACT_CYCLES || !cycles_jerk_ok(g, g->cyc_prev, c))
                    return 0;               /* (past the budget: not vouched for) */
            }
        }
        g->cyc_prev[0] = s;
        g->cyc_prev[1] = k;
        g->cyc_prev[2] = un;
        ip = i;
        first = 0;
        if (pass == 1)   /* the box of kappa and u (this cycle's and the one before) */
            gather(g, 1u, i, k, k, minr(uu, un), maxr(uu, un), &bi, box);
        if (un < FR(0) && k + un * dt <= FR(0)) {
            if (-un > Vp * dt * (FR(1) + FR(1e-9)))   /* u drops to 0 at rest: one cycle's change */
                return 0;
            s += k * k / (FR(-2) * un);
            k = FR(0);
            uu = FR(0);
        } else {
            s += k * dt + dt2 * un;
            k += un * dt;
            uu = un;
        }
    }
    if (s > send)
        return 0;
    gather_end(g, &bi, box);
    memcpy(g->cyc_last, g->cyc_prev, sizeof g->cyc_last);
    return wide ? 2 : 1;
}

/* Does plan D from (sig, kap, u) meet every limit and rest inside the window? Its
 * cycles are simulated; per window segment the box of its cycle states is tested at
 * both ends (rows interpolate linearly between samples); the joint jerk per cycle,
 * from g->qdd0 (the command before the plan) to rest, by the segments' bound where it
 * covers it, else exactly (q' and q'' of the path's interpolation). */
static int plan_decel(ffwd_governor *g, ffwd_real sig, ffwd_real kap, ffwd_real u, ffwd_real D,
                      ffwd_real Vp, uint32_t hold)
{
    const uint32_t nseg = g->count - 1u;
    const ffwd_real send = (ffwd_real)nseg * g->cfg.ds;
    ffwd_gov_slot *sl, *const first = g->slot, *const end = g->slot + g->cfg.horizon;
    ffwd_real dur;
    uint32_t i;
    int r, all = 1;
    if (sig + held_stop_length(kap, u, D, Vp, g->cfg.dt, hold, &dur) > send)
        return 0;                           /* it cannot rest inside the window */
    if (!(dur <= g->cfg.dt * (ffwd_real)FFWD_GOV_PLAN_CYCLES))
        return 0;                           /* nor within the cycles it may simulate */
    ffwd_zero_(g->pq2, FFWD_MAX_DOF);
    if (kap <= FR(0))                       /* at rest already: the command's qdd is 0 */
        return !g->any_jerk || jerk_step_ok(g, g->qdd0, g->pq2);
    for (i = 0; i < nseg; i++)
        g->box_used[i] = 0;
    g->pc_seg = FFWD_GOV_MAX_HORIZON;
    r = decel_cycles(g, sig, kap, u, D, Vp, 1, hold);
    if (r == 0)
        return 0;
    /* each sample once, with the box joining the two segments it ends (rows are affine
     * between samples: both ends of a segment cover it) */
    sl = slot_at(g, 0);
    for (i = 0; i <= nseg; i++, sl = ring_next(first, end, sl)) {
        const int l = i > 0u && g->box_used[i - 1u], rr = i < nseg && g->box_used[i];
        ffwd_real bb[4];
        if (!l && !rr)
            continue;
        if (l && rr) {
            const ffwd_real *p = g->box[i - 1u], *q = g->box[i];
            bb[0] = minr(p[0], q[0]);
            bb[1] = maxr(p[1], q[1]);
            bb[2] = minr(p[2], q[2]);
            bb[3] = maxr(p[3], q[3]);
        } else {
            memcpy(bb, g->box[l ? i - 1u : i], sizeof bb);
        }
        if (!box_fits_kept(g, sl, bb))
            return 0;
    }
    if (!g->any_jerk)
        return 1;
    /* the first cycle from the command before the plan; at rest the command's qdd is 0 */
    cycle_qdd(g, g->cyc_first, g->pq);
    if (!jerk_step_ok(g, g->qdd0, g->pq))
        return 0;
    cycle_qdd(g, g->cyc_last, g->pq);
    if (!jerk_step_ok(g, g->pq2, g->pq))
        return 0;
    sl = slot_at(g, 0);
    for (i = 0; i < nseg; i++) {
        ffwd_gov_slot *sn = ring_next(first, end, sl);
        if (g->box_used[i] && seg_jerk_safe(g, i, sl, sn, Vp))
            g->box_used[i] = 2;
        else if (g->box_used[i])
            all = 0;
        sl = sn;
    }
    if (all && r == 1)
        return 1;
    return decel_cycles(g, sig, kap, u, D, Vp, 2, hold) != 0;
}

/* The braking plan that vouches for applying uc this cycle (FFWD_GOV_PLAN_*, its D in
 * *D), or -1: the fastest stop if its changes of u fit the rate of rate, else a
 * constant deceleration D of the stored one, Dr, Dr/2, Dr/4 (every = 0: the first two
 * of these). */
static int vouch(ffwd_governor *g, ffwd_real uc, ffwd_real Vp, ffwd_real Dr, int every,
                 uint32_t hold, ffwd_real *D)
{
    const ffwd_real dt = g->cfg.dt, kap = g->kappa, h = g->cfg.rate_rate_max * dt;
    const ffwd_real kc = kap + uc * dt;
    ffwd_real sc, Ds[4];
    uint32_t c, nd = 0;
    if (uc < FR(0) && kc <= FR(0)) {               /* rest within this cycle */
        if (-uc <= h && g->sigma + kap * kap / (FR(-2) * uc) <= (ffwd_real)(g->count - 1u) * g->cfg.ds)
            return (int)FFWD_GOV_PLAN_REST;
        return -1;
    }
    sc = g->sigma + kap * dt + FR(0.5) * dt * dt * uc;
    for (c = 0; c < g->model->dof; c++)
        g->qdd0[c] = g->d2[c] * (kap * kap) + g->d1[c] * uc;
    if (plan_fast(g, sc, kc, uc, h))
        return (int)FFWD_GOV_PLAN_FAST;
    if (g->plan == FFWD_GOV_PLAN_DECEL)
        Ds[nd++] = g->plan_D;
    Ds[nd++] = Dr;
    Ds[nd++] = FR(0.5) * Dr;
    Ds[nd++] = FR(0.25) * Dr;
    if (!every)
        nd = 2;
    for (c = 0; c < nd; c++) {
        uint32_t e, same = 0;
        for (e = 0; e < c; e++)
            same |= Ds[e] == Ds[c];                /* tried already (the stored D is often Dr) */
        if (!same && Ds[c] > FR(0) && plan_decel(g, sc, kc, uc, Ds[c], Vp, hold)) {
            *D = Ds[c];
            return (int)FFWD_GOV_PLAN_DECEL;
        }
    }
    return -1;
}

/* Store an accepted plan (the fastest stop: its x per sample; plan D: the cycles it
 * repeats u first); returns kind >= 0. */
static int keep_plan(ffwd_governor *g, int kind, ffwd_real D, ffwd_real Vp, uint32_t hold)
{
    uint32_t k;
    if (kind < 0)
        return 0;
    g->plan = (uint32_t)kind;
    g->hold_left = 0u;
    if (kind == (int)FFWD_GOV_PLAN_DECEL) {
        g->plan_D = D;
        g->plan_Vp = Vp;
        g->hold_left = hold;
    }
    if (kind == (int)FFWD_GOV_PLAN_FAST)
        for (k = 0; k < g->count; k++) {
            ffwd_gov_slot *sl = slot_at(g, k);
            const int in = k >= g->try_first && k <= g->try_last;   /* else 0: before, at rest */
            sl->x_plan = in ? sl->x_try : FR(0);
            sl->u_plan = in ? sl->u_try : FR(0);
        }
    return 1;
}

/* The stored plan's own u for this cycle. */
static ffwd_real plan_step(ffwd_governor *g, ffwd_real x)
{
    const ffwd_real dt = g->cfg.dt, h = g->cfg.rate_rate_max * dt;
    ffwd_real u0;
    if (g->plan == FFWD_GOV_PLAN_REST || g->kappa <= FR(0))
        return g->kappa <= FR(0) ? FR(0) : -g->kappa / dt;
    if (g->plan == FFWD_GOV_PLAN_DECEL)
        return g->hold_left > 0u ? g->u : plan_action(g, g->kappa, g->u, g->plan_D, g->plan_Vp);
    /* plan P: its u on this segment (the state is on its line), the landing on the next
     * segment's line where the cycle crosses a sample */
    u0 = slot_at(g, 0)->u_plan;
    if (g->sigma + g->kappa * dt + FR(0.5) * dt * dt * u0 < g->cfg.ds || g->kappa + u0 * dt <= FR(0))
        return u0;
    if (g->kappa + slot_at(g, 1)->u_plan * dt <= FR(0))
        return slot_at(g, 1)->u_plan;
    return minr(maxr(safety_cap(g, x, 1), g->u - h), g->u + h);
}

/* Is uc within the limits [lo, hi] here and the rate-of-rate/jerk bounds [vlo, vhi]? */
static int step_fits(const ffwd_governor *g, ffwd_real uc, ffwd_real lo, ffwd_real hi, ffwd_real vlo,
                     ffwd_real vhi, uint32_t jerk_bad)
{
    const ffwd_real tol = FR(1e-9), vc = (uc - g->u) / g->cfg.dt;
    return lo - tol * (FR(1) + absr(lo)) <= uc && uc <= hi + tol * (FR(1) + absr(hi))
           && vlo - tol * (FR(1) + absr(vlo)) <= vc && vc <= vhi + tol * (FR(1) + absr(vhi))
           && !jerk_bad;
}

ffwd_status ffwd_governor_step(ffwd_governor *g, ffwd_real override_cmd, ffwd_gov_output *out)
{
    const ffwd_model *m;
    ffwd_gov_slot *s0, *s1;
    ffwd_real H[4][5];
    ffwd_real *d1, *d2, *tau0, *ta, *gq, *zq;
    ffwd_real dt, ds, U, V, keep, cmd, th, x, kap, lo, hi, cap, look, xa, kt, e, ud;
    ffwd_real vlo, vhi, v, utr, unew, vact, sig, kn, send, xss, hic, Vp, Dr, Dk = FR(0);
    uint32_t n, j, k, nb, flags = 0, jerk_bad = 0;
    int kind, got, held;
    ffwd_status st;
    if (out == NULL)
        return FFWD_E_ARG;
    ffwd_zero_(out->q, FFWD_MAX_DOF);
    ffwd_zero_(out->qd, FFWD_MAX_DOF);
    ffwd_zero_(out->qdd, FFWD_MAX_DOF);
    ffwd_zero_(out->tau, FFWD_MAX_DOF);
    out->s = FR(0);
    out->override = FR(0);
    out->rate = FR(0);
    out->rate_rate = FR(0);
    out->safe_override = FR(0);
    out->flags = 0;
    if (g == NULL || g->model == NULL || g->count == 0u)
        return FFWD_E_ARG;
    if (!ffwd_finite_(&override_cmd, 1))
        return FFWD_E_NONFINITE;
    m = g->model;
    n = m->dof;
    d1 = g->d1;
    d2 = g->d2;
    tau0 = g->tau0;
    ta = g->ta;
    gq = g->gq;
    zq = g->zq;
    dt = g->cfg.dt;
    ds = g->cfg.ds;
    U = g->cfg.rate_max;
    V = g->cfg.rate_rate_max;
    keep = FR(1) - g->cfg.margin;
    cmd = minr(maxr(override_cmd, FR(0)), g->cfg.override_max);
    if (g->dirty)
        backward_pass(g);
    s0 = slot_at(g, 0);
    if (g->count < 2u) {
        /* at the last sample of the window: hold still there */
        for (j = 0; j < n; j++)
            out->q[j] = s0->q[j];
        st = ffwd_inverse_dynamics(m, g->work, out->q, out->qd, out->qdd, out->tau);
        if (st != FFWD_OK) {
            ffwd_zero_(out->q, FFWD_MAX_DOF);
            return st;
        }
        out->s = (ffwd_real)g->base * ds;
        out->rate_rate = -g->u / dt;
        out->flags = FFWD_GOV_AT_REST | (g->finished ? FFWD_GOV_DONE : FFWD_GOV_STARVED);
        g->kappa = FR(0);
        g->u = FR(0);
        g->u_last = FR(0);
        g->sigma = FR(0);
        ffwd_zero_(g->qdd_prev, FFWD_MAX_DOF);
        return FFWD_OK;
    }
    s1 = slot_at(g, 1);
    th = g->sigma / ds;
    hermite_basis(th, H);
    for (j = 0; j < n; j++) {
        ffwd_real P[6];
        ffwd_real val[3];
        uint32_t r;
        hermite_points(s0, s1, j, ds, P);
        for (r = 0; r < 3u; r++)
            val[r] = hermite_row(H[r], P);
        out->q[j] = P[0] + val[0];
        d1[j] = val[1] / ds;
        d2[j] = val[2] / (ds * ds);
    }
    kap = g->kappa;
    x = kap * kap;
    /* the torque at this point is affine in u: tau = tau0 + a u, with tau0 the inverse
     * dynamics at (q, q' kappa, q'' x) and a = M q' = ID(q, 0, q') - g (exact, friction
     * included, no interpolation between samples) */
    for (j = 0; j < n; j++) {
        out->qd[j] = d1[j] * kap;
        out->qdd[j] = d2[j] * x;
        zq[j] = FR(0);
    }
    st = ffwd_id_pair_gravity_(m, g->work, out->q, out->qd, out->qdd, tau0, zq, d1, ta, gq);
    if (st != FFWD_OK) {
        ffwd_zero_(out->q, FFWD_MAX_DOF);
        ffwd_zero_(out->qd, FFWD_MAX_DOF);
        ffwd_zero_(out->qdd, FFWD_MAX_DOF);
        return st;
    }
    /* (a) limits at the current point: an interval [lo, hi] of u */
    lo = -U;
    hi = U;
    xss = BIG;
    for (k = 0; k < 2u * n; k++) {
        ffwd_real al, be, ga, dp, dm, ev;
        j = k < n ? k : k - n;
        if (k < n) {
            const ffwd_joint *J = &m->joint[j];
            ffwd_real fc = J->coulomb * sgnr(d1[j]);
            ffwd_real tau = keep * J->tau_max;
            ffwd_real cc = s0->c[j] + th * (s1->c[j] - s0->c[j]);
            al = s0->a[j] + th * (s1->a[j] - s0->a[j]);
            be = s0->b[j] + th * (s1->b[j] - s0->b[j]);
            ga = J->viscous * d1[j];
            dp = cc + maxr(fc, FR(0)) - tau;
            dm = -cc - minr(fc, FR(0)) - tau;
        } else {
            al = d1[j];
            be = d2[j];
            ga = FR(0);
            dp = -(keep * m->joint[j].a_max);
            dm = dp;
        }
        ev = be * x + ga * kap;
        /* largest x at which holding the speed (u = 0) is admissible here */
        xss = minr(xss, minr(xroot(be, ga, dp), xroot(-be, -ga, dm)));
        if (k < n) {    /* the exact torque rows: a u + tau0 within +-tau_max */
            al = ta[j] - gq[j];
            ev = tau0[j];
            dp = -(keep * m->joint[j].tau_max);
            dm = dp;
        }
        if (absr(al) <= ALPHA_TOL * (FR(1) + absr(dp) + absr(dm))) {
            if (ev + dp > REST_TOL || -ev + dm > REST_TOL)
                flags |= FFWD_GOV_CONFLICT;
        } else if (al > FR(0)) {
            hi = minr(hi, (-dp - ev) / al);
            lo = maxr(lo, (dm - ev) / al);
        } else {
            lo = maxr(lo, (-dp - ev) / al);
            hi = minr(hi, (dm - ev) / al);
        }
    }
    /* velocity limits at the end of this cycle (q' there predicted to first order) */
    for (j = 0; j < n; j++) {
        ffwd_real d1n = absr(d1[j] + d2[j] * kap * dt);
        ffwd_real vq = keep * m->joint[j].v_max;
        if (d1n * FR(1e-15) < vq)
            hi = minr(hi, (vq / maxr(d1n, vq * FR(1e-15)) - kap) / dt);
    }
    /* (c) under the safe curve at the end of this cycle */
    cap = safety_cap(g, x, 0);
    /* tracker target: the command, or the lowest point of the safe curve over the
     * distance covered while u swings through its range (jerk-bounded anticipation) */
    look = g->sigma + kap * (maxr(g->u, FR(0)) / V + dt);
    xa = s0->x_safe + th * (s1->x_safe - s0->x_safe);
    for (k = 1; k < g->count; k++) {     /* (Sk and Sk - ds grow with k: later k add nothing) */
        ffwd_real Sk = (ffwd_real)k * ds;
        ffwd_real Xk = slot_at(g, k)->x_safe;
        if (Sk <= look) {
            xa = minr(xa, Xk);
        } else if (Sk - ds < look) {
            ffwd_real Xp = slot_at(g, k - 1u)->x_safe;
            xa = minr(xa, Xp + (look - (Sk - ds)) / ds * (Xk - Xp));
        } else {
            break;
        }
    }
    kt = minr(cmd, sqrt0(minr(xa, xss)));
    if (kt < cmd)
        flags |= FFWD_GOV_CAPPED;
    /* (b), (d): jerk-bounded approach of the target */
    e = kt - kap;
    if (!g->mins_ok) {          /* the window's least vp and dr (kept by push and the pops) */
        g->vp_min = BIG;
        g->dr_min = BIG;
        for (k = 0; k < g->count; k++) {
            g->vp_min = minr(g->vp_min, slot_at(g, k)->vp);
            g->dr_min = minr(g->dr_min, slot_at(g, k)->dr);
        }
        g->mins_ok = 1u;
    }
    Vp = minr(V, g->vp_min);    /* ramp rate of plan D */
    Dr = minr(U, g->dr_min);    /* its largest deceleration */
    /* largest |u| that still lets u ramp back to 0 at rate Vp (what the joint jerk limits
     * allow in the window, at most V) without passing the target */
    ud = minr(U, FR(2) * absr(e) / (sqrt0(dt * dt + FR(2) * absr(e) / Vp) + dt));
    ud = e >= FR(0) ? ud : -ud;
    vlo = -V;
    vhi = V;
    if (g->u_last != g->u) {    /* it came to rest within the last cycle at u_last: within h of that too */
        vlo = maxr(vlo, (g->u_last - V * dt - g->u) / dt);
        vhi = minr(vhi, (g->u_last + V * dt - g->u) / dt);
    }
    for (j = 0; j < n; j++) {
        const ffwd_joint *J = &m->joint[j];
        if (J->has_limits & FFWD_LIM_JERK) {
            ffwd_real jm = keep * J->j_max;
            /* the command's jerk over this cycle, exactly: J0 + q' du/dt */
            ffwd_real J0 = (d2[j] * x + d1[j] * g->u - g->qdd_prev[j]) / dt;
            ffwd_real al = d1[j];
            if (absr(al) > ALPHA_TOL) {
                ffwd_real va = (-jm - J0) / al, vb = (jm - J0) / al;
                vlo = maxr(vlo, minr(va, vb));
                vhi = minr(vhi, maxr(va, vb));
            } else if (absr(J0) > jm) {
                jerk_bad = 1;
            }
        }
    }
    if (vlo > vhi) {
        jerk_bad = 1;
        vlo = -V;
        vhi = V;
    }
    v = minr(maxr((ud - g->u) / dt, vlo), vhi);
    utr = g->u + v * dt;
    hic = minr(hi, cap);
    if (lo > hic) {
        unew = hic;
        flags |= FFWD_GOV_CONFLICT;
    } else {
        unew = minr(maxr(utr, lo), hic);
    }
    /* (b) with (c): the step is kept only if a braking plan from where it leads meets
     * every limit with the rate of rate bounded; else the largest u towards it that has
     * one (halvings), else the stored plan's own u. Where the stored plan D repeats u
     * this cycle (vouched for last cycle, where the window held the speed), that u unless
     * the step asks for less. */
    got = 0;
    held = g->hold_left > 0u;   /* (only an accepted plan D sets it) */
    if (!(held && unew >= g->u) && step_fits(g, unew, lo, hi, vlo, vhi, jerk_bad)
        && !(flags & FFWD_GOV_CONFLICT)) {
        kind = vouch(g, unew, Vp, Dr, 1, 0u, &Dk);
        got = keep_plan(g, kind, Dk, Vp, 0u);
    }
    if (!got) {
        /* the stored plan's u (held: u again), or else the largest u towards the step's
         * with a plan D that repeats it GOV_HOLD cycles before it brakes: where the window
         * holds the speed, one full check every GOV_HOLD + 1 cycles */
        ffwd_real ua, ub, ufb = plan_step(g, x), Dm = Dr, uw;
        ua = ufb;
        ub = unew;
        /* first the largest u whose plan D stop fits the window (its continuous stop
         * length, for the largest D tried): usually what the window allows */
        if (g->plan == FFWD_GOV_PLAN_DECEL)
            Dm = maxr(Dm, g->plan_D);
        if (!held && ufb < unew && Dm > FR(0)) {
            uw = stop_fit_u(g, ufb, unew, Dm, Vp, GOV_HOLD);
            if (uw > ufb && uw < unew) {
                ub = uw;
                if (step_fits(g, uw, lo, hi, vlo, vhi, jerk_bad)) {
                    kind = vouch(g, uw, Vp, Dr, 0, GOV_HOLD, &Dk);
                    got = keep_plan(g, kind, Dk, Vp, GOV_HOLD);
                    if (got)
                        ua = uw;
                }
            }
        }
        nb = got || held ? 0u : GOV_BISECT;   /* no halvings after the first try holds */
        for (k = 0; k < nb; k++) {
            ffwd_real mid = FR(0.5) * (ua + ub);
            int r = 0;
            if (step_fits(g, mid, lo, hi, vlo, vhi, jerk_bad)) {
                kind = vouch(g, mid, Vp, Dr, 0, GOV_HOLD, &Dk);
                r = keep_plan(g, kind, Dk, Vp, GOV_HOLD);
            }
            if (!r) {
                ub = mid;
            } else {
                ua = mid;
                got = 1;
            }
        }
        if (!got) {
            if (held)
                g->hold_left--;
            if (!(lo - FR(1e-9) * (FR(1) + absr(lo)) <= ufb && ufb <= hi + FR(1e-9) * (FR(1) + absr(hi))))
                flags |= FFWD_GOV_CONFLICT;
        } else {
            ufb = ua;
        }
        if (ufb < unew)
            flags |= FFWD_GOV_CAPPED;
        unew = ufb;
    }
    vact = (unew - g->u) / dt;
    if (jerk_bad || vact < vlo - FR(1e-9) * (FR(1) + absr(vlo))
        || vact > vhi + FR(1e-9) * (FR(1) + absr(vhi)))
        flags |= FFWD_GOV_JERK;
    /* the command at this cycle */
    for (j = 0; j < n; j++) {
        out->qdd[j] = d2[j] * x + d1[j] * unew;
        out->tau[j] = tau0[j] + (ta[j] - gq[j]) * unew;
    }
    out->s = (ffwd_real)g->base * ds + g->sigma;
    out->override = kap;
    out->rate = unew;
    out->rate_rate = vact;
    out->safe_override = sqrt0(s0->x_safe + th * (s1->x_safe - s0->x_safe));
    if (kap == FR(0))
        flags |= FFWD_GOV_AT_REST;
    out->flags = flags;
    /* advance by one cycle at constant u */
    if (unew < FR(0) && kap + unew * dt <= FR(0)) {
        sig = g->sigma + x / (FR(-2) * unew);
        kn = FR(0);
        unew = FR(0);
    } else {
        sig = g->sigma + kap * dt + FR(0.5) * dt * dt * unew;
        kn = kap + unew * dt;
    }
    send = (ffwd_real)(g->count - 1u) * ds;
    /* at rest, commanded on, short of the path's end by less than the smallest move the
     * joint jerk limits allow (a few Vp dt^3, Vp from them): there (q moves by at most
     * 4 j_max dt^3) */
    if (sig > send || send - sig <= FR(1e-9) * ds
        || (kn == FR(0) && g->finished && cmd > FR(0) && Vp < V
            && send - sig <= FR(8) * Vp * dt * dt * dt))
        sig = send;
    for (k = 0; k <= g->pieces; k++) {
        if (g->count > 1u && sig >= ds) {
            const ffwd_gov_slot *gone = slot_at_c(g, 0);
            sig -= ds;
            if (gone->vp == g->vp_min || gone->dr == g->dr_min)
                g->mins_ok = 0u;
            if (g->clean > 0u)
                g->clean--;
            g->head = (g->head + 1u) % g->cfg.horizon;
            g->count--;
            g->base++;
        }
    }
    g->sigma = sig;
    g->kappa = kn;
    g->u = unew;
    g->u_last = out->rate;
    for (j = 0; j < n; j++)
        g->qdd_prev[j] = out->qdd[j];
    return FFWD_OK;
}
