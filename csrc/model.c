/* model.c - status names, model validation, work binding, build facts. */
#include "spatial.h"

#ifdef FFWD_SINGLE
#define ROT_TOL FR(1e-4)
#define AXIS_TOL FR(1e-5)
#define REL_TOL FR(1e-5)
#else
#define ROT_TOL FR(1e-9)
#define AXIS_TOL FR(1e-6)
#define REL_TOL FR(1e-10)
#endif

const char *ffwd_status_str(ffwd_status s)
{
    switch (s) {
    case FFWD_OK: return "ok";
    case FFWD_E_ARG: return "bad argument (null pointer or out of range)";
    case FFWD_E_NONFINITE: return "non-finite input (NaN or Inf)";
    case FFWD_E_MODEL: return "invalid model, or work not bound to this model";
    case FFWD_E_SINGULAR: return "singular matrix";
    case FFWD_E_LIMIT: return "limit missing or violated";
    case FFWD_E_INFEASIBLE: return "no admissible solution";
    default: return "unknown status";
    }
}

/* Finite test on the bit pattern, so that it survives -ffast-math and needs no libm:
 * (exponent + 1) >> width is 1 exactly when the exponent is all ones (Inf, NaN). */
#ifdef FFWD_SINGLE
static uint32_t nonfinite1(const ffwd_real *x)
{
    uint32_t b;
    memcpy(&b, x, sizeof b);
    return (((b >> 23) & 0xffu) + 1u) >> 8;
}
#else
static uint32_t nonfinite1(const ffwd_real *x)
{
    uint64_t b;
    memcpy(&b, x, sizeof b);
    return (uint32_t)((((b >> 52) & 0x7ffu) + 1u) >> 11);
}
#endif

int ffwd_finite_(const ffwd_real *x, uint32_t n)
{
    uint32_t i, bad = 0u;
    for (i = 0; i < n; i++)
        bad |= nonfinite1(x + i);
    return bad == 0u;
}

ffwd_status ffwd_out_ok_(ffwd_real *x, uint32_t n)
{
    if (ffwd_finite_(x, n))
        return FFWD_OK;
    ffwd_zero_(x, n); /* an overflow inside the computation: never hand out Inf or NaN */
    return FFWD_E_NONFINITE;
}

void ffwd_zero_(ffwd_real *x, uint32_t n)
{
    uint32_t i;
    if (x == NULL)
        return;
    for (i = 0; i < n; i++)
        x[i] = FR(0);
}

static ffwd_real absr(ffwd_real x)
{
    return x < FR(0) ? -x : x;
}

/* A model number: finite and of a magnitude no physical robot needs (|x| <= 1e50, 1e18
 * in float builds; the Python loader uses the same 1e50), so that products inside the
 * algorithms cannot overflow for any state the entry checks let through. */
#ifdef FFWD_SINGLE
#define MODEL_MAX FR(1e18)
#else
#define MODEL_MAX FR(1e50)
#endif
static int num_ok(const ffwd_real *x, uint32_t n)
{
    uint32_t i;
    int ok = ffwd_finite_(x, n);
    for (i = 0; ok && i < n; i++)
        ok = absr(x[i]) <= MODEL_MAX;
    return ok;
}

/* R row-major with R R^T = 1 and det R = +1, within ROT_TOL */
static int rotation_ok(const ffwd_real *R)
{
    int i, j;
    ffwd_real det;
    for (i = 0; i < 3; i++)
        for (j = 0; j < 3; j++) {
            ffwd_real d = R[3 * i] * R[3 * j] + R[3 * i + 1] * R[3 * j + 1] + R[3 * i + 2] * R[3 * j + 2];
            if (absr(d - (i == j ? FR(1) : FR(0))) > ROT_TOL)
                return 0;
        }
    det = R[0] * (R[4] * R[8] - R[5] * R[7]) - R[1] * (R[3] * R[8] - R[5] * R[6])
        + R[2] * (R[3] * R[7] - R[4] * R[6]);
    return det > FR(0);
}

/* Leading principal minors of the symmetric matrix S (row-major 3x3) all > 0. */
static int pos_def3(const ffwd_real *S)
{
    ffwd_real d2 = S[0] * S[4] - S[1] * S[3];
    ffwd_real d3 = S[0] * (S[4] * S[8] - S[5] * S[7]) - S[1] * (S[3] * S[8] - S[5] * S[6])
                 + S[2] * (S[3] * S[7] - S[4] * S[6]);
    return S[0] > FR(0) && d2 > FR(0) && d3 > FR(0);
}

/* 10 inertial parameters of a rigid body: mass > 0, inertia about the centre of mass
 * positive definite, principal moments satisfying the triangle inequality. */
/* A body: mass > 0, inertia about the COM positive definite (positive semidefinite
 * when `point_ok`, e.g. a payload given as a point mass) and satisfying the triangle
 * inequality. */
static int body_ok(const ffwd_real *th, int point_ok)
{
    ffwd_real m = th[0], C[9], S[9], tr, eps;
    const ffwd_real *h = th + 1;
    ffwd_real hh;
    int k;
    if (!(m > FR(0)))
        return 0;
    hh = v3_dot(h, h);
    /* inertia about the COM: Ic = Io - (|h|^2 1 - h h^T) / m */
    C[0] = th[4] - (hh - h[0] * h[0]) / m;
    C[4] = th[7] - (hh - h[1] * h[1]) / m;
    C[8] = th[9] - (hh - h[2] * h[2]) / m;
    C[1] = C[3] = th[5] + h[0] * h[1] / m;
    C[2] = C[6] = th[6] + h[0] * h[2] / m;
    C[5] = C[7] = th[8] + h[1] * h[2] / m;
    if (point_ok) {
        /* rounding of Io - m c c terms: slack relative to the inertia about the origin */
        eps = REL_TOL * (th[4] + th[7] + th[9]) + FR(1e-30);
        C[0] += eps;
        C[4] += eps;
        C[8] += eps;
    }
    if (!pos_def3(C))
        return 0;
    /* triangle inequality of the principal moments <=> tr(Ic)/2 * 1 - Ic is positive
     * semidefinite (it is the mass-weighted second moment of the body); allow a
     * relative slack for bodies on the boundary (thin plates). */
    tr = C[0] + C[4] + C[8];
    eps = REL_TOL * tr;
    for (k = 0; k < 9; k++)
        S[k] = -C[k];
    S[0] += FR(0.5) * tr + eps;
    S[4] += FR(0.5) * tr + eps;
    S[8] += FR(0.5) * tr + eps;
    return pos_def3(S);
}

static int all_zero(const ffwd_real *x, int n)
{
    int i;
    for (i = 0; i < n; i++)
        if (x[i] != FR(0))
            return 0;
    return 1;
}

static int joint_ok(const ffwd_joint *J, int32_t index)
{
    ffwd_real a2;
    if (J->type != FFWD_REVOLUTE && J->type != FFWD_PRISMATIC)
        return 0;
    if (J->parent < -1 || J->parent >= index)
        return 0;
    if (!num_ok(J->rot, 9) || !num_ok(J->pos, 3) || !num_ok(J->axis, 3)
        || !num_ok(J->inertia, 10) || !num_ok(&J->armature, 1)
        || !num_ok(&J->viscous, 1) || !num_ok(&J->coulomb, 1)
        || !num_ok(&J->coulomb_band, 1))
        return 0;
    if (!rotation_ok(J->rot))
        return 0;
    a2 = v3_dot(J->axis, J->axis);
    if (absr(a2 - FR(1)) > AXIS_TOL)
        return 0;
    if (!body_ok(J->inertia, 0))
        return 0;
    if (!(J->armature >= FR(0)) || !(J->viscous >= FR(0)) || !(J->coulomb >= FR(0))
        || !(J->coulomb_band > FR(0)))
        return 0;
    if (J->has_limits & ~0x1fu)
        return 0;
    if (J->has_limits & FFWD_LIM_POSITION) {
        if (!num_ok(&J->q_min, 1) || !num_ok(&J->q_max, 1) || !(J->q_min < J->q_max))
            return 0;
    }
    if ((J->has_limits & FFWD_LIM_VELOCITY) && !(num_ok(&J->v_max, 1) && J->v_max > FR(0)))
        return 0;
    if ((J->has_limits & FFWD_LIM_ACCELERATION) && !(num_ok(&J->a_max, 1) && J->a_max > FR(0)))
        return 0;
    if ((J->has_limits & FFWD_LIM_JERK) && !(num_ok(&J->j_max, 1) && J->j_max > FR(0)))
        return 0;
    if ((J->has_limits & FFWD_LIM_TORQUE) && !(num_ok(&J->tau_max, 1) && J->tau_max > FR(0)))
        return 0;
    return 1;
}

/* payload 10 parameters: all zero, or a physically valid body */
int ffwd_payload_params_ok_(const ffwd_real *th)
{
    if (!num_ok(th, 10))
        return 0;
    return all_zero(th, 10) || body_ok(th, 1);
}

ffwd_status ffwd_model_check(const ffwd_model *m)
{
    int32_t i;
    if (m == NULL)
        return FFWD_E_ARG;
    if (m->dof < 1u || m->dof > (uint32_t)FFWD_MAX_DOF)
        return FFWD_E_MODEL;
    if (!num_ok(m->gravity, 3))
        return FFWD_E_MODEL;
    for (i = 0; i < (int32_t)m->dof; i++)
        if (!joint_ok(&m->joint[i], i))
            return FFWD_E_MODEL;
    if (m->tool_parent < 0 || m->tool_parent >= (int32_t)m->dof)
        return FFWD_E_MODEL;
    if (!num_ok(m->tool_rot, 9) || !num_ok(m->tool_pos, 3) || !rotation_ok(m->tool_rot))
        return FFWD_E_MODEL;
    if (!ffwd_payload_params_ok_(m->payload))
        return FFWD_E_MODEL;
    return FFWD_OK;
}

int ffwd_bound_(const ffwd_model *m, const ffwd_work *w)
{
    return w->model == m && w->stamp == ffwd_stamp_of_(m) && m->dof >= 1u && m->dof <= (uint32_t)FFWD_MAX_DOF;
}

#ifdef FFWD_SINGLE
#define PERM_TOL FR(1e-7)
#else
#define PERM_TOL FR(1e-15)
#endif

/* The alignment rotation of a joint axis: A with A e_z = a/|a|, a function of the axis
 * alone. For a_z >= 0 the rotation about e_z x a taking e_z to a (a coordinate axis gives
 * a signed permutation, e_z gives 1); for a_z < 0 the one for -a followed by a half turn
 * about x. |a| is normalised with Newton steps (|a|^2 is within 1e-6 of 1). */
static void align_of(const ffwd_real *a, ffwd_real *A)
{
    ffwd_real n2 = v3_dot(a, a), r = FR(1), v[3], d, sg;
    int k;
    for (k = 0; k < 4; k++)
        r = r * (FR(1.5) - FR(0.5) * n2 * r * r);
    sg = a[2] >= FR(0) ? FR(1) : FR(-1);
    v[0] = sg * a[0] * r; v[1] = sg * a[1] * r; v[2] = sg * a[2] * r;
    d = FR(1) / (FR(1) + v[2]);
    A[0] = FR(1) - v[0] * v[0] * d; A[1] = -v[0] * v[1] * d; A[2] = v[0];
    A[3] = -v[0] * v[1] * d;        A[4] = FR(1) - v[1] * v[1] * d; A[5] = v[1];
    A[6] = -v[0];                   A[7] = -v[1];                   A[8] = v[2];
    /* half turn about x (columns 1, 2 negated) when a_z < 0 */
    for (k = 0; k < 3; k++) {
        A[3 * k + 1] *= sg;
        A[3 * k + 2] *= sg;
    }
}

/* E a signed permutation (within PERM_TOL): then snap it and record per row the sign (a
 * real) and the column index (int32 bits, see e_tmul in dynamics.c) */
static void detect_perm(ffwd_real *K)
{
    ffwd_real *E = K + FFWD_K_E;
    int32_t ix[3];
    int r, c, used = 0, ok = 1;
    for (r = 0; r < 3; r++) {
        int best = 0;
        for (c = 1; c < 3; c++)
            if (absr(E[3 * r + c]) > absr(E[3 * r + best]))
                best = c;
        for (c = 0; c < 3; c++) {
            ffwd_real e = absr(E[3 * r + c]);
            if (c == best ? e < FR(1) - PERM_TOL : e > PERM_TOL)
                ok = 0;
        }
        used |= 1 << best;
        ix[r] = (int32_t)best;
        K[FFWD_K_SG + r] = E[3 * r + best] > FR(0) ? FR(1) : FR(-1);
    }
    if (!ok || used != 7) {
        K[FFWD_K_PERM] = FR(0);
        return;
    }
    K[FFWD_K_PERM] = FR(1);
    memcpy(K + FFWD_K_IX, ix, sizeof ix);
    for (r = 0; r < 3; r++)
        for (c = 0; c < 3; c++)
            E[3 * r + c] = c == (int)ix[r] ? K[FFWD_K_SG + r] : FR(0);
}

/* Aligned constants of joint J (see spatial.h): Ap = A of the parent (NULL: base), A its own */
static void cache_joint(const ffwd_joint *J, const ffwd_real *Ap, const ffwd_real *A, ffwd_real *K)
{
    ffwd_real RA[9];
    int k, r, c;
    for (k = 0; k < FFWD_K_STRIDE; k++)
        K[k] = FR(0);
    m3_mm(J->rot, A, RA);
    if (Ap == NULL) {
        for (k = 0; k < 9; k++)
            K[FFWD_K_E + k] = RA[k];
        for (k = 0; k < 3; k++)
            K[FFWD_K_P + k] = J->pos[k];
    } else {
        for (r = 0; r < 3; r++)
            for (c = 0; c < 3; c++)
                K[FFWD_K_E + 3 * r + c] = Ap[r] * RA[c] + Ap[3 + r] * RA[3 + c] + Ap[6 + r] * RA[6 + c];
        m3_tmul(Ap, J->pos, K + FFWD_K_P);
    }
    params_rotate_t(A, J->inertia, K + FFWD_K_TH);
    detect_perm(K);
}

ffwd_status ffwd_work_init(ffwd_work *w, const ffwd_model *m)
{
    ffwd_status st;
    uint32_t i;
    ffwd_real *Atp, *tool;
    int r, c;
    if (w == NULL || m == NULL)
        return FFWD_E_ARG;
    w->model = NULL;
    w->payload = NULL;
    w->stamp = 0u;
    st = ffwd_model_check(m);
    if (st != FFWD_OK)
        return st;
    ffwd_zero_(w->scratch, (uint32_t)FFWD_WORK_REALS);
    /* the A_i are kept in the (per-call) AUX area while the constants are computed */
    for (i = 0; i < m->dof; i++) {
        const int32_t par = m->joint[i].parent;
        ffwd_real *A = w->scratch + FFWD_OFF_A + FFWD_A_STRIDE * i;
        align_of(m->joint[i].axis, A);
        cache_joint(&m->joint[i], par >= 0 ? w->scratch + FFWD_OFF_A + FFWD_A_STRIDE * (uint32_t)par : NULL,
                    A, w->scratch + FFWD_OFF_K + FFWD_K_STRIDE * i);
    }
    Atp = w->scratch + FFWD_OFF_ATP;
    tool = w->scratch + FFWD_OFF_TOOL;
    for (r = 0; r < 9; r++)
        Atp[r] = w->scratch[FFWD_OFF_A + FFWD_A_STRIDE * (uint32_t)m->tool_parent + (uint32_t)r];
    for (r = 0; r < 3; r++)
        for (c = 0; c < 3; c++)
            tool[3 * r + c] = Atp[r] * m->tool_rot[c] + Atp[3 + r] * m->tool_rot[3 + c] + Atp[6 + r] * m->tool_rot[6 + c];
    m3_tmul(Atp, m->tool_pos, tool + 9);
    params_rotate_t(Atp, m->payload, w->scratch + FFWD_OFF_PAY);
    ffwd_zero_(w->scratch + FFWD_OFF_A, (uint32_t)(FFWD_A_STRIDE * FFWD_MAX_DOF));
    ffwd_fill_tool_body_(m, w);
    w->model = m;
    w->stamp = ffwd_stamp_of_(m);
    return FFWD_OK;
}

ffwd_status ffwd_work_use_payload(ffwd_work *w, ffwd_payload_box *box)
{
    if (w == NULL)
        return FFWD_E_ARG;
    if (w->model == NULL || !ffwd_bound_(w->model, w))
        return FFWD_E_MODEL;
    w->payload = box;
    if (box == NULL)
        ffwd_fill_tool_body_(w->model, w);
    return FFWD_OK;
}

void ffwd_build_info(uint32_t *max_dof, uint32_t *real_size, uint32_t *model_size, uint32_t *work_size)
{
    if (max_dof != NULL)
        *max_dof = (uint32_t)FFWD_MAX_DOF;
    if (real_size != NULL)
        *real_size = (uint32_t)sizeof(ffwd_real);
    if (model_size != NULL)
        *model_size = (uint32_t)sizeof(ffwd_model);
    if (work_size != NULL)
        *work_size = (uint32_t)sizeof(ffwd_work);
}

static uint32_t shape_len(int shape, uint32_t n)
{
    switch (shape) {
    case FFWD_SHAPE_NN: return n * n;
    case FFWD_SHAPE_44: return 16u;
    case FFWD_SHAPE_6N: return 6u * n;
    case FFWD_SHAPE_REG: return 13u * n * n;
    default: return n;
    }
}

ffwd_status ffwd_enter_(const ffwd_model *m, const ffwd_work *w, const ffwd_real *const *in, int nin,
                        ffwd_real *const *out, const int *shape, int nout)
{
    ffwd_status st = FFWD_OK;
    uint32_t n = 0u;
    int i;
    if (m != NULL && m->dof >= 1u && m->dof <= (uint32_t)FFWD_MAX_DOF)
        n = m->dof;
    if (m == NULL || w == NULL)
        st = FFWD_E_ARG;
    for (i = 0; i < nin; i++)
        if (in[i] == NULL)
            st = FFWD_E_ARG;
    for (i = 0; i < nout; i++)
        if (out[i] == NULL)
            st = FFWD_E_ARG;
    if (st == FFWD_OK && !ffwd_bound_(m, w))
        st = FFWD_E_MODEL;
    if (st == FFWD_OK)
        for (i = 0; i < nin; i++)
            if (!ffwd_finite_(in[i], n))
                st = FFWD_E_NONFINITE;
    if (st == FFWD_OK) /* in[0] is q in every per-cycle function */
        for (i = 0; i < (int)n && nin > 0; i++)
            if (!(in[0][i] < FFWD_Q_MAX_ && in[0][i] > -FFWD_Q_MAX_))
                st = FFWD_E_ARG;
    if (st != FFWD_OK)
        for (i = 0; i < nout; i++)
            ffwd_zero_(out[i], shape_len(shape[i], n));
    return st;
}
