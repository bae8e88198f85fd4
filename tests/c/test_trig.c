/* test_trig.c - the core's bounded-time sin/cos against the platform libm (the reference),
 * in ulps of the reference value, over |x| <= 1e4 rad: uniform random points, every
 * representable neighbourhood of k*pi/2 (the hard cases of the range reduction), tiny
 * arguments and signed zeros. Limit: 2 ulp. Prints the worst case and the point count. */
#include "test_util.h"

#define TEST_PI 3.14159265358979323846

void ffwd_sincos_(ffwd_real x, ffwd_real *s, ffwd_real *c);

static double worst = 0, worst_x = 0;
static long points = 0;

/* spacing of ffwd_real numbers at |y| */
static double ulp_of(double y)
{
    ffwd_real a = (ffwd_real)fabs(y), b;
#ifdef FFWD_SINGLE
    if (a < 1.1754944e-38f) return 1.4e-45;
    b = nextafterf(a, INFINITY);
    if (b - a == 0 || (double)a > fabs(y)) return (double)(a - nextafterf(a, 0));
#else
    if (a < 2.2250738585072014e-308) return 4.9406564584124654e-324;
    b = nextafter(a, INFINITY);
    if ((double)a > fabs(y)) return (double)(a - nextafter(a, 0));
#endif
    return (double)(b - a);
}

static void one(ffwd_real x)
{
    ffwd_real s, c;
    double rs = sin((double)x), rc = cos((double)x), es, ec;
#if !defined(FFWD_SINGLE)
    /* the double reference is libm itself (up to its own rounding) */
#endif
    ffwd_sincos_(x, &s, &c);
    es = fabs((double)s - rs) / ulp_of(rs);
    ec = fabs((double)c - rc) / ulp_of(rc);
    if (es > worst) { worst = es; worst_x = (double)x; }
    if (ec > worst) { worst = ec; worst_x = (double)x; }
    points++;
}

int main(int argc, char **argv)
{
    long i, n = argc > 1 ? atol(argv[1]) : 4000000L;
    long k, kmax = (long)(1e4 / (TEST_PI / 2));
    int d;
    for (i = 0; i < n; i++)
        one((ffwd_real)srand1(1e4));
    for (i = 0; i < n / 4; i++)
        one((ffwd_real)srand1(4.0));
    for (k = -kmax; k <= kmax; k++) {
        ffwd_real x = (ffwd_real)((double)k * (TEST_PI / 2));
        ffwd_real up = x, dn = x;
        one(x);
        for (d = 0; d < 8; d++) {
#ifdef FFWD_SINGLE
            up = nextafterf(up, INFINITY); dn = nextafterf(dn, -INFINITY);
#else
            up = nextafter(up, INFINITY); dn = nextafter(dn, -INFINITY);
#endif
            one(up); one(dn);
        }
    }
    {
        const double tiny[] = { 0.0, -0.0, 1e-300, -1e-300, 1e-30, 1e-10, -3e-8, 1e-4, 0.5, -0.785398, 0.785399,
                                2.356194, 1e4, -1e4, 9999.99 };
        for (i = 0; i < (long)(sizeof tiny / sizeof tiny[0]); i++)
            one((ffwd_real)tiny[i]);
    }
    {
        ffwd_real s, c;
        ffwd_sincos_((ffwd_real)-0.0, &s, &c);
        CHECK(s == 0 && c == 1, "sincos(-0)");
    }
    CHECK(worst <= 2.0, "max error %.3f ulp at x = %.17g", worst, worst_x);
    printf("test_trig: %ld points, max error %.3f ulp at x = %.17g (%s)\n", points, worst, worst_x,
           sizeof(ffwd_real) == 4 ? "float" : "double");
    return finish("test_trig");
}
