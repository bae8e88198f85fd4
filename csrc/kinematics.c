/* kinematics.c - tool pose and geometric tool Jacobian, on the aligned joint frames of
 * spatial.h: the tool frame is cached in the aligned tool_parent frame, and each joint's
 * axis in the base frame is the third column of its aligned world rotation. */
#include "spatial.h"

#define BODY(w, i) ((w)->scratch + FFWD_OFF_B + FFWD_B_STRIDE * (uint32_t)(i))
#define AUX(w, i) ((w)->scratch + FFWD_OFF_A + FFWD_A_STRIDE * (uint32_t)(i))

/* World pose of every joint frame: AUX(i) = Rw[9] pw[3]; tool pose into Rt, pt. Needs
 * ffwd_transforms_. */
static void world_poses(const ffwd_model *m, ffwd_work *w, ffwd_real *Rt, ffwd_real *pt)
{
    uint32_t i;
    const ffwd_real *W;
    ffwd_real t[3];
    for (i = 0; i < m->dof; i++) {
        ffwd_real *B = BODY(w, i), *A = AUX(w, i);
        int32_t par = m->joint[i].parent;
        if (par >= 0) {
            const ffwd_real *P = AUX(w, par);
            m3_mm(P, B, A);
            m3_mul(P, B + 9, A + 9);
            A[9] += P[9]; A[10] += P[10]; A[11] += P[11];
        } else {
            int k;
            for (k = 0; k < 12; k++)
                A[k] = B[k];
        }
    }
    W = AUX(w, m->tool_parent);
    m3_mm(W, w->scratch + FFWD_OFF_TOOL, Rt);
    m3_mul(W, w->scratch + FFWD_OFF_TOOL + 9, t);
    pt[0] = t[0] + W[9]; pt[1] = t[1] + W[10]; pt[2] = t[2] + W[11];
}

ffwd_status ffwd_tool_pose(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *T)
{
    const ffwd_real *in[1];
    ffwd_real *out[1];
    const int shape[1] = { FFWD_SHAPE_44 };
    ffwd_real R[9], p[3];
    ffwd_status st;
    int r;
    if (!(T != NULL && ffwd_ready_(m, w, q, NULL, NULL) && ffwd_transforms_(m, w, q))) {
        in[0] = q; out[0] = T;
        st = ffwd_enter_(m, w, in, 1, out, shape, 1);
        if (st != FFWD_OK)
            return st;
        (void)ffwd_transforms_(m, w, q);
    }
    world_poses(m, w, R, p);
    for (r = 0; r < 3; r++) {
        T[4 * r] = R[3 * r]; T[4 * r + 1] = R[3 * r + 1]; T[4 * r + 2] = R[3 * r + 2];
        T[4 * r + 3] = p[r];
    }
    T[12] = T[13] = T[14] = FR(0);
    T[15] = FR(1);
    return ffwd_out_ok_(T, 16u);
}

ffwd_status ffwd_tool_jacobian(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *J)
{
    const ffwd_real *in[1];
    ffwd_real *out[1];
    const int shape[1] = { FFWD_SHAPE_6N };
    ffwd_real R[9], p[3];
    ffwd_status st;
    uint32_t n, step;
    int32_t j;
    if (!(J != NULL && ffwd_ready_(m, w, q, NULL, NULL) && ffwd_transforms_(m, w, q))) {
        in[0] = q; out[0] = J;
        st = ffwd_enter_(m, w, in, 1, out, shape, 1);
        if (st != FFWD_OK)
            return st;
        (void)ffwd_transforms_(m, w, q);
    }
    n = m->dof;
    world_poses(m, w, R, p);
    ffwd_zero_(J, 6u * n);
    j = m->tool_parent;
    for (step = 0; step < n && j >= 0; step++) {
        const ffwd_joint *Jt = &m->joint[j];
        const ffwd_real *A = AUX(w, j);
        ffwd_real z[3], d[3], v[3];
        uint32_t c = (uint32_t)j;
        z[0] = A[2]; z[1] = A[5]; z[2] = A[8];
        if (Jt->type == FFWD_REVOLUTE) {
            d[0] = p[0] - A[9]; d[1] = p[1] - A[10]; d[2] = p[2] - A[11];
            v3_cross(z, d, v);
            J[c] = v[0]; J[n + c] = v[1]; J[2 * n + c] = v[2];
            J[3 * n + c] = z[0]; J[4 * n + c] = z[1]; J[5 * n + c] = z[2];
        } else {
            J[c] = z[0]; J[n + c] = z[1]; J[2 * n + c] = z[2];
        }
        j = Jt->parent;
    }
    return ffwd_out_ok_(J, 6u * m->dof);
}
