/* dynamics.c - inverse dynamics (recursive Newton-Euler), gravity torque, torque parts,
 * mass matrix (composite rigid body) and forward dynamics (articulated body), all in
 * Featherstone's spatial-vector form on (R, p) transforms (see spatial.h).
 *
 * Per-body state lives in the work scratch: B(i) = Rt[9] p[3] v[6] a[6] f[6].
 */
#include "spatial.h"

#define BODY(w, i) ((w)->scratch + FFWD_OFF_B + FFWD_B_STRIDE * (uint32_t)(i))
#define AUX(w, i) ((w)->scratch + FFWD_OFF_A + FFWD_A_STRIDE * (uint32_t)(i))
#define KONST(w, i) ((w)->scratch + FFWD_OFF_K + FFWD_K_STRIDE * (uint32_t)(i))

/* Rt, p of every body at q */
void ffwd_transforms_(const ffwd_model *m, ffwd_work *w, const ffwd_real *q)
{
    uint32_t i;
    for (i = 0; i < m->dof; i++) {
        ffwd_real *B = BODY(w, i);
        joint_xform(KONST(w, i), m->joint[i].type, q[i], B, B + 9);
    }
}

/* body parameters (payload lumped into tool_parent) */
static const ffwd_real *body_params(const ffwd_model *m, const ffwd_real *tp, uint32_t i)
{
    return (int32_t)i == m->tool_parent ? tp : m->joint[i].inertia;
}

/* S . F for joint J (F a spatial force) */
static ffwd_real s_dot(const ffwd_joint *J, const ffwd_real *F)
{
    return v3_dot(J->axis, J->type == FFWD_REVOLUTE ? F : F + 3);
}

/* Forward pass of velocities and accelerations (base acceleration -g: gravity enters
 * as a fictitious upward acceleration). qd, qdd may be NULL for zero. */
void ffwd_pass_va_(const ffwd_model *m, ffwd_work *w, const ffwd_real *qd, const ffwd_real *qdd,
                    const ffwd_real *g)
{
    ffwd_real v0[6] = { 0 }, a0[6] = { 0 };
    uint32_t i;
    int k;
    a0[3] = -g[0]; a0[4] = -g[1]; a0[5] = -g[2];
    for (i = 0; i < m->dof; i++) {
        const ffwd_joint *J = &m->joint[i];
        ffwd_real *B = BODY(w, i), *v = B + 12, *a = B + 18;
        const ffwd_real *vp = v0, *ap = a0;
        ffwd_real sd[3], sdd[3], t[3];
        ffwd_real dq = qd != NULL ? qd[i] : FR(0), ddq = qdd != NULL ? qdd[i] : FR(0);
        if (J->parent >= 0) {
            vp = BODY(w, J->parent) + 12;
            ap = BODY(w, J->parent) + 18;
        }
        for (k = 0; k < 3; k++) {
            sd[k] = J->axis[k] * dq;
            sdd[k] = J->axis[k] * ddq;
        }
        xm_apply(B, B + 9, vp, v);
        xm_apply(B, B + 9, ap, a);
        if (J->type == FFWD_REVOLUTE) {
            v[0] += sd[0]; v[1] += sd[1]; v[2] += sd[2];
            v3_cross(v + 3, sd, t);
            a[3] += t[0]; a[4] += t[1]; a[5] += t[2];
            v3_cross(v, sd, t);
            a[0] += sdd[0] + t[0]; a[1] += sdd[1] + t[1]; a[2] += sdd[2] + t[2];
        } else {
            v[3] += sd[0]; v[4] += sd[1]; v[5] += sd[2];
            v3_cross(v, sd, t);
            a[3] += sdd[0] + t[0]; a[4] += sdd[1] + t[1]; a[5] += sdd[2] + t[2];
        }
    }
}

/* Rigid-body Newton-Euler: tau = S^T f after the forward pass_va. */
static void pass_forces(const ffwd_model *m, ffwd_work *w, const ffwd_real *tp, ffwd_real *tau)
{
    uint32_t i;
    for (i = 0; i < m->dof; i++) {
        ffwd_real *B = BODY(w, i), Iv[6], c[6];
        const ffwd_real *th = body_params(m, tp, i);
        inertia_apply(th, B + 12, Iv);
        inertia_apply(th, B + 18, B + 24);
        crf(B + 12, Iv, c);
        B[24] += c[0]; B[25] += c[1]; B[26] += c[2];
        B[27] += c[3]; B[28] += c[4]; B[29] += c[5];
    }
    for (i = m->dof; i-- > 0u;) {
        const ffwd_joint *J = &m->joint[i];
        ffwd_real *B = BODY(w, i);
        tau[i] = s_dot(J, B + 24);
        if (J->parent >= 0)
            xf_add_t(B, B + 9, B + 24, BODY(w, J->parent) + 24);
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
    in[0] = q; in[1] = qd; in[2] = qdd; out[0] = tau;
    st = ffwd_enter_(m, w, in, 3, out, shape, 1);
    if (st != FFWD_OK)
        return st;
    tp = ffwd_load_tool_body_(m, w);
    ffwd_transforms_(m, w, q);
    ffwd_pass_va_(m, w, qd, qdd, m->gravity);
    pass_forces(m, w, tp, tau);
    for (i = 0; i < m->dof; i++)
        tau[i] += m->joint[i].armature * qdd[i] + friction_torque(&m->joint[i], qd[i]);
    return FFWD_OK;
}

/* Gravity only: rotate g into each frame going out, accumulate mass and first moment
 * of each subtree coming back; tau_i = axis . (g x h) (revolute), -axis . (M g)
 * (prismatic). Needs transforms(). B(i): g at v, (M, h) at a. */
static void gravity_pass(const ffwd_model *m, ffwd_work *w, const ffwd_real *tp, ffwd_real *tau)
{
    uint32_t i;
    for (i = 0; i < m->dof; i++) {
        ffwd_real *B = BODY(w, i);
        const int32_t par = m->joint[i].parent;
        const ffwd_real *gp = par >= 0 ? BODY(w, par) + 12 : m->gravity;
        const ffwd_real *th = body_params(m, tp, i);
        m3_tmul(B, gp, B + 12);
        B[18] = th[0]; B[19] = th[1]; B[20] = th[2]; B[21] = th[3];
    }
    for (i = m->dof; i-- > 0u;) {
        const ffwd_joint *J = &m->joint[i];
        ffwd_real *B = BODY(w, i), t[3];
        const ffwd_real M = B[18];
        if (J->type == FFWD_REVOLUTE) {
            v3_cross(B + 12, B + 19, t);
            tau[i] = v3_dot(J->axis, t);
        } else {
            tau[i] = -M * v3_dot(J->axis, B + 12);
        }
        if (J->parent >= 0) {
            ffwd_real *P = BODY(w, J->parent);
            m3_mul(B, B + 19, t);
            P[18] += M;
            P[19] += t[0] + M * B[9];
            P[20] += t[1] + M * B[10];
            P[21] += t[2] + M * B[11];
        }
    }
}

ffwd_status ffwd_gravity_torque(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *tau)
{
    const ffwd_real *in[1];
    ffwd_real *out[1];
    const int shape[1] = { FFWD_SHAPE_N };
    ffwd_status st;
    in[0] = q; out[0] = tau;
    st = ffwd_enter_(m, w, in, 1, out, shape, 1);
    if (st != FFWD_OK)
        return st;
    ffwd_transforms_(m, w, q);
    gravity_pass(m, w, ffwd_load_tool_body_(m, w), tau);
    return FFWD_OK;
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
    ffwd_status st;
    uint32_t i;
    in[0] = q; in[1] = qd; in[2] = qdd;
    out[0] = inertial; out[1] = velocity; out[2] = gravity; out[3] = friction;
    st = ffwd_enter_(m, w, in, 3, out, shape, 4);
    if (st != FFWD_OK)
        return st;
    tp = ffwd_load_tool_body_(m, w);
    ffwd_transforms_(m, w, q);
    ffwd_pass_va_(m, w, NULL, qdd, zero3);
    pass_forces(m, w, tp, inertial);
    ffwd_pass_va_(m, w, qd, NULL, zero3);
    pass_forces(m, w, tp, velocity);
    gravity_pass(m, w, tp, gravity);
    for (i = 0; i < m->dof; i++) {
        inertial[i] += m->joint[i].armature * qdd[i];
        friction[i] = friction_torque(&m->joint[i], qd[i]);
    }
    return FFWD_OK;
}

ffwd_status ffwd_mass_matrix(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *M)
{
    const ffwd_real *in[1];
    ffwd_real *out[1];
    const int shape[1] = { FFWD_SHAPE_NN };
    const ffwd_real *tp;
    ffwd_status st;
    uint32_t i, n, k;
    in[0] = q; out[0] = M;
    st = ffwd_enter_(m, w, in, 1, out, shape, 1);
    if (st != FFWD_OK)
        return st;
    n = m->dof;
    tp = ffwd_load_tool_body_(m, w);
    ffwd_transforms_(m, w, q);
    ffwd_zero_(M, n * n);
    for (i = 0; i < n; i++) {
        const ffwd_real *th = body_params(m, tp, i);
        ffwd_real *C = AUX(w, i);
        for (k = 0; k < 10u; k++)
            C[k] = th[k];
    }
    for (i = n; i-- > 0u;) {
        const ffwd_joint *J = &m->joint[i];
        ffwd_real *B = BODY(w, i), *C = AUX(w, i), S[6] = { 0 }, F[6], G[6];
        int32_t j = (int32_t)i, step;
        for (k = 0; k < 3u; k++)
            S[k + (J->type == FFWD_REVOLUTE ? 0u : 3u)] = J->axis[k];
        inertia_apply(C, S, F);
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
    return FFWD_OK;
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

/* acc += X^T Ia X for the 6x6 block matrix Ia = [A B; B^T C] given in the child frame */
static void aba_add_to_parent(const ffwd_real *R, const ffwd_real *p, const ffwd_real *Ia, ffwd_real *acc)
{
    ffwd_real A[9], Bm[9], C[9], px[9], T1[9], T2[9], Bt[9];
    int i, j;
    rot_sandwich(R, Ia + ABA_A, A);
    rot_sandwich(R, Ia + ABA_B, Bm);
    rot_sandwich(R, Ia + ABA_C, C);
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
    in[0] = q; in[1] = qd; in[2] = tau; out[0] = qdd;
    st = ffwd_enter_(m, w, in, 3, out, shape, 1);
    if (st != FFWD_OK)
        return st;
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
        const ffwd_real *th = body_params(m, tp, i), *vp;
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
        ffwd_real *B = BODY(w, i), *X = AUX(w, i), S[6] = { 0 }, Ia[27], pa[6], t[6];
        ffwd_real D, invD;
        for (k = 0; k < 3; k++)
            S[k + (J->type == FFWD_REVOLUTE ? 0 : 3)] = J->axis[k];
        aba_apply(X, S, X + ABA_U);
        D = v3_dot(S, X + ABA_U) + v3_dot(S + 3, X + ABA_U + 3) + J->armature;
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
            a[0] += J->axis[0] * qa; a[1] += J->axis[1] * qa; a[2] += J->axis[2] * qa;
        } else {
            a[3] += J->axis[0] * qa; a[4] += J->axis[1] * qa; a[5] += J->axis[2] * qa;
        }
    }
    if (!ok || !ffwd_finite_(qdd, n)) {
        ffwd_zero_(qdd, n);
        return FFWD_E_SINGULAR;
    }
    return FFWD_OK;
}
