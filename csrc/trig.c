/* trig.c - sin and cos in bounded time without libm.
 *
 * x = k*pi/2 + r with k = round(x * 2/pi). pi/2 is split into four parts whose
 * products with k are exact (three short parts) or nearly so (the last), so that
 * r is obtained as an unevaluated sum rh + rl to about twice the working precision
 * for |x| up to about 1e5 (double) / 1e4 (float) (renormalised with a fast two-sum:
 * the low part is not larger than the high part). sin and cos of r on [-pi/4, pi/4]
 * are polynomials (fit error below a tenth of an ulp), the first-order effect of
 * rl is added, and the quadrant k mod 4 selects sign and function by bit masks:
 * there is no data-dependent branch or loop. Accuracy is measured by
 * tests/c/test_trig.c against the platform's libm.
 */
#include "spatial.h"

#ifdef FFWD_SINGLE
/* pi/2 = P1 + P2 + P3 + P4 (11, 11, 11, 24 significant bits) */
#define P1 1.5703125f
#define P2 0.0004837512969970703f
#define P3 7.549533620476723e-08f
#define P4 2.5633440682570896e-12f
#define TWO_OVER_PI 0.63661977236758134f
#define ROUND_MAGIC 12582912.0f /* 1.5 * 2^23 */
#else
/* pi/2 = P1 + P2 + P3 + P4 (33, 33, 33, 53 significant bits) */
#define P1 1.5707963267341256
#define P2 6.077100506303966e-11
#define P3 2.0222662487111665e-21
#define P4 8.4784276603689e-32
#define TWO_OVER_PI 0.6366197723675814
#define ROUND_MAGIC 6755399441055744.0 /* 1.5 * 2^52 */
#endif

/* sin(r) - r = r^3 * S(z), cos(r) - (1 - z/2) = z^2 * C(z), z = r^2 <= (pi/4)^2.
 * S and C are Chebyshev fits (near-minimax) of those functions computed with mpmath
 * (chebyfit, 40 digits). Fit error: double S 2.0e-17, C 1.3e-18; float S 2.0e-8,
 * C 2.0e-9, i.e. well below half an ulp of the result. */
static ffwd_real sin_tail(ffwd_real z)
{
#ifdef FFWD_SINGLE
    return -0.1666666466231438f + z * (0.008332748270629749f + z * -0.00019587890880412386f);
#else
    return -0.16666666666666666 + z * (0.008333333333330948 + z * (-0.00019841269836758574
        + z * (2.755731610255244e-06 + z * (-2.5051131845003624e-08 + z * 1.5918129294866608e-10))));
#endif
}

static ffwd_real cos_tail(ffwd_real z)
{
#ifdef FFWD_SINGLE
    return 0.04166666465950221f + z * (-0.0013888303035894866f + z * 2.4547942085071572e-05f);
#else
    return 0.041666666666666664 + z * (-0.0013888888888887398 + z * (2.480158729876569e-05
        + z * (-2.7557317271729793e-07 + z * (2.08761462684032e-09 + z * -1.1382632425521717e-11))));
#endif
}

/* sin and cos of the angles x[0], x[1] (LANES lanes) into s, c: written lane by lane so
 * that the compiler can keep both lanes in one vector register: k is the rounded value
 * less the magic constant and its quadrant is read from the bits of the rounded value (no
 * float-to-integer conversion, so no undefined behaviour for huge x), and the quadrant is
 * applied with bit masks (swap s/c, flip the sign bit), no table, no branch. */
#define LANES 2
static inline void sincos_lanes(const ffwd_real *xv, ffwd_real *s, ffwd_real *c)
{
    const ffwd_bits_ one = 1u, sign = one << (8u * sizeof(ffwd_real) - 1u);
    const unsigned top1 = 8u * (unsigned)sizeof(ffwd_real) - 2u;
    ffwd_real kv[LANES], nk[LANES], t1[LANES], hi[LANES], bb[LANES], e1[LANES];
    ffwd_real lo[LANES], rh[LANES], rl[LANES], z[LANES], sr[LANES], cr[LANES];
    ffwd_real hz[LANES], wv[LANES];
    ffwd_bits_ b[LANES], us[LANES], uc[LANES], sw[LANES], os[LANES], oc[LANES];
    int l;
    for (l = 0; l < LANES; l++)
        kv[l] = xv[l] * TWO_OVER_PI + ROUND_MAGIC;
    memcpy(b, kv, sizeof b);
    for (l = 0; l < LANES; l++)
        nk[l] = ROUND_MAGIC - kv[l]; /* -k, exact: kv is ROUND_MAGIC + k */
    for (l = 0; l < LANES; l++) {
        /* nk = -k: each product once, no negation */
        t1[l] = xv[l] + nk[l] * P1;
        hi[l] = t1[l] + nk[l] * P2;
        bb[l] = hi[l] - t1[l];
        e1[l] = (t1[l] - (hi[l] - bb[l])) + (nk[l] * P2 - bb[l]);
#ifdef FFWD_SINGLE
        {
            ffwd_real h2 = hi[l] + nk[l] * P3, b2 = h2 - hi[l];
            ffwd_real e2 = (hi[l] - (h2 - b2)) + (nk[l] * P3 - b2);
            lo[l] = (e1[l] + e2) + nk[l] * P4;
            hi[l] = h2;
        }
#else
        lo[l] = (e1[l] + nk[l] * P3) + nk[l] * P4;
#endif
        rh[l] = hi[l] + lo[l];
        rl[l] = lo[l] - (rh[l] - hi[l]); /* fast two-sum: |lo| <= |hi| up to rounding */
        z[l] = rh[l] * rh[l];
        sr[l] = rh[l] + (rh[l] * z[l] * sin_tail(z[l]) + rl[l] * (FR(1) - FR(0.5) * z[l]));
        hz[l] = FR(0.5) * z[l];
        wv[l] = FR(1) - hz[l];
        cr[l] = wv[l] + ((((FR(1) - wv[l]) - hz[l]) + z[l] * z[l] * cos_tail(z[l])) - rh[l] * rl[l]);
    }
    memcpy(us, sr, sizeof us);
    memcpy(uc, cr, sizeof uc);
    for (l = 0; l < LANES; l++) {
        /* k odd: swap sin and cos (both xor their difference); bit 1 of k (of k + 1
         * for cos) shifted into the sign bit */
        sw[l] = (us[l] ^ uc[l]) & ((ffwd_bits_)0 - (b[l] & one));
        os[l] = (us[l] ^ sw[l]) ^ ((b[l] << top1) & sign);
        oc[l] = (uc[l] ^ sw[l]) ^ (((b[l] + one) << top1) & sign);
    }
    memcpy(s, os, sizeof os);
    memcpy(c, oc, sizeof oc);
}

ffwd_real ffwd_sincos_joints_(const ffwd_real *restrict q, const ffwd_real *restrict rv,
                              const ffwd_real *restrict al, ffwd_real *restrict s,
                              ffwd_real *restrict c, uint32_t n)
{
    ffwd_real ss[LANES] = { 0 };
    uint32_t k;
    for (k = 0; k < n; k += (uint32_t)LANES) {
        /* the second lane of an odd last pair repeats the last joint (a select, no
         * branch), so that nothing past q[n - 1] is read */
        const uint32_t k1 = k + 1u < n ? k + 1u : k;
        ffwd_real qv[LANES], xv[LANES];
        int l;
        qv[0] = q[k];
        qv[1] = q[k1];
        xv[0] = rv[k] * qv[0] + al[k];
        xv[1] = rv[k1] * qv[1] + al[k1];
        for (l = 0; l < LANES; l++)
            ss[l] += qv[l] * qv[l];
        sincos_lanes(xv, s + k, c + k);
    }
    return ss[0] + ss[1];
}

/* One value: x * 1 + (-0) is x exactly (a zero keeps its sign); the second lane is the
 * same value (one copy of the code). */
void ffwd_sincos_(ffwd_real x, ffwd_real *s, ffwd_real *c)
{
    const ffwd_real one = FR(1), mzero = -FR(0);
    ffwd_real ss[LANES], cs[LANES];
    (void)ffwd_sincos_joints_(&x, &one, &mzero, ss, cs, 1u);
    *s = ss[0];
    *c = cs[0];
}
