/* spatial.h - internal helpers of the ffwd core (not part of the public API).
 *
 * 6-D motion and force vectors in Featherstone's spatial-vector form, stored as
 * two 3-vectors [angular; linear]. A frame change is kept as a rotation plus a
 * translation (never as a 6x6 matrix):
 *   R  3x3 row-major, columns = child axes in parent coordinates (x_parent = R x_child + p)
 *   p  child origin in parent coordinates.
 * Motion parent -> child:  w_c = R^T w_p,  v_c = R^T (v_p + w_p x p)
 * Force  child -> parent:  f_p = R f_c,    n_p = R n_c + p x f_p
 * A rigid body's inertia is the 10-vector th = m, h (= m c), Ixx Ixy Ixz Iyy Iyz Izz
 * (about the frame origin). Applied to a motion (w, v):
 *   n = Io w + h x v,   f = m v + w x h.
 */
#ifndef FFWD_SPATIAL_H
#define FFWD_SPATIAL_H

#include <string.h>
#include "include/ffwd.h"

#define FR(x) ((ffwd_real)(x))

/* keeps a helper out of line (one copy of its code) where the compiler supports it */
#if defined(__GNUC__)
#define FFWD_NOINLINE __attribute__((noinline))
#else
#define FFWD_NOINLINE
#endif

/* ---- work scratch layout (offsets into ffwd_work.scratch) ----------------------- */
/* Aligned joint frames. ffwd_work_init chooses for every joint i a constant rotation A_i
 * with A_i e_z = axis_i (the base keeps its axes) and re-expresses joint frame i with axes
 * A_i. In these frames every joint moves about / along its local z axis, and the fixed
 * part of the transform parent -> child is
 *   E_i = A_parent^T rot_i A_i,   p'_i = A_parent^T pos_i
 * so that x_parent = E_i Rz(q_i) x_child + p'_i (revolute) or
 *          x_parent = E_i (x_child + q_i e_z) + p'_i (prismatic).
 * A_i is free up to a turn about its z axis; init turns it so that the fixed rotation of
 * i's first child c has the form E_c = Rx(beta_c) Rz(alpha_c) (modified Denavit-Hartenberg
 * form), and splits every E_i = E0_i Rz(alpha_i), keeping E0_i and the angle offset as
 * cos/sin alpha_i. The joint rotation is then x_parent = E0_i Rz(theta_i) x_child with
 * theta_i = q_i + alpha_i (revolute) or alpha_i (prismatic). By its kind, E0_i is
 * Rx(beta_i) with beta_i 0 or +-pi/2 (moves and sign flips), Rx(beta_i) (4 products per
 * vector), or a general rotation (9; base children, second children in a tree).
 * Body parameters are rotated at init (m, A^T h, A^T I A), and the body's second moment
 * J = sum m r r^T = tr(I)/2 1 - I kept beside them. Per joint K(i):
 *   E0[9] p'[3] th'[10] cos alpha, sin alpha, kind (int32 bits), joint type (int32 bits), J[6] */
#define FFWD_K_STRIDE 32
#define FFWD_OFF_K      0
#define FFWD_K_E  0
#define FFWD_K_P  9
#define FFWD_K_TH 12
#define FFWD_K_CA 22
#define FFWD_K_SA 23
#define FFWD_K_KIND 24
#define FFWD_K_TYPE 25
#define FFWD_K_J 26
enum { FFWD_KIND_I = 0, FFWD_KIND_P90 = 1, FFWD_KIND_M90 = 2, FFWD_KIND_RX = 3, FFWD_KIND_GEN = 4 };
/* per-call per-body state: Rt[9] p[3] then 18 numbers (meaning depends on the function) */
#define FFWD_B_STRIDE 30
#define FFWD_OFF_B      (FFWD_OFF_K + FFWD_K_STRIDE * FFWD_MAX_DOF)
/* composite inertia (10) / articulated body data (47) per body */
#define FFWD_A_STRIDE 48
#define FFWD_OFF_A      (FFWD_OFF_B + FFWD_B_STRIDE * FFWD_MAX_DOF)
/* the parameters of the tool_parent body without payload (aligned frame), and a temp.
 * The body parameters th' and J in K(tool_parent) are those of the body with the active
 * payload lumped in (ffwd_fill_tool_body_, ffwd_load_tool_body_), so that every pass
 * reads any body's parameters from K(i) alike. */
#define FFWD_OFF_TP     (FFWD_OFF_A + FFWD_A_STRIDE * FFWD_MAX_DOF)
#define FFWD_OFF_TMP    (FFWD_OFF_TP + 10)
/* mass and first moment (4) of body tool_parent, payload included, that the subtree
 * constants (FFWD_OFF_SUB) were last computed with (ffwd_subtree_) */
#define FFWD_OFF_SUBKEY (FFWD_OFF_TMP + 6)
/* model constants cached by ffwd_work_init in the temp area: A of tool_parent (9), the tool
 * frame in the aligned tool_parent frame (rot 9, pos 3), the model's payload in the aligned
 * tool_parent frame (10) */
#define FFWD_OFF_ATP    (FFWD_OFF_TMP + 30)
#define FFWD_OFF_TOOL   (FFWD_OFF_ATP + 9)
#define FFWD_OFF_PAY    (FFWD_OFF_TOOL + 12)
/* a row of zeros (work init and ffwd_torque_parts write zeros, nothing else writes it),
 * sin theta, cos theta (room for an even count) for the joint transforms */
#define FFWD_TRIG_STRIDE (FFWD_MAX_DOF + 1)
#define FFWD_OFF_TRIG   (FFWD_OFF_TMP + 64)
/* temporaries of the articulated-body pass (kept off the stack) */
#define FFWD_OFF_X      (FFWD_OFF_TRIG + 3 * FFWD_TRIG_STRIDE)
/* dense copies for the angle loop: alpha[MAX_DOF], 1 (revolute) or 0 per joint, and the
 * number of prismatic joints */
#define FFWD_OFF_ALPHA  (FFWD_OFF_X + 96)
#define FFWD_OFF_NPRIS  (FFWD_OFF_ALPHA + 2 * FFWD_MAX_DOF)
/* 1 when the model is a serial chain (parent of joint i is i - 1) */
#define FFWD_OFF_CHAIN  (FFWD_OFF_NPRIS + 1)
/* subtree constants of a chain (where FFWD_OFF_CHAIN is set; ffwd_subtree_): per joint i
 * the mass M_i of bodies i..n-1 and the first moment h'_i + M_(i+1) p'_(i+1) (aligned
 * frame i; the constant part of the child's origin) */
#define FFWD_SUB_STRIDE 4
#define FFWD_OFF_SUB    (FFWD_OFF_CHAIN + 1)
#define FFWD_LAYOUT_END (FFWD_OFF_SUB + FFWD_SUB_STRIDE * FFWD_MAX_DOF)

typedef char ffwd_kind_fits[(sizeof(ffwd_real) >= sizeof(int32_t)) ? 1 : -1];
typedef char ffwd_cache_fits[(FFWD_OFF_PAY + 10 <= FFWD_OFF_TMP + 64 && FFWD_OFF_SUBKEY + 4 <= FFWD_OFF_ATP) ? 1 : -1];
typedef char ffwd_layout_fits[(FFWD_LAYOUT_END <= FFWD_WORK_REALS) ? 1 : -1];

/* ---- internal functions shared between the core's files -------------------------- */
/* sin and cos of x, bounded time, no libm (trig.c). */
void ffwd_sincos_(ffwd_real x, ffwd_real *s, ffwd_real *c);
/* sin and cos of x_k = rv[k] q[k] + al[k], k < n, two at a time, into s[k], c[k]
 * (trig.c); s, c must not alias the inputs and have room for n rounded up to even (an odd
 * last pair repeats the last angle). Returns the sum of q[k]^2 with the last q of an odd
 * n counted twice (a range test of q, see ffwd_trig_). */
ffwd_real ffwd_sincos_joints_(const ffwd_real *q, const ffwd_real *rv, const ffwd_real *al,
                              ffwd_real *s, ffwd_real *c, uint32_t n);
/* 1 when (m, w) are bound by ffwd_work_init (model.c). */
int ffwd_bound_(const ffwd_model *m, const ffwd_work *w);
/* 1 when every entry of x[0..n) is finite (model.c). */
int ffwd_finite_(const ffwd_real *x, uint32_t n);
/* Sets th' and J of K(m->tool_parent) to body tool_parent (TP area) plus the payload
 * of w's box (payload.c; readers never wait). */
void ffwd_load_tool_body_(const ffwd_model *m, ffwd_work *w);
/* The same, no call where no payload box is in use (K(tool_parent) is filled then) */
static inline void ffwd_tool_body_(const ffwd_model *m, ffwd_work *w)
{
    if (w->payload != NULL)
        ffwd_load_tool_body_(m, w);
}
/* Sets th' and J of K(m->tool_parent) to body tool_parent plus the model's payload
 * (payload.c); done by ffwd_work_init and ffwd_work_use_payload(w, NULL): nothing else
 * writes them while no box is in use. */
void ffwd_fill_tool_body_(const ffwd_model *m, ffwd_work *w);
/* The subtree constants (FFWD_OFF_SUB) of a chain from K (dynamics.c; nothing for a
 * model that is not one) and their key (FFWD_OFF_SUBKEY). Done with
 * ffwd_fill_tool_body_, and by ffwd_load_tool_body_ where the box's payload changed the
 * key (nothing else they depend on changes after ffwd_work_init). */
void ffwd_subtree_(const ffwd_model *m, ffwd_work *w);
/* payload parameters all zero or a physically valid body (model.c). */
int ffwd_payload_params_ok_(const ffwd_real *th);
/* Entry checks shared by the per-cycle functions (model.c). in: nin input vectors of
 * dof entries; out: nout outputs with sizes given by shape codes (FFWD_SHAPE_*).
 * Null pointer -> FFWD_E_ARG, unbound work -> FFWD_E_MODEL, non-finite input ->
 * FFWD_E_NONFINITE; on any error every non-null output is zeroed (when m is usable). */
enum { FFWD_SHAPE_N = 0, FFWD_SHAPE_NN = 1, FFWD_SHAPE_44 = 2, FFWD_SHAPE_6N = 3, FFWD_SHAPE_REG = 4 };
ffwd_status ffwd_enter_(const ffwd_model *m, const ffwd_work *w, const ffwd_real *const *in, int nin,
                        ffwd_real *const *out, const int *shape, int nout);
/* sin theta, cos theta (theta = q + alpha, or alpha for a prismatic joint) into the trig
 * area, and p of every prismatic body into B(i) + 9 (dynamics.c). Returns 1 when the sum
 * of q[i]^2 is below FFWD_Q_MAX_^2 (so every q[i] is finite with |q[i]| < FFWD_Q_MAX_;
 * NaN and Inf fail), else 0: the caller then runs ffwd_enter_, which tests the q[i] one
 * by one, and calls ffwd_trig_ again if none fails (see ffwd_ready_). */
int ffwd_trig_(const ffwd_model *m, ffwd_work *w, const ffwd_real *q);
/* tau1 = ffwd_inverse_dynamics(q, qd1, qdd1), tau2 = the same at (q, qd2, qdd2) and
 * grav = ffwd_gravity_torque(q), bit for bit, with one sin/cos of q (dynamics.c; the
 * governor's evaluations at a path point). An error is the first one those public calls,
 * in that order, would give. */
ffwd_status ffwd_id_pair_gravity_(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                                  const ffwd_real *qd1, const ffwd_real *qdd1, ffwd_real *tau1,
                                  const ffwd_real *qd2, const ffwd_real *qdd2, ffwd_real *tau2,
                                  ffwd_real *grav);
/* Full R = E0 Rz(theta), p of every body (aligned frames) into the work's body area
 * (dynamics.c); calls ffwd_trig_ and returns what it returns. */
int ffwd_transforms_(const ffwd_model *m, ffwd_work *w, const ffwd_real *q);
/* Forward pass of spatial velocity and acceleration of every body (aligned frames), base
 * acceleration -g; qd or qdd NULL means zero (dynamics.c). Needs ffwd_transforms_. */
void ffwd_pass_va_(const ffwd_model *m, ffwd_work *w, const ffwd_real *qd, const ffwd_real *qdd,
                   const ffwd_real *g);
/* x[0..n) = 0; x may be NULL. */
void ffwd_zero_(ffwd_real *x, uint32_t n);
/* FFWD_OK when x[0..n) is finite; otherwise zeroes it and returns FFWD_E_NONFINITE
 * (the exit check of every per-cycle function: overflow never reaches the caller). */
ffwd_status ffwd_out_ok_(ffwd_real *x, uint32_t n);

/* the stamp ffwd_work_init leaves in a work bound to m */
static inline uint32_t ffwd_stamp_of_(const ffwd_model *m)
{
    uintptr_t a = (uintptr_t)m;
    uint32_t s = 0x66667764u ^ (m->dof * 0x9e3779b9u);
    s ^= (uint32_t)(a & 0xffffffffu);
    s ^= (uint32_t)((a >> 16) >> 16);
    return s;
}

#ifdef FFWD_SINGLE
typedef uint32_t ffwd_bits_;
#else
typedef uint64_t ffwd_bits_;
#endif

/* Nonzero when some x[i] is Inf or NaN, from the bits: the exponent field plus one
 * carries into the sign bit exactly when the exponent is all ones. */
#ifdef FFWD_SINGLE
#define FFWD_EXP_MASK_ 0x7f800000u
#define FFWD_EXP_ONE_  0x00800000u
#define FFWD_TOP_BIT_  31u
/* joint positions must satisfy |q| < FFWD_Q_MAX_ (2^14 rad or m in float, 2^20 in
 * double, where sin/cos keep their accuracy; ffwd_trig_, ffwd_enter_) */
#define FFWD_Q_MAX_    16384.0f
#else
#define FFWD_EXP_MASK_ 0x7ff0000000000000u
#define FFWD_EXP_ONE_  0x0010000000000000u
#define FFWD_TOP_BIT_  63u
#define FFWD_Q_MAX_    1048576.0
#endif

/* The exponent field of x plus one: its top bit is set exactly when x is Inf or NaN.
 * OR these together over many x and test once with finite_bits. */
static inline ffwd_bits_ exp_bits(ffwd_real x)
{
    ffwd_bits_ u;
    memcpy(&u, &x, sizeof u);
    return (u & (ffwd_bits_)FFWD_EXP_MASK_) + (ffwd_bits_)FFWD_EXP_ONE_;
}

static inline int finite_bits(ffwd_bits_ acc)
{
    return ((acc >> FFWD_TOP_BIT_) & 1u) == 0u;
}

/* Fast entry check of a per-cycle function: m, w, q non-null, bound, dof in range, and
 * the inputs b, c (when not NULL) finite, over dof entries. The joint positions q are
 * tested by the ffwd_trig_ call that reads them (directly or through ffwd_transforms_):
 * a per-cycle function proceeds when both pass,
 *   if (!(outputs non-null && ffwd_ready_(m, w, q, b, c) && ffwd_trig_(m, w, q))) {
 *       st = ffwd_enter_(...); if (st != FFWD_OK) return st;  (finds the reason, zeroes
 *       (void)ffwd_trig_(m, w, q);                              the outputs)
 *   }
 * and needs no other trig call. */
static inline int ffwd_ready_(const ffwd_model *m, const ffwd_work *w, const ffwd_real *q,
                              const ffwd_real *b, const ffwd_real *c)
{
    uint32_t i, n;
    uint64_t acc = 0u;
    if (!(m != NULL && w != NULL && q != NULL && w->model == m && w->stamp == ffwd_stamp_of_(m)
          && m->dof >= 1u && m->dof <= (uint32_t)FFWD_MAX_DOF))
        return 0;
    if (b == NULL && c == NULL)
        return 1;
    n = m->dof;
    for (i = 0; i < n; i++) {
#ifdef FFWD_SINGLE
        uint32_t u;
#else
        uint64_t u;
#endif
        if (b != NULL) {
            memcpy(&u, b + i, sizeof u);
            acc |= (uint64_t)((u & FFWD_EXP_MASK_) + FFWD_EXP_ONE_);
        }
        if (c != NULL) {
            memcpy(&u, c + i, sizeof u);
            acc |= (uint64_t)((u & FFWD_EXP_MASK_) + FFWD_EXP_ONE_);
        }
    }
    return ((acc >> FFWD_TOP_BIT_) & 1u) == 0u;
}

/* ---- small 3-D helpers ------------------------------------------------------------ */
static inline void v3_cross(const ffwd_real *a, const ffwd_real *b, ffwd_real *o)
{
    ffwd_real x = a[1] * b[2] - a[2] * b[1];
    ffwd_real y = a[2] * b[0] - a[0] * b[2];
    ffwd_real z = a[0] * b[1] - a[1] * b[0];
    o[0] = x; o[1] = y; o[2] = z;
}

static inline ffwd_real v3_dot(const ffwd_real *a, const ffwd_real *b)
{
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
}

/* o = R x */
static inline void m3_mul(const ffwd_real *R, const ffwd_real *x, ffwd_real *o)
{
    ffwd_real a = R[0] * x[0] + R[1] * x[1] + R[2] * x[2];
    ffwd_real b = R[3] * x[0] + R[4] * x[1] + R[5] * x[2];
    ffwd_real c = R[6] * x[0] + R[7] * x[1] + R[8] * x[2];
    o[0] = a; o[1] = b; o[2] = c;
}

/* o = R^T x */
static inline void m3_tmul(const ffwd_real *R, const ffwd_real *x, ffwd_real *o)
{
    ffwd_real a = R[0] * x[0] + R[3] * x[1] + R[6] * x[2];
    ffwd_real b = R[1] * x[0] + R[4] * x[1] + R[7] * x[2];
    ffwd_real c = R[2] * x[0] + R[5] * x[1] + R[8] * x[2];
    o[0] = a; o[1] = b; o[2] = c;
}

/* O = A B (3x3, O may not alias A or B) */
static inline void m3_mm(const ffwd_real *A, const ffwd_real *B, ffwd_real *O)
{
    int i, j;
    for (i = 0; i < 3; i++)
        for (j = 0; j < 3; j++)
            O[3 * i + j] = A[3 * i] * B[j] + A[3 * i + 1] * B[3 + j] + A[3 * i + 2] * B[6 + j];
}

/* O = A^T B (3x3, O may not alias A or B) */
static inline void m3_tm(const ffwd_real *A, const ffwd_real *B, ffwd_real *O)
{
    int i, j;
    for (i = 0; i < 3; i++)
        for (j = 0; j < 3; j++)
            O[3 * i + j] = A[i] * B[j] + A[3 + i] * B[3 + j] + A[6 + i] * B[6 + j];
}

/* ---- spatial algebra ------------------------------------------------------------------ */
/* motion parent -> child: o = X m */
static inline void xm_apply(const ffwd_real *R, const ffwd_real *p, const ffwd_real *mv, ffwd_real *o)
{
    ffwd_real t[3];
    v3_cross(mv, p, t);
    t[0] += mv[3]; t[1] += mv[4]; t[2] += mv[5];
    m3_tmul(R, mv, o);
    m3_tmul(R, t, o + 3);
}

/* force child -> parent: o = X^T f (o may alias nothing in f) */
static inline void xf_apply_t(const ffwd_real *R, const ffwd_real *p, const ffwd_real *f, ffwd_real *o)
{
    ffwd_real t[3];
    m3_mul(R, f + 3, o + 3);
    m3_mul(R, f, o);
    v3_cross(p, o + 3, t);
    o[0] += t[0]; o[1] += t[1]; o[2] += t[2];
}

/* force child -> parent, accumulated: acc += X^T f */
static inline void xf_add_t(const ffwd_real *R, const ffwd_real *p, const ffwd_real *f, ffwd_real *acc)
{
    ffwd_real o[6];
    xf_apply_t(R, p, f, o);
    acc[0] += o[0]; acc[1] += o[1]; acc[2] += o[2];
    acc[3] += o[3]; acc[4] += o[4]; acc[5] += o[5];
}

/* o = I(th) x  for a rigid-body inertia */
static inline void inertia_apply(const ffwd_real *th, const ffwd_real *x, ffwd_real *o)
{
    const ffwd_real *h = th + 1;
    ffwd_real a[3], b[3];
    v3_cross(h, x + 3, a);
    v3_cross(x, h, b);
    o[0] = th[4] * x[0] + th[5] * x[1] + th[6] * x[2] + a[0];
    o[1] = th[5] * x[0] + th[7] * x[1] + th[8] * x[2] + a[1];
    o[2] = th[6] * x[0] + th[8] * x[1] + th[9] * x[2] + a[2];
    o[3] = th[0] * x[3] + b[0];
    o[4] = th[0] * x[4] + b[1];
    o[5] = th[0] * x[5] + b[2];
}

/* o = v x* f  (spatial force cross product) */
static inline void crf(const ffwd_real *v, const ffwd_real *f, ffwd_real *o)
{
    ffwd_real a[3], b[3];
    v3_cross(v, f, a);
    v3_cross(v + 3, f + 3, b);
    o[0] = a[0] + b[0]; o[1] = a[1] + b[1]; o[2] = a[2] + b[2];
    v3_cross(v, f + 3, o + 3);
}

/* Rigid-body parameters th (child frame) expressed in the parent frame (R, p), and the same
 * body's parameters in axes rotated by A (x_old = A x_new): m, A^T h, A^T I A. One copy
 * of each in model.c (they are not in the per-cycle inner loops). */
void ffwd_params_to_parent_(const ffwd_real *R, const ffwd_real *p, const ffwd_real *th, ffwd_real *o);
void ffwd_params_rotate_t_(const ffwd_real *A, const ffwd_real *th, ffwd_real *o);
static inline void params_to_parent(const ffwd_real *R, const ffwd_real *p, const ffwd_real *th, ffwd_real *o)
{
    ffwd_params_to_parent_(R, p, th, o);
}

static inline void params_rotate_t(const ffwd_real *A, const ffwd_real *th, ffwd_real *o)
{
    ffwd_params_rotate_t_(A, th, o);
}

/* The second moment J = sum m r r^T = tr(I)/2 1 - I of the body th (about the same origin),
 * six entries Jxx Jxy Jxz Jyy Jyz Jzz. */
static inline void second_moment(const ffwd_real *th, ffwd_real *J)
{
    const ffwd_real t = FR(0.5) * (th[4] + th[7] + th[9]);
    J[0] = t - th[4]; J[1] = -th[5]; J[2] = -th[6];
    J[3] = t - th[7]; J[4] = -th[8]; J[5] = t - th[9];
}

/* |x| from the bits (no libm, no branch) */
static inline ffwd_real abs_real(ffwd_real x)
{
#if defined(__GNUC__)
    /* the compiler's own |x| (one and-not of the sign bit in a float register, never a
     * library call) */
#ifdef FFWD_SINGLE
    return __builtin_fabsf(x);
#else
    return __builtin_fabs(x);
#endif
#else
    ffwd_bits_ u;
    memcpy(&u, &x, sizeof u);
    u &= ~((ffwd_bits_)1 << (8u * sizeof(ffwd_real) - 1u));
    memcpy(&x, &u, sizeof x);
    return x;
#endif
}

/* clamp to [-1, 1] */
static inline ffwd_real clamp1(ffwd_real x)
{
    const ffwd_real a = abs_real(x);
    return a > FR(1) ? x / a : x;     /* exactly +-1 outside (x +- 1 would round to x past 2^53) */
}

/* max(a, b) for a >= 0 or NaN, b > 0, as one instruction without a branch: the compiler's
 * fmax on AArch64 (fmaxnm; GCC turns the select below into a branch there), the select
 * elsewhere (maxsd on x86-64, vsel or a conditional move on Arm M-profile FPUs); a NaN a
 * gives b */
static inline ffwd_real max_pos(ffwd_real a, ffwd_real b)
{
#if defined(__aarch64__) && defined(__GNUC__)
#ifdef FFWD_SINGLE
    return __builtin_fmaxf(a, b);
#else
    return __builtin_fmax(a, b);
#endif
#else
    return a > b ? a : b;
#endif
}

/* drive friction torque at velocity qd: viscous qd + coulomb clamp(qd / band, -1, 1),
 * the clamp as qd / max(band, |qd|) (band > 0): qd / band inside the band, exactly +-1
 * outside, one division and one max, no branch; NaN or Inf qd gives NaN */
static inline ffwd_real friction_torque(const ffwd_joint *J, ffwd_real qd)
{
    return J->viscous * qd + J->coulomb * (qd / max_pos(abs_real(qd), J->coulomb_band));
}

#endif /* FFWD_SPATIAL_H */
