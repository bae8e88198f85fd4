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

/* ---- rigid-body parameters in another frame (declared in spatial.h) ---- */
/* see spatial.h */
void ffwd_params_to_parent_(const ffwd_real *R, const ffwd_real *p, const ffwd_real *th, ffwd_real *o)
{
    ffwd_real I[9], RI[9], J[9], hR[3], ph, pp;
    const ffwd_real m = th[0];
    int i, j;
    I[0] = th[4]; I[1] = th[5]; I[2] = th[6];
    I[3] = th[5]; I[4] = th[7]; I[5] = th[8];
    I[6] = th[6]; I[7] = th[8]; I[8] = th[9];
    m3_mm(R, I, RI);
    for (i = 0; i < 3; i++)
        for (j = i; j < 3; j++)
            J[3 * i + j] = RI[3 * i] * R[3 * j] + RI[3 * i + 1] * R[3 * j + 1] + RI[3 * i + 2] * R[3 * j + 2];
    m3_mul(R, th + 1, hR);
    ph = FR(2) * v3_dot(p, hR);
    pp = m * v3_dot(p, p);
    for (i = 0; i < 3; i++)
        for (j = i; j < 3; j++)
            J[3 * i + j] -= p[i] * hR[j] + hR[i] * p[j] + m * p[i] * p[j];
    J[0] += ph + pp; J[4] += ph + pp; J[8] += ph + pp;
    o[0] = m;
    o[1] = hR[0] + m * p[0];
    o[2] = hR[1] + m * p[1];
    o[3] = hR[2] + m * p[2];
    o[4] = J[0]; o[5] = J[1]; o[6] = J[2];
    o[7] = J[4]; o[8] = J[5]; o[9] = J[8];
}

/* see spatial.h */
void ffwd_params_rotate_t_(const ffwd_real *A, const ffwd_real *th, ffwd_real *o)
{
    ffwd_real I[9], IA[9];
    int i, j;
    I[0] = th[4]; I[1] = th[5]; I[2] = th[6];
    I[3] = th[5]; I[4] = th[7]; I[5] = th[8];
    I[6] = th[6]; I[7] = th[8]; I[8] = th[9];
    m3_mm(I, A, IA);
    o[0] = th[0];
    m3_tmul(A, th + 1, o + 1);
    for (i = 0; i < 3; i++)
        for (j = i; j < 3; j++)
            I[3 * i + j] = A[i] * IA[j] + A[3 + i] * IA[3 + j] + A[6 + i] * IA[6 + j];
    o[4] = I[0]; o[5] = I[1]; o[6] = I[2];
    o[7] = I[4]; o[8] = I[5]; o[9] = I[8];
}

/* Finite test on the bit pattern, so that it survives -ffast-math and needs no libm: the
 * exponent field plus one carries into the sign bit exactly when it is all ones. */
int ffwd_finite_(const ffwd_real *x, uint32_t n)
{
    uint32_t i;
    ffwd_bits_ acc = 0u;
    for (i = 0; i < n; i++) {
        ffwd_bits_ u;
        memcpy(&u, x + i, sizeof u);
        acc |= (u & (ffwd_bits_)FFWD_EXP_MASK_) + (ffwd_bits_)FFWD_EXP_ONE_; /* see ffwd_ready_ */
    }
    return ((acc >> FFWD_TOP_BIT_) & 1u) == 0u;
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
#define SPLIT_TOL FR(1e-6)
#define PARALLEL2 FR(1e-10)
#else
#define SPLIT_TOL FR(1e-13)
#define PARALLEL2 FR(1e-24)
#endif

/* 1/sqrt(x) for x > 0 (normal): first guess from the bits, then Newton steps. */
static FFWD_NOINLINE ffwd_real rsqrt_(ffwd_real x)
{
    ffwd_real y;
    int k;
#ifdef FFWD_SINGLE
    uint32_t b;
    memcpy(&b, &x, sizeof b);
    b = 0x5f3759dfu - (b >> 1);
#else
    uint64_t b;
    memcpy(&b, &x, sizeof b);
    b = 0x5fe6eb50c7b537a9u - (b >> 1);
#endif
    memcpy(&y, &b, sizeof y);
    for (k = 0; k < 6; k++)
        y = y * (FR(1.5) - FR(0.5) * x * y * y);
    return y;
}

/* O = A B and O = A^T B (3x3), one copy of the code each for the init */
static FFWD_NOINLINE void mm3(const ffwd_real *A, const ffwd_real *B, ffwd_real *O)
{
    m3_mm(A, B, O);
}

static FFWD_NOINLINE void tm3(const ffwd_real *A, const ffwd_real *B, ffwd_real *O)
{
    m3_tm(A, B, O);
}

/* The angle with cosine c and sine s (c^2 + s^2 = 1): from the nearest multiple of pi/2,
 * Newton-like steps x += sin(angle - x), each cubing the error (|error| <= pi/4 at first). */
static ffwd_real angle_of(ffwd_real c, ffwd_real s)
{
    const ffwd_real half_pi = FR(1.5707963267948966);
    ffwd_real x = FR(0), sx, cx;
    int k;
    if (absr(s) > absr(c))
        x = s > FR(0) ? half_pi : -half_pi;
    else if (c < FR(0))
        x = s >= FR(0) ? FR(2) * half_pi : FR(-2) * half_pi;
    for (k = 0; k < 6; k++) {
        ffwd_sincos_(x, &sx, &cx);
        x += s * cx - c * sx;
    }
    return x;
}

/* The alignment rotation of a joint axis: A with A e_z = a/|a|, a function of the axis
 * alone. For a_z >= 0 the rotation about e_z x a taking e_z to a (e_z gives 1); for
 * a_z < 0 the one for -a followed by a half turn about x. */
static void align_of(const ffwd_real *a, ffwd_real *A)
{
    ffwd_real r = rsqrt_(v3_dot(a, a)), v[3], d, sg;
    int k;
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

/* Turns A (in place) about its own z axis so that the fixed rotation of the child joint
 * Jc (alignment Ac), E = A^T rot_c Ac, gets E[0][2] = 0, i.e. the form Rz(0) Rx Rz. */
static void turn_for_child(ffwd_real *A, const ffwd_joint *Jc, const ffwd_real *Ac)
{
    ffwd_real z[3], v[3], g[3], s2, r, cf, sf;
    int k;
    z[0] = Ac[2]; z[1] = Ac[5]; z[2] = Ac[8];
    m3_mul(Jc->rot, z, v);
    m3_tmul(A, v, g);
    s2 = g[0] * g[0] + g[1] * g[1];
    if (!(s2 > PARALLEL2))
        return; /* axes parallel: E[0][2] is 0 already */
    r = rsqrt_(s2);
    cf = g[1] * r;
    sf = -g[0] * r;
    for (k = 0; k < 3; k++) {
        const ffwd_real a0 = A[3 * k], a1 = A[3 * k + 1];
        A[3 * k] = cf * a0 + sf * a1;
        A[3 * k + 1] = cf * a1 - sf * a0;
    }
}

/* Aligned constants of joint J (see spatial.h): Ap = A of the parent (NULL: base), A its
 * own; E = Ap^T rot A is split into E0 Rz(alpha), E0 snapped to Rx(beta) where it is one. */
static void cache_joint(const ffwd_joint *J, const ffwd_real *Ap, const ffwd_real *A, ffwd_real *K,
                        ffwd_real *alpha)
{
    ffwd_real RA[9], E[9], ca = FR(1), sa = FR(0), *E0 = K + FFWD_K_E;
    int32_t kind;
    int k, r;
    for (k = 0; k < FFWD_K_STRIDE; k++)
        K[k] = FR(0);
    mm3(J->rot, A, RA);
    if (Ap == NULL) {
        for (k = 0; k < 9; k++)
            E[k] = RA[k];
        for (k = 0; k < 3; k++)
            K[FFWD_K_P + k] = J->pos[k];
    } else {
        tm3(Ap, RA, E);
        m3_tmul(Ap, J->pos, K + FFWD_K_P);
    }
    params_rotate_t(A, J->inertia, K + FFWD_K_TH);
    second_moment(K + FFWD_K_TH, K + FFWD_K_J);
    if (absr(E[2]) <= SPLIT_TOL) {
        /* first row of Rx(beta) Rz(alpha) is (cos alpha, -sin alpha, 0) */
        ffwd_real nr = rsqrt_(E[0] * E[0] + E[1] * E[1]);
        ca = E[0] * nr;
        sa = -E[1] * nr;
    }
    for (r = 0; r < 3; r++) {
        E0[3 * r] = ca * E[3 * r] - sa * E[3 * r + 1];
        E0[3 * r + 1] = sa * E[3 * r] + ca * E[3 * r + 1];
        E0[3 * r + 2] = E[3 * r + 2];
    }
    K[FFWD_K_CA] = ca;
    K[FFWD_K_SA] = sa;
    *alpha = angle_of(ca, sa);
    memcpy(K + FFWD_K_TYPE, &J->type, sizeof J->type); /* int32 bits (see joint_type in dynamics.c) */
    kind = FFWD_KIND_GEN;
    if (absr(E0[0] - FR(1)) <= SPLIT_TOL && absr(E0[1]) <= SPLIT_TOL && absr(E0[2]) <= SPLIT_TOL
        && absr(E0[3]) <= SPLIT_TOL && absr(E0[6]) <= SPLIT_TOL) {
        /* E0 = Rx(beta): snap it, and beta 0, +-pi/2, pi exactly */
        ffwd_real cb = E0[4], sb = E0[7];
        kind = FFWD_KIND_RX;
        if (absr(sb) <= SPLIT_TOL) {
            kind = cb > FR(0) ? FFWD_KIND_I : FFWD_KIND_RX; /* a half turn is Rx(pi) */
            cb = cb > FR(0) ? FR(1) : FR(-1);
            sb = FR(0);
        } else if (absr(cb) <= SPLIT_TOL) {
            kind = sb > FR(0) ? FFWD_KIND_P90 : FFWD_KIND_M90;
            sb = sb > FR(0) ? FR(1) : FR(-1);
            cb = FR(0);
        }
        for (k = 0; k < 9; k++)
            E0[k] = FR(0);
        E0[0] = FR(1);
        E0[4] = E0[8] = cb;
        E0[7] = sb;
        E0[5] = -sb;
    }
    memcpy(K + FFWD_K_KIND, &kind, sizeof kind); /* int32 bits (see e0_kind in dynamics.c) */
}

ffwd_status ffwd_work_init(ffwd_work *w, const ffwd_model *m)
{
    ffwd_status st;
    uint32_t i, c;
    ffwd_real *Atp, *tool;
    int r;
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
    for (i = 0; i < m->dof; i++)
        align_of(m->joint[i].axis, w->scratch + FFWD_OFF_A + FFWD_A_STRIDE * i);
    for (i = 0; i < m->dof; i++) {
        const int32_t par = m->joint[i].parent;
        ffwd_real *A = w->scratch + FFWD_OFF_A + FFWD_A_STRIDE * i;
        for (c = i + 1u; c < m->dof; c++)
            if (m->joint[c].parent == (int32_t)i) {
                turn_for_child(A, &m->joint[c], w->scratch + FFWD_OFF_A + FFWD_A_STRIDE * c);
                break;
            }
        cache_joint(&m->joint[i], par >= 0 ? w->scratch + FFWD_OFF_A + FFWD_A_STRIDE * (uint32_t)par : NULL,
                    A, w->scratch + FFWD_OFF_K + FFWD_K_STRIDE * i, w->scratch + FFWD_OFF_ALPHA + i);
    }
    for (i = 0; i < m->dof; i++) {
        const int rev = m->joint[i].type == FFWD_REVOLUTE;
        w->scratch[FFWD_OFF_ALPHA + FFWD_MAX_DOF + i] = rev ? FR(1) : FR(0);
        w->scratch[FFWD_OFF_NPRIS] += rev ? FR(0) : FR(1);
    }
    w->scratch[FFWD_OFF_CHAIN] = FR(1);
    for (i = 0; i < m->dof; i++)
        if (m->joint[i].parent != (int32_t)i - 1)
            w->scratch[FFWD_OFF_CHAIN] = FR(0);
    Atp = w->scratch + FFWD_OFF_ATP;
    tool = w->scratch + FFWD_OFF_TOOL;
    for (r = 0; r < 9; r++)
        Atp[r] = w->scratch[FFWD_OFF_A + FFWD_A_STRIDE * (uint32_t)m->tool_parent + (uint32_t)r];
    tm3(Atp, m->tool_rot, tool);
    m3_tmul(Atp, m->tool_pos, tool + 9);
    params_rotate_t(Atp, m->payload, w->scratch + FFWD_OFF_PAY);
    ffwd_zero_(w->scratch + FFWD_OFF_A, (uint32_t)(FFWD_A_STRIDE * FFWD_MAX_DOF));
    for (r = 0; r < 10; r++) /* the bare body tool_parent, before the payload joins it */
        w->scratch[FFWD_OFF_TP + r] = w->scratch[FFWD_OFF_K + FFWD_K_STRIDE * (uint32_t)m->tool_parent + FFWD_K_TH + (uint32_t)r];
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
