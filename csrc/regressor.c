/* regressor.c - joint-torque regressor Y(q, qd, qdd) with Y theta = inverse dynamics.
 *
 * For body k the Newton-Euler body force f_k = I_k a_k + v_k x* I_k v_k is linear in
 * its 10 parameters: f_k = A_k theta_k (A_k the 6x10 body regressor from the spatial
 * velocity and acceleration, gravity included). Joint j's torque gets
 * S_j . (X_{j<-k}^T A_k theta_k) = (X_{k<-j} S_j) . (A_k theta_k) for every k in the
 * subtree of j: the motion subspace of j is carried down the subtree, one motion
 * transform per pair (O(n^2)), and each entry is a closed-form product of that motion
 * vector with the body's velocity and acceleration.
 * The dynamics run in the aligned frames of spatial.h, but theta_k is given in the
 * original joint frame k: the carried vector is rotated into that frame (x = A_k x'),
 * where the body's velocity and acceleration were rotated once.
 * The drive columns are qdd_j (armature), qd_j (viscous) and the Coulomb ramp.
 */
#include "spatial.h"

#define BODY(w, i) ((w)->scratch + FFWD_OFF_B + FFWD_B_STRIDE * (uint32_t)(i))
#define AUX(w, i) ((w)->scratch + FFWD_OFF_A + FFWD_A_STRIDE * (uint32_t)(i))
#define KONST(w, i) ((w)->scratch + FFWD_OFF_K + FFWD_K_STRIDE * (uint32_t)(i))

/* AUX(k): A_k[9], then in the original frame k: w[3], aw[3], beta = al + w x vl [3], |w|^2,
 * and the index of the joint whose subspace B(k)+24 currently holds */
#define RG_A 0
#define RG_W 9
#define RG_AW 12
#define RG_BETA 15
#define RG_WW 18
#define RG_MARK 19

/* o[3v..3v+3) = R x[3v..3v+3) for nv vectors (one copy of the code) */
static FFWD_NOINLINE void mul_n(const ffwd_real *R, const ffwd_real *x, ffwd_real *o, uint32_t nv)
{
    uint32_t v;
    for (v = 0; v < nv; v++)
        m3_mul(R, x + 3 * v, o + 3 * v);
}

/* the 10 entries s . (A theta) for a motion vector s = (sw, sv) in the original frame */
static void regressor_row(const ffwd_real *X, const ffwd_real *sw, const ffwd_real *sv, ffwd_real *row)
{
    const ffwd_real *w = X + RG_W, *aw = X + RG_AW, *beta = X + RG_BETA;
    ffwd_real u[3], t[3], r[3], svw = v3_dot(sv, w);
    row[0] = v3_dot(sv, beta);
    /* first moment: beta x sw + sv x aw + (sv . w) w - |w|^2 sv */
    v3_cross(beta, sw, t);
    v3_cross(sv, aw, r);
    row[1] = t[0] + r[0] + svw * w[0] - X[RG_WW] * sv[0];
    row[2] = t[1] + r[1] + svw * w[1] - X[RG_WW] * sv[1];
    row[3] = t[2] + r[2] + svw * w[2] - X[RG_WW] * sv[2];
    /* rotational inertia: sw^T I aw + u^T I w with u = sw x w */
    v3_cross(sw, w, u);
    row[4] = sw[0] * aw[0] + u[0] * w[0];
    row[5] = sw[0] * aw[1] + sw[1] * aw[0] + u[0] * w[1] + u[1] * w[0];
    row[6] = sw[0] * aw[2] + sw[2] * aw[0] + u[0] * w[2] + u[2] * w[0];
    row[7] = sw[1] * aw[1] + u[1] * w[1];
    row[8] = sw[1] * aw[2] + sw[2] * aw[1] + u[1] * w[2] + u[2] * w[1];
    row[9] = sw[2] * aw[2] + u[2] * w[2];
}

ffwd_status ffwd_regressor(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                           const ffwd_real *qd, const ffwd_real *qdd, ffwd_real *Y)
{
    const ffwd_real *in[3];
    ffwd_real *out[1];
    const int shape[1] = { FFWD_SHAPE_REG };
    ffwd_status st;
    uint32_t n, cols, j, k;
    if (!(qd != NULL && qdd != NULL && Y != NULL && ffwd_ready_(m, w, q, qd, qdd) && ffwd_transforms_(m, w, q))) {
        in[0] = q; in[1] = qd; in[2] = qdd; out[0] = Y;
        st = ffwd_enter_(m, w, in, 3, out, shape, 1);
        if (st != FFWD_OK)
            return st;
        (void)ffwd_transforms_(m, w, q);
    }
    n = m->dof;
    cols = 13u * n;
    ffwd_zero_(Y, n * cols);
    ffwd_pass_va_(m, w, qd, qdd, m->gravity);
    /* per body: A_k = rot_k^T A_parent E_k (E_k = E0_k Rz(alpha_k)), and v, a in the original frame */
    for (k = 0; k < n; k++) {
        const ffwd_joint *Jk = &m->joint[k];
        const ffwd_real *B = BODY(w, k), *E = KONST(w, k) + FFWD_K_E;
        const ffwd_real ca = KONST(w, k)[FFWD_K_CA], sa = KONST(w, k)[FFWD_K_SA];
        ffwd_real *X = AUX(w, k), *A = X + RG_A, vl[3], al[3], T[9], t[12];
        int r;
        if (Jk->parent >= 0) {
            m3_mm(AUX(w, Jk->parent) + RG_A, E, T);
        } else {
            for (r = 0; r < 9; r++)
                T[r] = E[r];
        }
        m3_tm(Jk->rot, T, A);
        /* E = E0 Rz(alpha): A = rot^T A_parent E0 Rz(alpha) */
        for (r = 0; r < 3; r++) {
            const ffwd_real a0 = A[3 * r], a1 = A[3 * r + 1];
            A[3 * r] = ca * a0 + sa * a1;
            A[3 * r + 1] = ca * a1 - sa * a0;
        }
        mul_n(A, B + 12, t, 4u); /* w, v, dw, dv */
        for (r = 0; r < 3; r++) {
            X[RG_W + r] = t[r]; vl[r] = t[3 + r]; X[RG_AW + r] = t[6 + r]; al[r] = t[9 + r];
        }
        v3_cross(X + RG_W, vl, X + RG_BETA);
        X[RG_BETA] += al[0]; X[RG_BETA + 1] += al[1]; X[RG_BETA + 2] += al[2];
        X[RG_WW] = v3_dot(X + RG_W, X + RG_W);
        X[RG_MARK] = FR(-1);
    }
    /* carry each joint's motion subspace down its subtree (B(k)+24: s in aligned frame k) */
    for (j = 0; j < n; j++) {
        const ffwd_real mark = (ffwd_real)j;
        for (k = j; k < n; k++) {
            const ffwd_joint *Jk = &m->joint[k];
            ffwd_real *B = BODY(w, k), *X = AUX(w, k), *s = B + 24, so[6];
            if (k == j) {
                s[0] = s[1] = s[2] = s[3] = s[4] = s[5] = FR(0);
                s[Jk->type == FFWD_REVOLUTE ? 2 : 5] = FR(1);
            } else if (Jk->parent >= 0 && AUX(w, Jk->parent)[RG_MARK] == mark) {
                xm_apply(B, B + 9, BODY(w, Jk->parent) + 24, s);
            } else {
                continue;
            }
            X[RG_MARK] = mark;
            mul_n(X + RG_A, s, so, 2u);
            regressor_row(X, so, so + 3, Y + j * cols + 13u * k);
        }
    }
    for (k = 0; k < n; k++) {
        Y[k * cols + 13u * k + 10u] = qdd[k];
        Y[k * cols + 13u * k + 11u] = qd[k];
        Y[k * cols + 13u * k + 12u] = clamp1(qd[k] / m->joint[k].coulomb_band);
    }
    return ffwd_out_ok_(Y, m->dof * cols);
}
