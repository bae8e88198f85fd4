/* dynamics.c - inverse dynamics (recursive Newton-Euler), gravity torque, torque parts,
 * mass matrix (composite rigid body) and forward dynamics (articulated body) on (R, p)
 * transforms (see spatial.h). All work in the aligned joint frames set up by
 * ffwd_work_init (spatial.h): every joint turns about / slides along its local z axis, so
 * the joint rotation Rz(q) mixes two components only and the motion subspace is e_z.
 * Inverse dynamics, gravity and the torque parts apply the fixed rotation E and Rz(q)
 * separately (E as a signed permutation when it is one, a model property); the mass
 * matrix and forward dynamics use the full R = E Rz(q) in Featherstone's spatial form.
 * Inverse dynamics and the torque parts use the 3-D vector form of Newton-Euler
 * (angular velocity and acceleration, linear acceleration of the frame origin: no linear
 * velocity is needed), the body forces computed in the outward pass.
 *
 * Per-body state lives in the work scratch: B(i) = Rt[9] p[3] then 18 numbers whose
 * meaning depends on the function (spatial v[6] a[6] f[6], or w wd al . f n).
 */
#include "spatial.h"

#define BODY(w, i) ((w)->scratch + FFWD_OFF_B + FFWD_B_STRIDE * (uint32_t)(i))
#define AUX(w, i) ((w)->scratch + FFWD_OFF_A + FFWD_A_STRIDE * (uint32_t)(i))
#define KONST(w, i) ((w)->scratch + FFWD_OFF_K + FFWD_K_STRIDE * (uint32_t)(i))
#define TRIG_Q(w) ((w)->scratch + FFWD_OFF_TRIG)
#define TRIG_S(w) ((w)->scratch + FFWD_OFF_TRIG + FFWD_TRIG_STRIDE)
#define TRIG_C(w) ((w)->scratch + FFWD_OFF_TRIG + 2 * FFWD_TRIG_STRIDE)

/* sin, cos of every joint (two at a time); p = p' + q E e_z of every prismatic joint */
void ffwd_trig_(const ffwd_model *m, ffwd_work *w, const ffwd_real *q)
{
    ffwd_real *qb = TRIG_Q(w);
    const uint32_t n = m->dof;
    uint32_t i;
    for (i = 0; i < n; i++) {
        const ffwd_real x = q[i];
        qb[i] = x;
        if (m->joint[i].type != FFWD_REVOLUTE) {
            const ffwd_real *K = KONST(w, i), *E = K + FFWD_K_E, *pc = K + FFWD_K_P;
            ffwd_real *p = BODY(w, i) + 9;
            p[0] = pc[0] + x * E[2];
            p[1] = pc[1] + x * E[5];
            p[2] = pc[2] + x * E[8];
        }
    }
    qb[n] = FR(0);
    ffwd_sincos_pairs_(qb, TRIG_S(w), TRIG_C(w), (n + 1u) / 2u);
}

/* R = E Rz(q) (revolute) or E (prismatic) and p of every body */
void ffwd_transforms_(const ffwd_model *m, ffwd_work *w, const ffwd_real *q)
{
    const ffwd_real *sb = TRIG_S(w), *cb = TRIG_C(w);
    uint32_t i;
    int r;
    ffwd_trig_(m, w, q);
    for (i = 0; i < m->dof; i++) {
        const ffwd_real *K = KONST(w, i), *E = K + FFWD_K_E;
        ffwd_real *R = BODY(w, i);
        if (m->joint[i].type == FFWD_REVOLUTE) {
            const ffwd_real s = sb[i], c = cb[i];
            for (r = 0; r < 3; r++) {
                R[3 * r] = c * E[3 * r] + s * E[3 * r + 1];
                R[3 * r + 1] = c * E[3 * r + 1] - s * E[3 * r];
                R[3 * r + 2] = E[3 * r + 2];
            }
            R[9] = K[FFWD_K_P]; R[10] = K[FFWD_K_P + 1]; R[11] = K[FFWD_K_P + 2];
        } else {
            for (r = 0; r < 9; r++)
                R[r] = E[r];
        }
    }
}

/* body parameters in the aligned frame (payload lumped into tool_parent) */
static const ffwd_real *body_params(const ffwd_model *m, const ffwd_work *w, const ffwd_real *tp, uint32_t i)
{
    return (int32_t)i == m->tool_parent ? tp : KONST(w, i) + FFWD_K_TH;
}

/* S . F for joint J (F a spatial force; S = e_z in the aligned frame) */
static ffwd_real s_dot(const ffwd_joint *J, const ffwd_real *F)
{
    return J->type == FFWD_REVOLUTE ? F[2] : F[5];
}

/* Forward pass of velocities and accelerations (base acceleration -g: gravity enters
 * as a fictitious upward acceleration). qd, qdd may be NULL for zero. */
void ffwd_pass_va_(const ffwd_model *m, ffwd_work *w, const ffwd_real *qd, const ffwd_real *qdd,
                    const ffwd_real *g)
{
    ffwd_real v0[6] = { 0 }, a0[6] = { 0 };
    uint32_t i;
    a0[3] = -g[0]; a0[4] = -g[1]; a0[5] = -g[2];
    for (i = 0; i < m->dof; i++) {
        const ffwd_joint *J = &m->joint[i];
        ffwd_real *B = BODY(w, i), *v = B + 12, *a = B + 18;
        const ffwd_real *vp = v0, *ap = a0;
        ffwd_real dq = qd != NULL ? qd[i] : FR(0), ddq = qdd != NULL ? qdd[i] : FR(0);
        if (J->parent >= 0) {
            vp = BODY(w, J->parent) + 12;
            ap = BODY(w, J->parent) + 18;
        }
        xm_apply(B, B + 9, vp, v);
        xm_apply(B, B + 9, ap, a);
        if (J->type == FFWD_REVOLUTE) {
            /* v += e_z dq; a += e_z ddq + v x e_z dq */
            v[2] += dq;
            a[3] += v[4] * dq; a[4] -= v[3] * dq;
            a[0] += v[1] * dq; a[1] -= v[0] * dq; a[2] += ddq;
        } else {
            v[5] += dq;
            a[3] += v[1] * dq; a[4] -= v[0] * dq; a[5] += ddq;
        }
    }
}

/* Body force of a rigid body from the angular velocity w, angular acceleration wd and
 * linear acceleration al of its frame origin (all in its frame): with h = m c and Io the
 * inertia about the origin,  f = m al + wd x h + w x (w x h),  n = Io wd + w x (Io w) + h x al. */
static inline void body_force(const ffwd_real *th, const ffwd_real *W, const ffwd_real *WD,
                              const ffwd_real *AL, ffwd_real *F, ffwd_real *N)
{
    const ffwd_real *h = th + 1;
    ffwd_real Iw[3], t[3], u[3], r[3];
    Iw[0] = th[4] * W[0] + th[5] * W[1] + th[6] * W[2];
    Iw[1] = th[5] * W[0] + th[7] * W[1] + th[8] * W[2];
    Iw[2] = th[6] * W[0] + th[8] * W[1] + th[9] * W[2];
    v3_cross(W, Iw, t);
    v3_cross(h, AL, u);
    N[0] = th[4] * WD[0] + th[5] * WD[1] + th[6] * WD[2] + t[0] + u[0];
    N[1] = th[5] * WD[0] + th[7] * WD[1] + th[8] * WD[2] + t[1] + u[1];
    N[2] = th[6] * WD[0] + th[8] * WD[1] + th[9] * WD[2] + t[2] + u[2];
    v3_cross(W, h, t);
    v3_cross(W, t, u);
    v3_cross(WD, h, r);
    F[0] = th[0] * AL[0] + r[0] + u[0];
    F[1] = th[0] * AL[1] + r[1] + u[1];
    F[2] = th[0] * AL[2] + r[2] + u[2];
}

/* The fixed rotation E of joint frame K: o = E^T x (parent -> child) and o = E x (child ->
 * parent). When E is a signed permutation (row r: sign K_SG[r] in column K_IX[r], the
 * column indices stored as int32 bits) the products are moves and sign flips. */
static inline void e_tmul(const ffwd_real *K, const ffwd_real *x, ffwd_real *o)
{
    if (K[FFWD_K_PERM] != FR(0)) {
        int32_t ix[3];
        memcpy(ix, K + FFWD_K_IX, sizeof ix);
        o[ix[0]] = K[FFWD_K_SG] * x[0];
        o[ix[1]] = K[FFWD_K_SG + 1] * x[1];
        o[ix[2]] = K[FFWD_K_SG + 2] * x[2];
    } else {
        m3_tmul(K + FFWD_K_E, x, o);
    }
}

static inline void e_mul(const ffwd_real *K, const ffwd_real *x, ffwd_real *o)
{
    if (K[FFWD_K_PERM] != FR(0)) {
        int32_t ix[3];
        memcpy(ix, K + FFWD_K_IX, sizeof ix);
        o[0] = K[FFWD_K_SG] * x[ix[0]];
        o[1] = K[FFWD_K_SG + 1] * x[ix[1]];
        o[2] = K[FFWD_K_SG + 2] * x[ix[2]];
    } else {
        m3_mul(K + FFWD_K_E, x, o);
    }
}

/* o = Rz(q)^T x and o = Rz(q) x with c = cos q, s = sin q (o may not alias x) */
static inline void rz_tmul(ffwd_real c, ffwd_real s, const ffwd_real *x, ffwd_real *o)
{
    o[0] = c * x[0] + s * x[1];
    o[1] = c * x[1] - s * x[0];
    o[2] = x[2];
}

static inline void rz_mul(ffwd_real c, ffwd_real s, const ffwd_real *x, ffwd_real *o)
{
    o[0] = c * x[0] - s * x[1];
    o[1] = s * x[0] + c * x[1];
    o[2] = x[2];
}

/* Recursive Newton-Euler in 3-D vector form (angular velocity, angular acceleration,
 * linear acceleration of each frame origin; base acceleration -g), the body forces
 * computed in the same outward pass, then summed inward. Needs ffwd_trig_.
 * B(i): w at 12, wd at 15, al at 18, f at 24, n at 27. */
static void id_pass(const ffwd_model *m, ffwd_work *w, const ffwd_real *tp, const ffwd_real *qd,
                    const ffwd_real *qdd, const ffwd_real *g, ffwd_real *tau)
{
    const ffwd_real *sb = TRIG_S(w), *cb = TRIG_C(w);
    ffwd_real a0[3];
    const uint32_t n = m->dof;
    uint32_t i;
    a0[0] = -g[0]; a0[1] = -g[1]; a0[2] = -g[2];
    for (i = 0; i < n; i++) {
        const ffwd_joint *J = &m->joint[i];
        const ffwd_real *K = KONST(w, i);
        ffwd_real *B = BODY(w, i);
        const int rev = J->type == FFWD_REVOLUTE;
        const ffwd_real *p = rev ? K + FFWD_K_P : B + 9;
        const ffwd_real dq = qd[i], ddq = qdd[i], c = cb[i], s = sb[i];
        ffwd_real t[3], u[3], x[3], wm[3], wdm[3], xm[3], W[3], WD[3], AL[3];
        int k;
        if (J->parent >= 0) {
            const ffwd_real *P = BODY(w, J->parent), *wp = P + 12, *wdp = P + 15, *ap = P + 18;
            v3_cross(wp, p, u);
            v3_cross(wp, u, t);
            v3_cross(wdp, p, u);
            x[0] = ap[0] + u[0] + t[0]; x[1] = ap[1] + u[1] + t[1]; x[2] = ap[2] + u[2] + t[2];
            e_tmul(K, wp, wm);
            e_tmul(K, wdp, wdm);
            e_tmul(K, x, xm);
            if (rev) {
                rz_tmul(c, s, wm, W);
                rz_tmul(c, s, wdm, WD);
                rz_tmul(c, s, xm, AL);
                /* wd += e_z ddq + w_r x e_z dq; w += e_z dq */
                WD[0] += W[1] * dq; WD[1] -= W[0] * dq; WD[2] += ddq;
                W[2] += dq;
            } else {
                for (k = 0; k < 3; k++) {
                    W[k] = wm[k]; WD[k] = wdm[k]; AL[k] = xm[k];
                }
                /* al += e_z ddq + 2 w x e_z dq */
                AL[0] += FR(2) * W[1] * dq; AL[1] -= FR(2) * W[0] * dq; AL[2] += ddq;
            }
        } else {
            /* base parent: no velocity, acceleration -g */
            e_tmul(K, a0, xm);
            W[0] = W[1] = FR(0);
            WD[0] = WD[1] = FR(0);
            if (rev) {
                /* w = e_z dq, wd = e_z ddq: body_force with the zeros taken out */
                const ffwd_real *th = body_params(m, w, tp, i), *h = th + 1;
                const ffwd_real d2 = dq * dq;
                rz_tmul(c, s, xm, AL);
                W[2] = dq; WD[2] = ddq;
                v3_cross(h, AL, u);
                B[27] = ddq * th[6] - d2 * th[8] + u[0];
                B[28] = ddq * th[8] + d2 * th[6] + u[1];
                B[29] = ddq * th[9] + u[2];
                B[24] = th[0] * AL[0] - ddq * h[1] - d2 * h[0];
                B[25] = th[0] * AL[1] + ddq * h[0] - d2 * h[1];
                B[26] = th[0] * AL[2];
                for (k = 0; k < 3; k++) {
                    B[12 + k] = W[k]; B[15 + k] = WD[k]; B[18 + k] = AL[k];
                }
                continue;
            }
            AL[0] = xm[0]; AL[1] = xm[1]; AL[2] = xm[2] + ddq;
            W[2] = FR(0); WD[2] = FR(0);
        }
        body_force(body_params(m, w, tp, i), W, WD, AL, B + 24, B + 27);
        for (k = 0; k < 3; k++) {
            B[12 + k] = W[k]; B[15 + k] = WD[k]; B[18 + k] = AL[k];
        }
    }
    for (i = n; i-- > 0u;) {
        const ffwd_joint *J = &m->joint[i];
        const ffwd_real *B = BODY(w, i), *F = B + 24, *N = B + 27;
        const int rev = J->type == FFWD_REVOLUTE;
        tau[i] = rev ? N[2] : F[2];
        if (J->parent >= 0) {
            const ffwd_real *K = KONST(w, i);
            const ffwd_real *p = rev ? K + FFWD_K_P : B + 9;
            ffwd_real *P = BODY(w, J->parent), rf[3], rn[3], t[3];
            if (rev) {
                ffwd_real zf[3], zn[3];
                rz_mul(cb[i], sb[i], F, zf);
                rz_mul(cb[i], sb[i], N, zn);
                e_mul(K, zf, rf);
                e_mul(K, zn, rn);
            } else {
                e_mul(K, F, rf);
                e_mul(K, N, rn);
            }
            v3_cross(p, rf, t);
            P[24] += rf[0]; P[25] += rf[1]; P[26] += rf[2];
            P[27] += rn[0] + t[0]; P[28] += rn[1] + t[1]; P[29] += rn[2] + t[2];
        }
    }
}

ffwd_status ffwd_inverse_dynamics(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                                  const ffwd_real *qd, const ffwd_real *qdd, ffwd_real *tau)
{
    const ffwd_real *in[3];
    ffwd_real *out[1];
    const int shape[1] = { FFWD_SHAPE_N };
    const ffwd_real *tp;
    ffwd_status st;
    uint32_t i;
    if (!(qd != NULL && qdd != NULL && tau != NULL && ffwd_ready_(m, w, q, qd, qdd))) {
        in[0] = q; in[1] = qd; in[2] = qdd; out[0] = tau;
        st = ffwd_enter_(m, w, in, 3, out, shape, 1);
        if (st != FFWD_OK)
            return st;
    }
    tp = ffwd_load_tool_body_(m, w);
    ffwd_trig_(m, w, q);
    id_pass(m, w, tp, qd, qdd, m->gravity, tau);
    for (i = 0; i < m->dof; i++)
        tau[i] += m->joint[i].armature * qdd[i] + friction_torque(&m->joint[i], qd[i]);
    return ffwd_out_ok_(tau, m->dof);
}

/* Gravity only: rotate g into each frame going out, accumulate mass and first moment
 * of each subtree coming back; tau_i = e_z . (g x h) (revolute), -M e_z . g
 * (prismatic). Needs ffwd_trig_. B(i): g at 12, (M, h) at 18. */
static void gravity_pass(const ffwd_model *m, ffwd_work *w, const ffwd_real *tp, ffwd_real *tau)
{
    const ffwd_real *sb = TRIG_S(w), *cb = TRIG_C(w);
    uint32_t i;
    for (i = 0; i < m->dof; i++) {
        ffwd_real *B = BODY(w, i);
        const int32_t par = m->joint[i].parent;
        const ffwd_real *gp = par >= 0 ? BODY(w, par) + 12 : m->gravity;
        const ffwd_real *th = body_params(m, w, tp, i);
        const ffwd_real *K = KONST(w, i);
        if (m->joint[i].type == FFWD_REVOLUTE) {
            ffwd_real gm[3];
            e_tmul(K, gp, gm);
            rz_tmul(cb[i], sb[i], gm, B + 12);
        } else {
            e_tmul(K, gp, B + 12);
        }
        B[18] = th[0]; B[19] = th[1]; B[20] = th[2]; B[21] = th[3];
    }
    for (i = m->dof; i-- > 0u;) {
        const ffwd_joint *J = &m->joint[i];
        ffwd_real *B = BODY(w, i), t[3];
        const ffwd_real M = B[18], *g = B + 12, *h = B + 19;
        const int rev = J->type == FFWD_REVOLUTE;
        tau[i] = rev ? g[0] * h[1] - g[1] * h[0] : -M * g[2];
        if (J->parent >= 0) {
            const ffwd_real *K = KONST(w, i);
            const ffwd_real *p = rev ? K + FFWD_K_P : B + 9;
            ffwd_real *P = BODY(w, J->parent);
            if (rev) {
                ffwd_real zh[3];
                rz_mul(cb[i], sb[i], h, zh);
                e_mul(K, zh, t);
            } else {
                e_mul(K, h, t);
            }
            P[18] += M;
            P[19] += t[0] + M * p[0];
            P[20] += t[1] + M * p[1];
            P[21] += t[2] + M * p[2];
        }
    }
}

ffwd_status ffwd_gravity_torque(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *tau)
{
    const ffwd_real *in[1];
    ffwd_real *out[1];
    const int shape[1] = { FFWD_SHAPE_N };
    ffwd_status st;
    if (!(tau != NULL && ffwd_ready_(m, w, q, NULL, NULL))) {
        in[0] = q; out[0] = tau;
        st = ffwd_enter_(m, w, in, 1, out, shape, 1);
        if (st != FFWD_OK)
            return st;
    }
    ffwd_trig_(m, w, q);
    gravity_pass(m, w, ffwd_load_tool_body_(m, w), tau);
    return ffwd_out_ok_(tau, m->dof);
}

ffwd_status ffwd_torque_parts(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                              const ffwd_real *qd, const ffwd_real *qdd, ffwd_real *inertial,
                              ffwd_real *velocity, ffwd_real *gravity, ffwd_real *friction)
{
    const ffwd_real zero3[3] = { 0, 0, 0 };
    const ffwd_real *in[3];
    ffwd_real *out[4];
    const int shape[4] = { FFWD_SHAPE_N, FFWD_SHAPE_N, FFWD_SHAPE_N, FFWD_SHAPE_N };
    const ffwd_real *tp;
    ffwd_real *zn;
    ffwd_status st;
    uint32_t i;
    if (!(qd != NULL && qdd != NULL && inertial != NULL && velocity != NULL && gravity != NULL && friction != NULL && ffwd_ready_(m, w, q, qd, qdd))) {
        in[0] = q; in[1] = qd; in[2] = qdd;
        out[0] = inertial; out[1] = velocity; out[2] = gravity; out[3] = friction;
        st = ffwd_enter_(m, w, in, 3, out, shape, 4);
        if (st != FFWD_OK)
            return st;
    }
    tp = ffwd_load_tool_body_(m, w);
    ffwd_trig_(m, w, q);
    zn = w->scratch + FFWD_OFF_TRIG;  /* dof zeros (q copy of the transforms, no longer needed) */
    ffwd_zero_(zn, m->dof);
    id_pass(m, w, tp, zn, qdd, zero3, inertial);
    id_pass(m, w, tp, qd, zn, zero3, velocity);
    gravity_pass(m, w, tp, gravity);
    for (i = 0; i < m->dof; i++) {
        inertial[i] += m->joint[i].armature * qdd[i];
        friction[i] = friction_torque(&m->joint[i], qd[i]);
    }
    if (ffwd_finite_(inertial, m->dof) && ffwd_finite_(velocity, m->dof)
        && ffwd_finite_(gravity, m->dof) && ffwd_finite_(friction, m->dof))
        return FFWD_OK;
    ffwd_zero_(inertial, m->dof); /* overflow: all four parts zero, like any error */
    ffwd_zero_(velocity, m->dof);
    ffwd_zero_(gravity, m->dof);
    ffwd_zero_(friction, m->dof);
    return FFWD_E_NONFINITE;
}

ffwd_status ffwd_mass_matrix(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *M)
{
    const ffwd_real *in[1];
    ffwd_real *out[1];
    const int shape[1] = { FFWD_SHAPE_NN };
    const ffwd_real *tp;
    ffwd_status st;
    uint32_t i, n, k;
    if (!(M != NULL && ffwd_ready_(m, w, q, NULL, NULL))) {
        in[0] = q; out[0] = M;
        st = ffwd_enter_(m, w, in, 1, out, shape, 1);
        if (st != FFWD_OK)
            return st;
    }
    n = m->dof;
    tp = ffwd_load_tool_body_(m, w);
    ffwd_transforms_(m, w, q);
    ffwd_zero_(M, n * n);
    for (i = 0; i < n; i++) {
        const ffwd_real *th = body_params(m, w, tp, i);
        ffwd_real *C = AUX(w, i);
        for (k = 0; k < 10u; k++)
            C[k] = th[k];
    }
    for (i = n; i-- > 0u;) {
        const ffwd_joint *J = &m->joint[i];
        ffwd_real *B = BODY(w, i), *C = AUX(w, i), F[6], G[6];
        int32_t j = (int32_t)i, step;
        /* F = I S with S = e_z: n = Io e_z, f = e_z x h (revolute); n = h x e_z, f = m e_z */
        if (J->type == FFWD_REVOLUTE) {
            F[0] = C[6]; F[1] = C[8]; F[2] = C[9];
            F[3] = -C[2]; F[4] = C[1]; F[5] = FR(0);
        } else {
            F[0] = C[2]; F[1] = -C[1]; F[2] = FR(0);
            F[3] = FR(0); F[4] = FR(0); F[5] = C[0];
        }
        M[i * n + i] = s_dot(J, F) + J->armature;
        /* walk up the ancestors: F in frame parent(j), M(i, parent) = S_parent . F */
        for (step = 0; step < (int32_t)n && m->joint[j].parent >= 0; step++) {
            const ffwd_real *Bj = BODY(w, j);
            int32_t par = m->joint[j].parent;
            xf_apply_t(Bj, Bj + 9, F, G);
            for (k = 0; k < 6u; k++)
                F[k] = G[k];
            M[i * n + (uint32_t)par] = M[(uint32_t)par * n + i] = s_dot(&m->joint[par], F);
            j = par;
        }
        if (J->parent >= 0) {
            ffwd_real X[10], *P = AUX(w, J->parent);
            params_to_parent(B, B + 9, C, X);
            for (k = 0; k < 10u; k++)
                P[k] += X[k];
        }
    }
    return ffwd_out_ok_(M, m->dof * m->dof);
}

/* ---- articulated body algorithm -------------------------------------------------- */
/* AUX(i): IA blocks A[9] B[9] C[9] (n = A w + B v, f = B^T w + C v), pA[6], U[6], D, u, c[6] */
#define ABA_A 0
#define ABA_B 9
#define ABA_C 18
#define ABA_P 27
#define ABA_U 33
#define ABA_D 39
#define ABA_UU 40
#define ABA_CV 41

static void skew(const ffwd_real *p, ffwd_real *X)
{
    X[0] = FR(0); X[1] = -p[2]; X[2] = p[1];
    X[3] = p[2]; X[4] = FR(0); X[5] = -p[0];
    X[6] = -p[1]; X[7] = p[0]; X[8] = FR(0);
}

/* O = R A R^T */
static void rot_sandwich(const ffwd_real *R, const ffwd_real *A, ffwd_real *O)
{
    ffwd_real T[9];
    int i, j;
    m3_mm(R, A, T);
    for (i = 0; i < 3; i++)
        for (j = 0; j < 3; j++)
            O[3 * i + j] = T[3 * i] * R[3 * j] + T[3 * i + 1] * R[3 * j + 1] + T[3 * i + 2] * R[3 * j + 2];
}

/* O = R A R^T for a symmetric A (upper triangle computed, then mirrored) */
static void rot_sandwich_sym(const ffwd_real *R, const ffwd_real *A, ffwd_real *O)
{
    ffwd_real T[9];
    int i, j;
    m3_mm(R, A, T);
    for (i = 0; i < 3; i++)
        for (j = i; j < 3; j++)
            O[3 * i + j] = O[3 * j + i] = T[3 * i] * R[3 * j] + T[3 * i + 1] * R[3 * j + 1] + T[3 * i + 2] * R[3 * j + 2];
}

/* acc += X^T Ia X for the 6x6 block matrix Ia = [A B; B^T C] given in the child frame */
static void aba_add_to_parent(const ffwd_real *R, const ffwd_real *p, const ffwd_real *Ia, ffwd_real *acc)
{
    ffwd_real A[9], Bm[9], C[9], px[9], T1[9], T2[9], Bt[9];
    int i, j;
    rot_sandwich_sym(R, Ia + ABA_A, A);
    rot_sandwich(R, Ia + ABA_B, Bm);
    rot_sandwich_sym(R, Ia + ABA_C, C);
    skew(p, px);
    /* A'' = A - B px + px B^T - px C px ;  B'' = B + px C ;  C'' = C */
    for (i = 0; i < 3; i++)
        for (j = 0; j < 3; j++)
            Bt[3 * i + j] = Bm[3 * j + i];
    m3_mm(px, C, T1);          /* px C */
    m3_mm(T1, px, T2);         /* px C px */
    for (i = 0; i < 9; i++) {
        acc[ABA_C + i] += C[i];
        acc[ABA_B + i] += Bm[i] + T1[i];
        A[i] -= T2[i];
    }
    m3_mm(Bm, px, T1);
    m3_mm(px, Bt, T2);
    for (i = 0; i < 9; i++)
        acc[ABA_A + i] += A[i] - T1[i] + T2[i];
}

/* o = Ia x for the block matrix */
static void aba_apply(const ffwd_real *Ia, const ffwd_real *x, ffwd_real *o)
{
    ffwd_real t[3], u[3];
    m3_mul(Ia + ABA_A, x, t);
    m3_mul(Ia + ABA_B, x + 3, u);
    o[0] = t[0] + u[0]; o[1] = t[1] + u[1]; o[2] = t[2] + u[2];
    m3_tmul(Ia + ABA_B, x, t);
    m3_mul(Ia + ABA_C, x + 3, u);
    o[3] = t[0] + u[0]; o[4] = t[1] + u[1]; o[5] = t[2] + u[2];
}

ffwd_status ffwd_forward_dynamics(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                                  const ffwd_real *qd, const ffwd_real *tau, ffwd_real *qdd)
{
    const ffwd_real *in[3];
    ffwd_real *out[1];
    const int shape[1] = { FFWD_SHAPE_N };
    const ffwd_real *tp;
    ffwd_status st;
    uint32_t i, n;
    int k, ok = 1;
    if (!(qd != NULL && tau != NULL && qdd != NULL && ffwd_ready_(m, w, q, qd, tau))) {
        in[0] = q; in[1] = qd; in[2] = tau; out[0] = qdd;
        st = ffwd_enter_(m, w, in, 3, out, shape, 1);
        if (st != FFWD_OK)
            return st;
    }
    n = m->dof;
    tp = ffwd_load_tool_body_(m, w);
    ffwd_transforms_(m, w, q);
    /* pass 1: velocities, bias accelerations c = v x S qd, rigid inertias, bias forces */
    {
        ffwd_real zg[3] = { 0, 0, 0 };
        ffwd_pass_va_(m, w, qd, NULL, zg);
    }
    for (i = 0; i < n; i++) {
        const ffwd_joint *J = &m->joint[i];
        ffwd_real *B = BODY(w, i), *X = AUX(w, i), Iv[6];
        const ffwd_real *th = body_params(m, w, tp, i), *vp;
        ffwd_real vq[6];
        /* c = a from pass_va (qdd = 0, no gravity) minus the parent's part X a_parent */
        if (J->parent >= 0) {
            vp = BODY(w, J->parent) + 18;
            xm_apply(B, B + 9, vp, vq);
        } else {
            for (k = 0; k < 6; k++)
                vq[k] = FR(0);
        }
        for (k = 0; k < 6; k++)
            X[ABA_CV + k] = B[18 + k] - vq[k];
        for (k = 0; k < 9; k++)
            X[ABA_A + k] = X[ABA_B + k] = X[ABA_C + k] = FR(0);
        X[ABA_A + 0] = th[4]; X[ABA_A + 1] = th[5]; X[ABA_A + 2] = th[6];
        X[ABA_A + 3] = th[5]; X[ABA_A + 4] = th[7]; X[ABA_A + 5] = th[8];
        X[ABA_A + 6] = th[6]; X[ABA_A + 7] = th[8]; X[ABA_A + 8] = th[9];
        skew(th + 1, X + ABA_B);
        X[ABA_C + 0] = X[ABA_C + 4] = X[ABA_C + 8] = th[0];
        inertia_apply(th, B + 12, Iv);
        crf(B + 12, Iv, X + ABA_P);
    }
    /* pass 2: articulated inertias, inward */
    for (i = n; i-- > 0u;) {
        const ffwd_joint *J = &m->joint[i];
        ffwd_real *B = BODY(w, i), *X = AUX(w, i), *Uo = X + ABA_U, Ia[27], pa[6], t[6];
        ffwd_real D, invD;
        /* U = Ia S with S = e_z (angular or linear): a column of Ia = [A B; B^T C] */
        if (J->type == FFWD_REVOLUTE) {
            Uo[0] = X[ABA_A + 2]; Uo[1] = X[ABA_A + 5]; Uo[2] = X[ABA_A + 8];
            Uo[3] = X[ABA_B + 6]; Uo[4] = X[ABA_B + 7]; Uo[5] = X[ABA_B + 8];
        } else {
            Uo[0] = X[ABA_B + 2]; Uo[1] = X[ABA_B + 5]; Uo[2] = X[ABA_B + 8];
            Uo[3] = X[ABA_C + 2]; Uo[4] = X[ABA_C + 5]; Uo[5] = X[ABA_C + 8];
        }
        D = s_dot(J, Uo) + J->armature;
        ok &= (D > FR(0));
        invD = FR(1) / D;
        X[ABA_D] = invD;
        X[ABA_UU] = tau[i] - friction_torque(J, qd[i]) - s_dot(J, X + ABA_P);
        if (J->parent >= 0) {
            ffwd_real *P = AUX(w, J->parent);
            const ffwd_real *U = X + ABA_U;
            int r, c;
            for (k = 0; k < 27; k++)
                Ia[k] = X[k];
            for (r = 0; r < 3; r++)
                for (c = 0; c < 3; c++) {
                    Ia[ABA_A + 3 * r + c] -= U[r] * U[c] * invD;
                    Ia[ABA_B + 3 * r + c] -= U[r] * U[3 + c] * invD;
                    Ia[ABA_C + 3 * r + c] -= U[3 + r] * U[3 + c] * invD;
                }
            aba_apply(Ia, X + ABA_CV, t);
            for (k = 0; k < 6; k++)
                pa[k] = X[ABA_P + k] + t[k] + U[k] * X[ABA_UU] * invD;
            aba_add_to_parent(B, B + 9, Ia, P);
            xf_add_t(B, B + 9, pa, P + ABA_P);
        }
    }
    /* pass 3: accelerations, outward (B(i).a reused) */
    for (i = 0; i < n; i++) {
        const ffwd_joint *J = &m->joint[i];
        ffwd_real *B = BODY(w, i), *X = AUX(w, i), ap[6], *a = B + 18;
        ffwd_real qa;
        if (J->parent >= 0) {
            for (k = 0; k < 6; k++)
                ap[k] = BODY(w, J->parent)[18 + k];
        } else {
            ap[0] = ap[1] = ap[2] = FR(0);
            ap[3] = -m->gravity[0]; ap[4] = -m->gravity[1]; ap[5] = -m->gravity[2];
        }
        xm_apply(B, B + 9, ap, a);
        for (k = 0; k < 6; k++)
            a[k] += X[ABA_CV + k];
        qa = (X[ABA_UU] - v3_dot(X + ABA_U, a) - v3_dot(X + ABA_U + 3, a + 3)) * X[ABA_D];
        qdd[i] = qa;
        if (J->type == FFWD_REVOLUTE) {
            a[2] += qa;
        } else {
            a[5] += qa;
        }
    }
    if (!ok || !ffwd_finite_(qdd, n)) {
        ffwd_zero_(qdd, n);
        return FFWD_E_SINGULAR;
    }
    return FFWD_OK;
}
