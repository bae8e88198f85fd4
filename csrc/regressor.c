/* regressor.c - joint-torque regressor Y(q, qd, qdd) with Y theta = inverse dynamics.
 *
 * For body k the Newton-Euler body force f_k = I_k a_k + v_k x* I_k v_k is linear in
 * its 10 parameters: f_k = A_k theta_k with a 6x10 body regressor A_k built from the
 * spatial velocity and acceleration (gravity included). Joint j's torque gets
 * S_j . (X_{j<-k}^T A_k) for every k in the subtree of j, so each A_k is carried up
 * the chain of ancestors of k, one force transform per column and level: O(n^2).
 * The drive columns are qdd_j (armature), qd_j (viscous) and the Coulomb ramp.
 */
#include "spatial.h"

#define BODY(w, i) ((w)->scratch + FFWD_OFF_B + FFWD_B_STRIDE * (uint32_t)(i))

/* A (column-major 6x10: column c at A + 6c) from v, a of a body */
static void body_regressor(const ffwd_real *v, const ffwd_real *a, ffwd_real *A)
{
    const ffwd_real *w = v, *vl = v + 3, *aw = a, *al = a + 3;
    ffwd_real beta[3], t[3];
    int c, k;
    v3_cross(w, vl, beta);
    beta[0] += al[0]; beta[1] += al[1]; beta[2] += al[2];
    for (k = 0; k < 60; k++)
        A[k] = FR(0);
    /* mass: f = al + w x vl */
    A[3] = beta[0]; A[4] = beta[1]; A[5] = beta[2];
    /* first moment h = e_c: n = e_c x beta, f = aw x e_c + w x (w x e_c) */
    for (c = 0; c < 3; c++) {
        ffwd_real e[3] = { 0, 0, 0 }, *col = A + 6 * (1 + c);
        e[c] = FR(1);
        v3_cross(e, beta, col);
        v3_cross(w, e, t);
        v3_cross(w, t, col + 3);
        v3_cross(aw, e, t);
        col[3] += t[0]; col[4] += t[1]; col[5] += t[2];
    }
    /* rotational inertia entries: n = L(aw) + w x L(w), with Io x = L(x) (Ixx..Izz) */
    for (c = 0; c < 6; c++) {
        ffwd_real la[3], lw[3], *col = A + 6 * (4 + c);
        switch (c) {
        case 0: la[0] = aw[0]; la[1] = FR(0); la[2] = FR(0); lw[0] = w[0]; lw[1] = FR(0); lw[2] = FR(0); break;
        case 1: la[0] = aw[1]; la[1] = aw[0]; la[2] = FR(0); lw[0] = w[1]; lw[1] = w[0]; lw[2] = FR(0); break;
        case 2: la[0] = aw[2]; la[1] = FR(0); la[2] = aw[0]; lw[0] = w[2]; lw[1] = FR(0); lw[2] = w[0]; break;
        case 3: la[0] = FR(0); la[1] = aw[1]; la[2] = FR(0); lw[0] = FR(0); lw[1] = w[1]; lw[2] = FR(0); break;
        case 4: la[0] = FR(0); la[1] = aw[2]; la[2] = aw[1]; lw[0] = FR(0); lw[1] = w[2]; lw[2] = w[1]; break;
        default: la[0] = FR(0); la[1] = FR(0); la[2] = aw[2]; lw[0] = FR(0); lw[1] = FR(0); lw[2] = w[2]; break;
        }
        v3_cross(w, lw, t);
        col[0] = la[0] + t[0]; col[1] = la[1] + t[1]; col[2] = la[2] + t[2];
    }
}

ffwd_status ffwd_regressor(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                           const ffwd_real *qd, const ffwd_real *qdd, ffwd_real *Y)
{
    const ffwd_real *in[3];
    ffwd_real *out[1];
    const int shape[1] = { FFWD_SHAPE_REG };
    ffwd_real *A = w != NULL ? w->scratch + FFWD_OFF_TMP : NULL;
    ffwd_status st;
    uint32_t n, cols, k;
    if (!(qd != NULL && qdd != NULL && Y != NULL && ffwd_ready_(m, w, q, qd, qdd))) {
        in[0] = q; in[1] = qd; in[2] = qdd; out[0] = Y;
        st = ffwd_enter_(m, w, in, 3, out, shape, 1);
        if (st != FFWD_OK)
            return st;
    }
    n = m->dof;
    cols = 13u * n;
    ffwd_zero_(Y, n * cols);
    ffwd_transforms_(m, w, q);
    ffwd_pass_va_(m, w, qd, qdd, m->gravity);
    for (k = 0; k < n; k++) {
        const ffwd_real *B = BODY(w, k);
        const ffwd_joint *Jk = &m->joint[k];
        int32_t j = (int32_t)k;
        uint32_t step, c;
        body_regressor(B + 12, B + 18, A);
        for (step = 0; step < n && j >= 0; step++) {
            const ffwd_joint *J = &m->joint[j];
            const ffwd_real *Bj = BODY(w, j);
            ffwd_real *row = Y + (uint32_t)j * cols + 13u * k;
            for (c = 0; c < 10u; c++)
                row[c] = v3_dot(J->axis, J->type == FFWD_REVOLUTE ? A + 6 * c : A + 6 * c + 3);
            if (J->parent >= 0)
                for (c = 0; c < 10u; c++) {
                    ffwd_real o[6];
                    int r;
                    xf_apply_t(Bj, Bj + 9, A + 6 * c, o);
                    for (r = 0; r < 6; r++)
                        A[6 * c + (uint32_t)r] = o[r];
                }
            j = J->parent;
        }
        Y[k * cols + 13u * k + 10u] = qdd[k];
        Y[k * cols + 13u * k + 11u] = qd[k];
        Y[k * cols + 13u * k + 12u] = clamp1(qd[k] / Jk->coulomb_band);
    }
    return FFWD_OK;
}
