/* dynamics.c - inverse dynamics (recursive Newton-Euler), gravity torque, torque parts,
 * mass matrix (composite rigid body) and forward dynamics (articulated body) on (R, p)
 * transforms (see spatial.h). All work in the aligned joint frames set up by
 * ffwd_work_init (spatial.h): every joint turns about / slides along its local z axis, so
 * the joint rotation Rz(theta) mixes two components only and the motion subspace is e_z,
 * and the fixed rotation E0 is Rx(beta) for all but base children and second children in
 * a tree. Inverse dynamics, gravity and the torque parts apply E0 and Rz(theta)
 * separately (E0 by its kind: moves and sign flips for beta 0 or +-pi/2, four products
 * for another beta, nine for a general E0); the mass matrix and forward dynamics use the
 * full R = E0 Rz(theta) in Featherstone's spatial form.
 * Inverse dynamics and the torque parts use the 3-D vector form of Newton-Euler
 * (angular velocity and acceleration, linear acceleration of the frame origin: no linear
 * velocity is needed).
 *
 * Per-body state lives in the work scratch: B(i) = R[9] p[3] then 18 numbers whose
 * meaning depends on the function (spatial v[6] a[6] f[6], or w wd al . f n).
 */
#include "spatial.h"

#define BODY(w, i) ((w)->scratch + FFWD_OFF_B + FFWD_B_STRIDE * (uint32_t)(i))
#define AUX(w, i) ((w)->scratch + FFWD_OFF_A + FFWD_A_STRIDE * (uint32_t)(i))
#define KONST(w, i) ((w)->scratch + FFWD_OFF_K + FFWD_K_STRIDE * (uint32_t)(i))
#define TRIG_ZERO(w) ((w)->scratch + FFWD_OFF_TRIG)
#define TRIG_S(w) ((w)->scratch + FFWD_OFF_TRIG + FFWD_TRIG_STRIDE)
#define TRIG_C(w) ((w)->scratch + FFWD_OFF_TRIG + 2 * FFWD_TRIG_STRIDE)

/* sin, cos of theta = q + alpha (revolute) or alpha (prismatic) of every joint, two at a
 * time (ffwd_sincos_joints_); p = p' + q E0 e_z of every prismatic joint. The sum of q^2
 * rides along: the entry test of q (spatial.h; the last q of an odd count counted twice,
 * which only makes the test stricter). */
int ffwd_trig_(const ffwd_model *m, ffwd_work *w, const ffwd_real *q)
{
    const ffwd_real *al = w->scratch + FFWD_OFF_ALPHA, *rv = al + FFWD_MAX_DOF;
    const uint32_t n = m->dof;
    uint32_t i;
    ffwd_real ss;
    if (w->scratch[FFWD_OFF_NPRIS] != FR(0)) {
        for (i = 0; i < n; i++) {
            if (m->joint[i].type != FFWD_REVOLUTE) {
                const ffwd_real *K = KONST(w, i), *E = K + FFWD_K_E, *pc = K + FFWD_K_P;
                ffwd_real *p = BODY(w, i) + 9;
                p[0] = pc[0] + q[i] * E[2];
                p[1] = pc[1] + q[i] * E[5];
                p[2] = pc[2] + q[i] * E[8];
            }
        }
    }
#ifdef FFWD_SINGLE
    /* float: q + alpha would round the angle to the spacing of q (1e-3 rad at |q| = 2^14):
     * sin/cos of q (offsets from the row of zeros), then the offset by the angle-sum
     * formulas */
    ss = ffwd_sincos_joints_(q, rv, TRIG_ZERO(w), TRIG_S(w), TRIG_C(w), n);
    for (i = 0; i < n; i++) {
        const ffwd_real *K = KONST(w, i), ca = K[FFWD_K_CA], sa = K[FFWD_K_SA];
        ffwd_real *sp = TRIG_S(w) + i, *cp = TRIG_C(w) + i;
        const ffwd_real sq = *sp, cq = *cp;
        *sp = sq * ca + cq * sa;
        *cp = cq * ca - sq * sa;
    }
#else
    /* double: q + alpha rounds the angle by at most 1.2e-10 rad at |q| = 2^20 */
    ss = ffwd_sincos_joints_(q, rv, al, TRIG_S(w), TRIG_C(w), n);
#endif
    return ss < FFWD_Q_MAX_ * FFWD_Q_MAX_;
}

/* R = E0 Rz(theta) and p of every body */
int ffwd_transforms_(const ffwd_model *m, ffwd_work *w, const ffwd_real *q)
{
    const ffwd_real *sb = TRIG_S(w), *cb = TRIG_C(w);
    uint32_t i;
    int r, ok = ffwd_trig_(m, w, q);
    for (i = 0; i < m->dof; i++) {
        const ffwd_real *K = KONST(w, i), *E = K + FFWD_K_E;
        const ffwd_real s = sb[i], c = cb[i];
        ffwd_real *R = BODY(w, i);
        for (r = 0; r < 3; r++) {
            R[3 * r] = c * E[3 * r] + s * E[3 * r + 1];
            R[3 * r + 1] = c * E[3 * r + 1] - s * E[3 * r];
            R[3 * r + 2] = E[3 * r + 2];
        }
        if (m->joint[i].type == FFWD_REVOLUTE) {
            R[9] = K[FFWD_K_P]; R[10] = K[FFWD_K_P + 1]; R[11] = K[FFWD_K_P + 2];
        }
    }
    return ok;
}

/* body parameters th' and second moment J of body i in the aligned frame (the payload
 * lumped into body tool_parent, spatial.h FFWD_OFF_TP) */
#define BODY_TH(w, i) (KONST(w, i) + FFWD_K_TH)
#define BODY_J(w, i) (KONST(w, i) + FFWD_K_J)

/* S . F for joint J (F a spatial force; S = e_z in the aligned frame) */
static ffwd_real s_dot(const ffwd_joint *J, const ffwd_real *F)
{
    return J->type == FFWD_REVOLUTE ? F[2] : F[5];
}

/* motion parent -> child (spatial.h xm_apply), one copy of the code for the passes below */
static FFWD_NOINLINE void xm(const ffwd_real *R, const ffwd_real *p, const ffwd_real *mv, ffwd_real *o)
{
    xm_apply(R, p, mv, o);
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
        xm(B, B + 9, vp, v);
        xm(B, B + 9, ap, a);
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

/* E0^T a (parent -> intermediate frame) and E0 u (back) by the kind of E0 (spatial.h):
 * Rx(beta) for beta 0 or +-pi/2 is moves and sign flips, any other beta 4 products
 * (K[4] = cos beta, K[7] = sin beta), a general E0 9. */
#define RXT(K, a0, a1, a2, u0, u1, u2) do { \
    (u0) = (a0); (u1) = (K)[4] * (a1) + (K)[7] * (a2); (u2) = (K)[4] * (a2) - (K)[7] * (a1); } while (0)
#define RXM(K, u0, u1, u2, o0, o1, o2) do { \
    (o0) = (u0); (o1) = (K)[4] * (u1) - (K)[7] * (u2); (o2) = (K)[7] * (u1) + (K)[4] * (u2); } while (0)
#define GENT(K, a0, a1, a2, u0, u1, u2) do { \
    (u0) = (K)[0] * (a0) + (K)[3] * (a1) + (K)[6] * (a2); \
    (u1) = (K)[1] * (a0) + (K)[4] * (a1) + (K)[7] * (a2); \
    (u2) = (K)[2] * (a0) + (K)[5] * (a1) + (K)[8] * (a2); } while (0)
#define GENM(K, u0, u1, u2, o0, o1, o2) do { \
    (o0) = (K)[0] * (u0) + (K)[1] * (u1) + (K)[2] * (u2); \
    (o1) = (K)[3] * (u0) + (K)[4] * (u1) + (K)[5] * (u2); \
    (o2) = (K)[6] * (u0) + (K)[7] * (u1) + (K)[8] * (u2); } while (0)
#define E0T(kind, K, a0, a1, a2, u0, u1, u2) do { \
    switch (kind) { \
    case FFWD_KIND_I: (u0) = (a0); (u1) = (a1); (u2) = (a2); break; \
    case FFWD_KIND_P90: (u0) = (a0); (u1) = (a2); (u2) = -(a1); break; \
    case FFWD_KIND_M90: (u0) = (a0); (u1) = -(a2); (u2) = (a1); break; \
    case FFWD_KIND_RX: RXT(K, a0, a1, a2, u0, u1, u2); break; \
    default: GENT(K, a0, a1, a2, u0, u1, u2); break; \
    } } while (0)
#define E0M(kind, K, u0, u1, u2, o0, o1, o2) do { \
    switch (kind) { \
    case FFWD_KIND_I: (o0) = (u0); (o1) = (u1); (o2) = (u2); break; \
    case FFWD_KIND_P90: (o0) = (u0); (o1) = -(u2); (o2) = (u1); break; \
    case FFWD_KIND_M90: (o0) = (u0); (o1) = (u2); (o2) = -(u1); break; \
    case FFWD_KIND_RX: RXM(K, u0, u1, u2, o0, o1, o2); break; \
    default: GENM(K, u0, u1, u2, o0, o1, o2); break; \
    } } while (0)

/* o = Rz(theta)^T u (into the child frame) and o = Rz(theta) u, c = cos theta, s = sin theta */
#define RZT(c, s, u0, u1, u2, o0, o1, o2) do { \
    (o0) = (c) * (u0) + (s) * (u1); (o1) = (c) * (u1) - (s) * (u0); (o2) = (u2); } while (0)
#define RZ(c, s, u0, u1, u2, o0, o1, o2) do { \
    (o0) = (c) * (u0) - (s) * (u1); (o1) = (s) * (u0) + (c) * (u1); (o2) = (u2); } while (0)

/* joint K's type (FFWD_REVOLUTE or FFWD_PRISMATIC), kept beside its constants */
static int joint_type(const ffwd_real *K)
{
    int32_t t;
    memcpy(&t, K + FFWD_K_TYPE, sizeof t);
    return (int)t;
}

/* the kind of joint K's fixed rotation E0 */
static int e0_kind(const ffwd_real *K)
{
    int32_t k;
    memcpy(&k, K + FFWD_K_KIND, sizeof k);
    return (int)k;
}

/* Inverse dynamics state of every body, entry by entry (structure of arrays): entry e of
 * body i at IDS(w)[e ID_ST + i], e = 0..2 w, 3..5 wd, 6..8 al, 9..11 f, 12..14 n, in the
 * per-call AUX area (spatial.h). Bodies 2k and 2k + 1 sit side by side, so that one
 * vector load or store moves an entry of both. */
#define ID_ST (((uint32_t)FFWD_MAX_DOF + 1u) & ~1u)
#define IDS(w) ((w)->scratch + FFWD_OFF_A)
#define IE(e) ((uint32_t)(e) * ID_ST)
typedef char ffwd_ids_fits[(15 * ID_ST <= FFWD_A_STRIDE * FFWD_MAX_DOF) ? 1 : -1];

/* The inverse-dynamics and gravity passes are inlined into ffwd_inverse_dynamics and
 * ffwd_gravity_torque (ffwd_torque_parts calls out-of-line copies) where the target has
 * two-lane vectors of doubles (desktop and application processors: a call's overhead
 * saved); elsewhere (microcontrollers) one copy of each, for code size. */
#if defined(__GNUC__) && (defined(__SSE2__) || defined(__ARM_NEON))
#define PASS_INLINE inline __attribute__((always_inline))
#define PASS_COPIES 1
#else
#define PASS_INLINE
#define PASS_COPIES 0
#endif

/* Where the passes are inlined, a serial chain of revolute joints (the common arm) takes
 * a copy of each in which the joint type and parent are constants: the same operations,
 * without the per-joint tests (crev below). */
static inline int rev_chain_copy(const ffwd_work *w)
{
    return PASS_COPIES && w->scratch[FFWD_OFF_CHAIN] != FR(0) && w->scratch[FFWD_OFF_NPRIS] == FR(0);
}

/* Lanes of the body-force step of id_pass: two bodies at once where the target has
 * two-lane vectors of doubles (x86-64, Arm NEON), one elsewhere (no larger code for
 * a scalar FPU). LANE_LOAD moves entry e of the state S (IDS, at the first body) into
 * the lanes, LANE_STORE back, LANE_K parameter k of the bodies' constants K0, K1. */
#if defined(__SSE2__) || defined(__ARM_NEON)
#define FORCE_LANES 2
#define LANE_K(x, p0, p1, k) ((x)[0] = (p0)[k], (x)[1] = (p1)[k])
#else
#define FORCE_LANES 1
#define LANE_K(x, p0, p1, k) ((void)(p1), (x)[0] = (p0)[k])
#endif
#define LANE_LOAD(x, S, e) do { int l_; for (l_ = 0; l_ < FORCE_LANES; l_++) (x)[l_] = (S)[IE(e) + (uint32_t)l_]; } while (0)
#define LANE_STORE(S, e, x) do { int l_; for (l_ = 0; l_ < FORCE_LANES; l_++) (S)[IE(e) + (uint32_t)l_] = (x)[l_]; } while (0)

/* The body forces of id_pass for bodies 0..n-1, FORCE_LANES at a time: lane l from the
 * state S (w, wd, al; see IDS) and th, J of K0 or K1: with Om = [wd]x + [w]x [w]x,
 * f = M al + Om h and n = h x al + the axial vector of Om J - (Om J)^T, into S (f, n).
 * The bodies are independent, so every line is the same operation on each lane (one
 * vector instruction for both); an odd last body fills both lanes (K1 = K0; id_pass
 * copies its state into the second lane). Out of line: one copy of the code, with its
 * own registers. */
static FFWD_NOINLINE void body_forces(ffwd_real *ids, const ffwd_real *K, uint32_t n)
{
    uint32_t i;
    for (i = 0; i < n; i += (uint32_t)FORCE_LANES) {
        ffwd_real *S = ids + i;
        const ffwd_real *K0 = K + FFWD_K_STRIDE * i, *K1 = i + 1u < n ? K0 + FFWD_K_STRIDE : K0;
        const ffwd_real *t0 = K0 + FFWD_K_TH, *t1 = K1 + FFWD_K_TH, *J0 = K0 + FFWD_K_J, *J1 = K1 + FFWD_K_J;
        ffwd_real M[FORCE_LANES], h0[FORCE_LANES], h1[FORCE_LANES], h2[FORCE_LANES];
        ffwd_real a0[FORCE_LANES], a1[FORCE_LANES], a2[FORCE_LANES];
        ffwd_real w0[FORCE_LANES], w1[FORCE_LANES], w2[FORCE_LANES];
        ffwd_real d0[FORCE_LANES], d1[FORCE_LANES], d2[FORCE_LANES];
        ffwd_real O0[FORCE_LANES], O1[FORCE_LANES], O2[FORCE_LANES], O3[FORCE_LANES], O4[FORCE_LANES];
        ffwd_real O5[FORCE_LANES], O6[FORCE_LANES], O7[FORCE_LANES], O8[FORCE_LANES];
        ffwd_real Jxx[FORCE_LANES], Jxy[FORCE_LANES], Jxz[FORCE_LANES];
        ffwd_real Jyy[FORCE_LANES], Jyz[FORCE_LANES], Jzz[FORCE_LANES];
        ffwd_real f0[FORCE_LANES], f1[FORCE_LANES], f2[FORCE_LANES];
        ffwd_real n0[FORCE_LANES], n1[FORCE_LANES], n2[FORCE_LANES];
        int l;
        LANE_K(M, t0, t1, 0); LANE_K(h0, t0, t1, 1); LANE_K(h1, t0, t1, 2); LANE_K(h2, t0, t1, 3);
        LANE_LOAD(w0, S, 0); LANE_LOAD(w1, S, 1); LANE_LOAD(w2, S, 2);
        LANE_LOAD(d0, S, 3); LANE_LOAD(d1, S, 4); LANE_LOAD(d2, S, 5);
        LANE_LOAD(a0, S, 6); LANE_LOAD(a1, S, 7); LANE_LOAD(a2, S, 8);
        for (l = 0; l < FORCE_LANES; l++) {
            /* Om = [wd]x + [w]x [w]x */
            const ffwd_real x0 = w0[l] * w0[l], x1 = w1[l] * w1[l], x2 = w2[l] * w2[l];
            const ffwd_real ww = x0 + x1 + x2;
            const ffwd_real y0 = w0[l] * w1[l], y1 = w0[l] * w2[l], y2 = w1[l] * w2[l];
            O0[l] = x0 - ww; O4[l] = x1 - ww; O8[l] = x2 - ww;
            O1[l] = y0 - d2[l]; O3[l] = y0 + d2[l];
            O2[l] = y1 + d1[l]; O6[l] = y1 - d1[l];
            O5[l] = y2 - d0[l]; O7[l] = y2 + d0[l];
        }
        for (l = 0; l < FORCE_LANES; l++) {
            /* f = M al + Om h, and h x al (mass and first moment are done with then) */
            f0[l] = M[l] * a0[l] + O0[l] * h0[l] + O1[l] * h1[l] + O2[l] * h2[l];
            f1[l] = M[l] * a1[l] + O3[l] * h0[l] + O4[l] * h1[l] + O5[l] * h2[l];
            f2[l] = M[l] * a2[l] + O6[l] * h0[l] + O7[l] * h1[l] + O8[l] * h2[l];
            n0[l] = h1[l] * a2[l] - h2[l] * a1[l];
            n1[l] = h2[l] * a0[l] - h0[l] * a2[l];
            n2[l] = h0[l] * a1[l] - h1[l] * a0[l];
        }
        LANE_STORE(S, 9, f0); LANE_STORE(S, 10, f1); LANE_STORE(S, 11, f2);
        LANE_K(Jxx, J0, J1, 0); LANE_K(Jxy, J0, J1, 1); LANE_K(Jxz, J0, J1, 2);
        LANE_K(Jyy, J0, J1, 3); LANE_K(Jyz, J0, J1, 4); LANE_K(Jzz, J0, J1, 5);
        for (l = 0; l < FORCE_LANES; l++) {
            /* n += the axial vector of Om J - (Om J)^T, from the off-diagonal entries mjk of
             * Om J (Om rows O0..O2, O3..O5, O6..O8) */
            n0[l] += (O6[l] * Jxy[l] + O7[l] * Jyy[l] + O8[l] * Jyz[l]) - (O3[l] * Jxz[l] + O4[l] * Jyz[l] + O5[l] * Jzz[l]);
            n1[l] += (O0[l] * Jxz[l] + O1[l] * Jyz[l] + O2[l] * Jzz[l]) - (O6[l] * Jxx[l] + O7[l] * Jxy[l] + O8[l] * Jxz[l]);
            n2[l] += (O3[l] * Jxx[l] + O4[l] * Jxy[l] + O5[l] * Jxz[l]) - (O0[l] * Jxy[l] + O1[l] * Jyy[l] + O2[l] * Jyz[l]);
        }
        LANE_STORE(S, 12, n0); LANE_STORE(S, 13, n1); LANE_STORE(S, 14, n2);
    }
}

/* force f, torque n of a child (parent's axes, about the child's origin p) as force and
 * torque about the parent's origin, into cf, cn */
#define TO_PARENT(p, f0, f1, f2, n0, n1, n2) do { \
    cf0 = (f0); cf1 = (f1); cf2 = (f2); \
    cn0 = (n0) + ((p)[1] * (f2) - (p)[2] * (f1)); \
    cn1 = (n1) + ((p)[2] * (f0) - (p)[0] * (f2)); \
    cn2 = (n2) + ((p)[0] * (f1) - (p)[1] * (f0)); } while (0)

/* Recursive Newton-Euler in 3-D vector form (angular velocity w, angular acceleration wd,
 * linear acceleration al of each frame origin; base acceleration -g): w, wd, al outward,
 * then the body forces (body_forces, two bodies at a time), then the forces summed
 * inward. With
 *   Om = [wd]x + [w]x [w]x  (so that wd x r + w x (w x r) = Om r),
 * the child's origin acceleration is al + wd x p + w x (w x p) and the body force is
 *   f = m al + Om h,   n = Io wd + w x (Io w) + h x al   (h = m c, Io about the origin),
 * where Io wd + w x (Io w) is the axial vector of Om J - (Om J)^T with the second moment
 * J = tr(Io)/2 1 - Io (from [a]x J + J [a]x = [Io a]x and [a]x[b]x - [b]x[a]x = [a x b]x).
 * drive != 0 adds armature and friction to tau. Needs ffwd_trig_.
 * State in IDS; p of a prismatic joint at B(i) + 9. Coming back, the force a body hands
 * to its parent stays in registers where the parent is the next body down (every joint
 * of a chain); otherwise it is added into the parent's own force. Returns 1 when every
 * torque is finite. */
static PASS_INLINE int id_pass_k(const ffwd_model *m, ffwd_work *w, const ffwd_real *qd,
                                 const ffwd_real *qdd, const ffwd_real *g, ffwd_real *tau, int drive,
                                 int crev)
{
    ffwd_real acc = FR(0); /* sum of t * 0 over the torques: 0, or NaN after an Inf or NaN */
    const ffwd_real *sb = TRIG_S(w), *cb = TRIG_C(w);
    ffwd_real *const ids = IDS(w);
    const uint32_t n = m->dof;
    uint32_t i;
    /* the force and torque body i + 1 hands to body i, its parent (a chain) */
    ffwd_real cf0 = FR(0), cf1 = FR(0), cf2 = FR(0), cn0 = FR(0), cn1 = FR(0), cn2 = FR(0);
    for (i = 0; i < n; i++) {
        const ffwd_joint *J = &m->joint[i];
        const ffwd_real *K = KONST(w, i);
        ffwd_real *S = ids + i;
        const int rev = crev || J->type == FFWD_REVOLUTE, kind = e0_kind(K);
        const int32_t jp = crev ? (int32_t)i - 1 : J->parent;
        ffwd_real c, s, dq, ddq, w0, w1, w2, d0, d1, d2, a0, a1, a2, x0, x1, x2;
        if (jp >= 0) {
            /* the origin acceleration al + wd x p + w x (w x p) of the parent's motion */
            const ffwd_real *P = ids + jp, *p = rev ? K + FFWD_K_P : BODY(w, i) + 9;
            const ffwd_real p0 = p[0], p1 = p[1], p2 = p[2];
            const ffwd_real t0 = P[IE(1)] * p2 - P[IE(2)] * p1, t1 = P[IE(2)] * p0 - P[IE(0)] * p2;
            const ffwd_real t2 = P[IE(0)] * p1 - P[IE(1)] * p0;
            x0 = P[IE(6)] + (P[IE(4)] * p2 - P[IE(5)] * p1) + (P[IE(1)] * t2 - P[IE(2)] * t1);
            x1 = P[IE(7)] + (P[IE(5)] * p0 - P[IE(3)] * p2) + (P[IE(2)] * t0 - P[IE(0)] * t2);
            x2 = P[IE(8)] + (P[IE(3)] * p1 - P[IE(4)] * p0) + (P[IE(0)] * t1 - P[IE(1)] * t0);
            c = cb[i];
            s = sb[i];
            switch (kind) {
            case FFWD_KIND_I:
                RZT(c, s, P[IE(0)], P[IE(1)], P[IE(2)], w0, w1, w2);
                RZT(c, s, P[IE(3)], P[IE(4)], P[IE(5)], d0, d1, d2);
                RZT(c, s, x0, x1, x2, a0, a1, a2);
                break;
            case FFWD_KIND_P90:
                RZT(c, s, P[IE(0)], P[IE(2)], -P[IE(1)], w0, w1, w2);
                RZT(c, s, P[IE(3)], P[IE(5)], -P[IE(4)], d0, d1, d2);
                RZT(c, s, x0, x2, -x1, a0, a1, a2);
                break;
            case FFWD_KIND_M90:
                RZT(c, s, P[IE(0)], -P[IE(2)], P[IE(1)], w0, w1, w2);
                RZT(c, s, P[IE(3)], -P[IE(5)], P[IE(4)], d0, d1, d2);
                RZT(c, s, x0, -x2, x1, a0, a1, a2);
                break;
            case FFWD_KIND_RX: {
                ffwd_real u0, u1, u2;
                RXT(K, P[IE(0)], P[IE(1)], P[IE(2)], u0, u1, u2);
                RZT(c, s, u0, u1, u2, w0, w1, w2);
                RXT(K, P[IE(3)], P[IE(4)], P[IE(5)], u0, u1, u2);
                RZT(c, s, u0, u1, u2, d0, d1, d2);
                RXT(K, x0, x1, x2, u0, u1, u2);
                RZT(c, s, u0, u1, u2, a0, a1, a2);
                break;
            }
            default: {
                ffwd_real u0, u1, u2;
                GENT(K, P[IE(0)], P[IE(1)], P[IE(2)], u0, u1, u2);
                RZT(c, s, u0, u1, u2, w0, w1, w2);
                GENT(K, P[IE(3)], P[IE(4)], P[IE(5)], u0, u1, u2);
                RZT(c, s, u0, u1, u2, d0, d1, d2);
                GENT(K, x0, x1, x2, u0, u1, u2);
                RZT(c, s, u0, u1, u2, a0, a1, a2);
                break;
            }
            }
        } else {
            /* base parent: no velocity, acceleration -g */
            ffwd_real u0, u1, u2;
            c = cb[i];
            s = sb[i];
            E0T(kind, K, -g[0], -g[1], -g[2], u0, u1, u2);
            RZT(c, s, u0, u1, u2, a0, a1, a2);
            w0 = w1 = w2 = d0 = d1 = d2 = FR(0);
        }
        dq = qd[i];
        ddq = qdd[i];
        if (rev) {
            /* wd += w x e_z dq + e_z ddq; w += e_z dq */
            d0 += w1 * dq; d1 -= w0 * dq; d2 += ddq;
            w2 += dq;
        } else {
            /* al += 2 w x e_z dq + e_z ddq */
            a0 += FR(2) * w1 * dq; a1 -= FR(2) * w0 * dq; a2 += ddq;
        }
        S[IE(0)] = w0; S[IE(1)] = w1; S[IE(2)] = w2; S[IE(3)] = d0; S[IE(4)] = d1; S[IE(5)] = d2;
        S[IE(6)] = a0; S[IE(7)] = a1; S[IE(8)] = a2;
    }
    {
        /* FORCE_LANES bodies at a time; an odd last body twice (copied into the free
         * second lane of its pair) */
        if (FORCE_LANES > 1 && (n & 1u)) {
            ffwd_real *S = ids + (n - 1u);
            uint32_t e;
            for (e = 0; e < 9u; e++)
                S[IE(e) + 1u] = S[IE(e)];
        }
        body_forces(ids, KONST(w, 0), n);
    }
    for (i = n; i-- > 0u;) {
        const ffwd_joint *J = &m->joint[i];
        const ffwd_real *S = ids + i;
        const int rev = crev || J->type == FFWD_REVOLUTE;
        const int32_t par = crev ? (int32_t)i - 1 : J->parent;
        /* body i's own force plus that of body i + 1 where i is its parent (cf, cn) */
        const ffwd_real f0 = S[IE(9)] + cf0, f1 = S[IE(10)] + cf1, f2 = S[IE(11)] + cf2;
        const ffwd_real n0 = S[IE(12)] + cn0, n1 = S[IE(13)] + cn1, n2 = S[IE(14)] + cn2;
        ffwd_real t = rev ? n2 : f2;
        if (drive)
            t += J->armature * qdd[i] + friction_torque(J, qd[i]);
        tau[i] = t;
        acc += t * FR(0);
        if (par >= 0) {
            const ffwd_real *K = KONST(w, i);
            const ffwd_real *p = rev ? K + FFWD_K_P : BODY(w, i) + 9;
            const int kind = e0_kind(K);
            const ffwd_real c = cb[i], s = sb[i];
            ffwd_real e0, e1, e2, r0, r1, r2, u0, u1, u2, v0, v1, v2;
            RZ(c, s, f0, f1, f2, u0, u1, u2);
            RZ(c, s, n0, n1, n2, v0, v1, v2);
            /* E0 by its kind, then f and n + p x f in the parent's frame (a sign flip of
             * a moved entry becomes a subtraction) */
            switch (kind) {
            case FFWD_KIND_I:
                TO_PARENT(p, u0, u1, u2, v0, v1, v2);
                break;
            case FFWD_KIND_P90:
                TO_PARENT(p, u0, -u2, u1, v0, -v2, v1);
                break;
            case FFWD_KIND_M90:
                TO_PARENT(p, u0, u2, -u1, v0, v2, -v1);
                break;
            case FFWD_KIND_RX:
                RXM(K, u0, u1, u2, e0, e1, e2);
                RXM(K, v0, v1, v2, r0, r1, r2);
                TO_PARENT(p, e0, e1, e2, r0, r1, r2);
                break;
            default:
                GENM(K, u0, u1, u2, e0, e1, e2);
                GENM(K, v0, v1, v2, r0, r1, r2);
                TO_PARENT(p, e0, e1, e2, r0, r1, r2);
                break;
            }
            if (par != (int32_t)i - 1) {
                /* a parent further down (a tree): into its own force */
                ffwd_real *P = ids + par;
                P[IE(9)] += cf0; P[IE(10)] += cf1; P[IE(11)] += cf2;
                P[IE(12)] += cn0; P[IE(13)] += cn1; P[IE(14)] += cn2;
                cf0 = cf1 = cf2 = cn0 = cn1 = cn2 = FR(0);
            }
        } else {
            cf0 = cf1 = cf2 = cn0 = cn1 = cn2 = FR(0); /* a base child hands nothing on */
        }
    }
    return acc == FR(0);
}

static PASS_INLINE int id_pass(const ffwd_model *m, ffwd_work *w, const ffwd_real *qd,
                               const ffwd_real *qdd, const ffwd_real *g, ffwd_real *tau, int drive)
{
    return rev_chain_copy(w) ? id_pass_k(m, w, qd, qdd, g, tau, drive, 1)
                             : id_pass_k(m, w, qd, qdd, g, tau, drive, 0);
}

ffwd_status ffwd_inverse_dynamics(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                                  const ffwd_real *qd, const ffwd_real *qdd, ffwd_real *tau)
{
    const ffwd_real *in[3];
    ffwd_real *out[1];
    const int shape[1] = { FFWD_SHAPE_N };
    ffwd_status st;
    /* qd and qdd are not scanned here: a non-finite qd[i] or qdd[i] makes tau[i]
     * non-finite (armature * qdd[i] and viscous * qd[i] + coulomb * qd[i] / max(band,
     * |qd[i]|) are Inf or NaN for any drive constants), which the pass reports as
     * FFWD_E_NONFINITE with tau zeroed, as the entry check would */
    if (!(qd != NULL && qdd != NULL && tau != NULL && ffwd_ready_(m, w, q, NULL, NULL) && ffwd_trig_(m, w, q))) {
        in[0] = q; in[1] = qd; in[2] = qdd; out[0] = tau;
        st = ffwd_enter_(m, w, in, 3, out, shape, 1);
        if (st != FFWD_OK)
            return st;
        (void)ffwd_trig_(m, w, q);
    }
    ffwd_tool_body_(m, w);
    if (id_pass(m, w, qd, qdd, m->gravity, tau, 1))
        return FFWD_OK;
    ffwd_zero_(tau, m->dof); /* an overflow inside: never hand out Inf or NaN */
    return FFWD_E_NONFINITE;
}

#define SUB(w, i) ((w)->scratch + FFWD_OFF_SUB + FFWD_SUB_STRIDE * (uint32_t)(i))

void ffwd_subtree_(const ffwd_model *m, ffwd_work *w)
{
    uint32_t i;
    ffwd_real M = FR(0);
    const ffwd_real *pc = NULL;
    for (i = 0; i < 4u; i++)
        w->scratch[FFWD_OFF_SUBKEY + i] = BODY_TH(w, m->tool_parent)[i];
    if (w->scratch[FFWD_OFF_CHAIN] == FR(0))
        return;
    for (i = m->dof; i-- > 0u;) {
        const ffwd_real *th = BODY_TH(w, i);
        ffwd_real *S = SUB(w, i);
        S[1] = th[1]; S[2] = th[2]; S[3] = th[3];
        if (pc != NULL) {
            S[1] += M * pc[0]; S[2] += M * pc[1]; S[3] += M * pc[2];
        }
        M += th[0];
        S[0] = M;
        pc = KONST(w, i) + FFWD_K_P;
    }
}

/* Gravity only: rotate g into each frame going out, accumulate mass and first moment
 * of each subtree coming back; tau_i = e_z . (g x h) (revolute), -M e_z . g
 * (prismatic). Needs ffwd_trig_. B(i): g at 12, (M, h) at 18 (not for a chain). */
static PASS_INLINE int gravity_pass_k(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *tau,
                                      int crev)
{
    ffwd_real acc = FR(0); /* sum of t * 0 over the torques: 0, or NaN after an Inf or NaN */
    const ffwd_real *sb = TRIG_S(w), *cb = TRIG_C(w);
    uint32_t i;
    if (w->scratch[FFWD_OFF_CHAIN] != FR(0)) {
        /* serial chain (spatial.h FFWD_OFF_CHAIN): the parent's g stays in registers
         * going out. Coming back, the subtree's mass and the constant part of its first
         * moment are the subtree constants (FFWD_OFF_SUB, payload included: kept up to
         * date by ffwd_fill_tool_body_ and ffwd_load_tool_body_); only their rotation
         * (and the slide of a prismatic joint) is left per call. Joint 0 has no parent to
         * pass its subtree to. */
        const uint32_t n = m->dof;
        const ffwd_real *K = KONST(w, 0), *S;
        ffwd_real *B = BODY(w, 0);
        ffwd_real g0, g1, g2, u0, u1, u2, c0, c1, c2, h0, h1, h2;
        g0 = m->gravity[0]; g1 = m->gravity[1]; g2 = m->gravity[2];
        for (i = 0; i < n; i++) {
            E0T(e0_kind(K), K, g0, g1, g2, u0, u1, u2);
            RZT(cb[i], sb[i], u0, u1, u2, g0, g1, g2);
            B[12] = g0; B[13] = g1;
            if (!crev)
                B[14] = g2;             /* (read by a prismatic joint only) */
            K += FFWD_K_STRIDE;
            B += FFWD_B_STRIDE;
        }
        K -= FFWD_K_STRIDE;
        B -= FFWD_B_STRIDE;
        S = SUB(w, n - 1u);
        h0 = S[1];          /* the first moment of the subtree: the last body's own, then */
        h1 = S[2];          /* the body's constant part plus its children's (c) */
        h2 = S[3];
        for (i = n - 1u; i > 0u; i--) {
            ffwd_real t;
            RZ(cb[i], sb[i], h0, h1, h2, u0, u1, u2);
            if (crev || joint_type(K) == FFWD_REVOLUTE) {
                t = B[12] * h1 - B[13] * h0;
            } else {
                /* the slide q e_z of the child's origin (frame i before E0) */
                t = -S[0] * B[14];
                u2 += S[0] * q[i];
            }
            tau[i] = t;
            acc += t * FR(0);
            E0M(e0_kind(K), K, u0, u1, u2, c0, c1, c2);
            K -= FFWD_K_STRIDE;
            B -= FFWD_B_STRIDE;
            S -= FFWD_SUB_STRIDE;
            h0 = S[1] + c0;
            h1 = S[2] + c1;
            h2 = S[3] + c2;
        }
        {
            const ffwd_real t = crev || joint_type(K) == FFWD_REVOLUTE ? B[12] * h1 - B[13] * h0
                                                                : -S[0] * B[14];
            tau[0] = t;
            acc += t * FR(0);
        }
        return acc == FR(0);
    }
    for (i = 0; i < m->dof; i++) {
        ffwd_real *B = BODY(w, i);
        const int32_t par = m->joint[i].parent;
        const ffwd_real *gp = par >= 0 ? BODY(w, par) + 12 : m->gravity;
        const ffwd_real *th = BODY_TH(w, i);
        const ffwd_real *K = KONST(w, i);
        const int kind = e0_kind(K);
        ffwd_real u0, u1, u2;
        E0T(kind, K, gp[0], gp[1], gp[2], u0, u1, u2);
        RZT(cb[i], sb[i], u0, u1, u2, B[12], B[13], B[14]);
        B[18] = th[0]; B[19] = th[1]; B[20] = th[2]; B[21] = th[3];
    }
    for (i = m->dof; i-- > 0u;) {
        const ffwd_joint *J = &m->joint[i];
        ffwd_real *B = BODY(w, i);
        const ffwd_real M = B[18], *g = B + 12, *h = B + 19;
        const int rev = J->type == FFWD_REVOLUTE;
        tau[i] = rev ? g[0] * h[1] - g[1] * h[0] : -M * g[2];
        acc += tau[i] * FR(0);
        if (J->parent >= 0) {
            const ffwd_real *K = KONST(w, i);
            const ffwd_real *p = rev ? K + FFWD_K_P : B + 9;
            ffwd_real *P = BODY(w, J->parent);
            const int kind = e0_kind(K);
            ffwd_real u0, u1, u2, t0, t1, t2;
            RZ(cb[i], sb[i], h[0], h[1], h[2], u0, u1, u2);
            E0M(kind, K, u0, u1, u2, t0, t1, t2);
            P[18] += M;
            P[19] += t0 + M * p[0];
            P[20] += t1 + M * p[1];
            P[21] += t2 + M * p[2];
        }
    }
    return acc == FR(0);
}

static PASS_INLINE int gravity_pass(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *tau)
{
    return rev_chain_copy(w) ? gravity_pass_k(m, w, q, tau, 1) : gravity_pass_k(m, w, q, tau, 0);
}

ffwd_status ffwd_gravity_torque(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *tau)
{
    const ffwd_real *in[1];
    ffwd_real *out[1];
    const int shape[1] = { FFWD_SHAPE_N };
    ffwd_status st;
    if (!(tau != NULL && ffwd_ready_(m, w, q, NULL, NULL) && ffwd_trig_(m, w, q))) {
        in[0] = q; out[0] = tau;
        st = ffwd_enter_(m, w, in, 1, out, shape, 1);
        if (st != FFWD_OK)
            return st;
        (void)ffwd_trig_(m, w, q);
    }
    ffwd_tool_body_(m, w);
    if (gravity_pass(m, w, q, tau))
        return FFWD_OK;
    ffwd_zero_(tau, m->dof); /* an overflow inside: never hand out Inf or NaN */
    return FFWD_E_NONFINITE;
}

/* out-of-line copies of the passes for ffwd_torque_parts (no drive terms) and
 * ffwd_id_pair_gravity_ (ffwd_inverse_dynamics and ffwd_gravity_torque have their own,
 * inlined) */
static FFWD_NOINLINE int id_pass_call(const ffwd_model *m, ffwd_work *w, const ffwd_real *qd,
                                      const ffwd_real *qdd, const ffwd_real *g, ffwd_real *tau)
{
    return id_pass(m, w, qd, qdd, g, tau, 0);
}

static FFWD_NOINLINE int gravity_pass_call(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *tau)
{
    return gravity_pass(m, w, q, tau);
}

static FFWD_NOINLINE int id_pass_drive(const ffwd_model *m, ffwd_work *w, const ffwd_real *qd,
                                       const ffwd_real *qdd, ffwd_real *tau)
{
    return id_pass(m, w, qd, qdd, m->gravity, tau, 1);
}

/* Two inverse dynamics and the gravity torque at one q (spatial.h): one sin/cos of q
 * for the three; each result bit for bit the public call's. */
ffwd_status ffwd_id_pair_gravity_(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                                  const ffwd_real *qd1, const ffwd_real *qdd1, ffwd_real *tau1,
                                  const ffwd_real *qd2, const ffwd_real *qdd2, ffwd_real *tau2,
                                  ffwd_real *grav)
{
    ffwd_status st;
    int ok;
    if (!(qd1 != NULL && qdd1 != NULL && tau1 != NULL && qd2 != NULL && qdd2 != NULL && tau2 != NULL
          && grav != NULL && ffwd_ready_(m, w, q, NULL, NULL) && ffwd_trig_(m, w, q))) {
        /* the public calls find and report the reason, outputs zeroed */
        st = ffwd_inverse_dynamics(m, w, q, qd1, qdd1, tau1);
        if (st == FFWD_OK)
            st = ffwd_inverse_dynamics(m, w, q, qd2, qdd2, tau2);
        if (st == FFWD_OK)
            st = ffwd_gravity_torque(m, w, q, grav);
        return st;
    }
    ffwd_tool_body_(m, w);
    ok = id_pass_drive(m, w, qd1, qdd1, tau1);
    ok &= id_pass_drive(m, w, qd2, qdd2, tau2);
    ok &= gravity_pass_call(m, w, q, grav);
    if (ok)
        return FFWD_OK;
    ffwd_zero_(tau1, m->dof); /* an overflow inside: never hand out Inf or NaN */
    ffwd_zero_(tau2, m->dof);
    ffwd_zero_(grav, m->dof);
    return FFWD_E_NONFINITE;
}

ffwd_status ffwd_torque_parts(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                              const ffwd_real *qd, const ffwd_real *qdd, ffwd_real *inertial,
                              ffwd_real *velocity, ffwd_real *gravity, ffwd_real *friction)
{
    const ffwd_real zero3[3] = { 0, 0, 0 };
    const ffwd_real *in[3];
    ffwd_real *out[4];
    const int shape[4] = { FFWD_SHAPE_N, FFWD_SHAPE_N, FFWD_SHAPE_N, FFWD_SHAPE_N };
    ffwd_real *zn;
    ffwd_status st;
    uint32_t i;
    if (!(qd != NULL && qdd != NULL && inertial != NULL && velocity != NULL && gravity != NULL && friction != NULL
          && ffwd_ready_(m, w, q, qd, qdd) && ffwd_trig_(m, w, q))) {
        in[0] = q; in[1] = qd; in[2] = qdd;
        out[0] = inertial; out[1] = velocity; out[2] = gravity; out[3] = friction;
        st = ffwd_enter_(m, w, in, 3, out, shape, 4);
        if (st != FFWD_OK)
            return st;
        (void)ffwd_trig_(m, w, q);
    }
    ffwd_tool_body_(m, w);
    zn = TRIG_ZERO(w);  /* dof zeros (the row of zeros, spatial.h FFWD_OFF_TRIG) */
    ffwd_zero_(zn, m->dof);
    (void)id_pass_call(m, w, zn, qdd, zero3, inertial);
    (void)id_pass_call(m, w, qd, zn, zero3, velocity);
    (void)gravity_pass_call(m, w, q, gravity);
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
    ffwd_status st;
    uint32_t i, n, k;
    if (!(M != NULL && ffwd_ready_(m, w, q, NULL, NULL) && ffwd_transforms_(m, w, q))) {
        in[0] = q; out[0] = M;
        st = ffwd_enter_(m, w, in, 1, out, shape, 1);
        if (st != FFWD_OK)
            return st;
        (void)ffwd_transforms_(m, w, q);
    }
    n = m->dof;
    ffwd_tool_body_(m, w);
    ffwd_zero_(M, n * n);
    for (i = 0; i < n; i++) {
        const ffwd_real *th = BODY_TH(w, i);
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

static FFWD_NOINLINE void skew(const ffwd_real *p, ffwd_real *X)
{
    X[0] = FR(0); X[1] = -p[2]; X[2] = p[1];
    X[3] = p[2]; X[4] = FR(0); X[5] = -p[0];
    X[6] = -p[1]; X[7] = p[0]; X[8] = FR(0);
}

/* O = A B (3x3), one copy of the code for the articulated-body passes */
static FFWD_NOINLINE void mm3(const ffwd_real *A, const ffwd_real *B, ffwd_real *O)
{
    m3_mm(A, B, O);
}

/* O = R A R^T */
static FFWD_NOINLINE void rot_sandwich(const ffwd_real *R, const ffwd_real *A, ffwd_real *O)
{
    ffwd_real T[9];
    int i, j;
    mm3(R, A, T);
    for (i = 0; i < 3; i++)
        for (j = 0; j < 3; j++)
            O[3 * i + j] = T[3 * i] * R[3 * j] + T[3 * i + 1] * R[3 * j + 1] + T[3 * i + 2] * R[3 * j + 2];
}

/* acc += X^T Ia X for the 6x6 block matrix Ia = [A B; B^T C] given in the child frame;
 * T: 63 reals of scratch */
static void aba_add_to_parent(const ffwd_real *R, const ffwd_real *p, const ffwd_real *Ia, ffwd_real *acc,
                              ffwd_real *T)
{
    ffwd_real *A = T, *Bm = T + 9, *C = T + 18, *px = T + 27, *T1 = T + 36, *T2 = T + 45, *Bt = T + 54;
    int i, j;
    rot_sandwich(R, Ia + ABA_A, A);
    rot_sandwich(R, Ia + ABA_B, Bm);
    rot_sandwich(R, Ia + ABA_C, C);
    skew(p, px);
    /* A'' = A - B px + px B^T - px C px ;  B'' = B + px C ;  C'' = C */
    for (i = 0; i < 3; i++)
        for (j = 0; j < 3; j++)
            Bt[3 * i + j] = Bm[3 * j + i];
    mm3(px, C, T1);          /* px C */
    mm3(T1, px, T2);         /* px C px */
    for (i = 0; i < 9; i++) {
        acc[ABA_C + i] += C[i];
        acc[ABA_B + i] += Bm[i] + T1[i];
        A[i] -= T2[i];
    }
    mm3(Bm, px, T1);
    mm3(px, Bt, T2);
    for (i = 0; i < 9; i++)
        acc[ABA_A + i] += A[i] - T1[i] + T2[i];
}

/* o = Ia x for the block matrix */
static FFWD_NOINLINE void aba_apply(const ffwd_real *Ia, const ffwd_real *x, ffwd_real *o)
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
    ffwd_status st;
    uint32_t i, n;
    int k, ok = 1;
    if (!(qd != NULL && tau != NULL && qdd != NULL && ffwd_ready_(m, w, q, qd, tau) && ffwd_transforms_(m, w, q))) {
        in[0] = q; in[1] = qd; in[2] = tau; out[0] = qdd;
        st = ffwd_enter_(m, w, in, 3, out, shape, 1);
        if (st != FFWD_OK)
            return st;
        (void)ffwd_transforms_(m, w, q);
    }
    n = m->dof;
    ffwd_tool_body_(m, w);
    /* pass 1: velocities, bias accelerations c = v x S qd, rigid inertias, bias forces */
    {
        ffwd_real zg[3] = { 0, 0, 0 };
        ffwd_pass_va_(m, w, qd, NULL, zg);
    }
    for (i = 0; i < n; i++) {
        const ffwd_joint *J = &m->joint[i];
        ffwd_real *B = BODY(w, i), *X = AUX(w, i), Iv[6];
        const ffwd_real *th = BODY_TH(w, i), *vp;
        ffwd_real vq[6];
        /* c = a from pass_va (qdd = 0, no gravity) minus the parent's part X a_parent */
        if (J->parent >= 0) {
            vp = BODY(w, J->parent) + 18;
            xm(B, B + 9, vp, vq);
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
        ffwd_real *B = BODY(w, i), *X = AUX(w, i), *Uo = X + ABA_U, *Ia = w->scratch + FFWD_OFF_X, pa[6], t[6];
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
            aba_add_to_parent(B, B + 9, Ia, P, Ia + 27);
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
        xm(B, B + 9, ap, a);
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
