/* model_build.h - the geometry shared by the C programs that build random models
 * (csrc/programs/ffwd_bench.c, fuzz/fuzz_api.c): a roll-pitch-yaw rotation and a link's
 * packed inertia from its mass, centre of mass and principal moments. Test support, not
 * part of the core (it uses libm). */
#ifndef FFWD_MODEL_BUILD_H
#define FFWD_MODEL_BUILD_H
#include <math.h>

#include "ffwd.h"

/* R = Rz(y) Ry(p) Rx(r), row-major. */
static void mb_rpy(double r, double p, double y, double R[9])
{
    double cr = cos(r), sr = sin(r), cp = cos(p), sp = sin(p), cy = cos(y), sy = sin(y);
    R[0] = cy * cp; R[1] = cy * sp * sr - sy * cr; R[2] = cy * sp * cr + sy * sr;
    R[3] = sy * cp; R[4] = sy * sp * sr + cy * cr; R[5] = sy * sp * cr - cy * sr;
    R[6] = -sp;     R[7] = cp * sr;                R[8] = cp * cr;
}

/* j->inertia (m, m c, the inertia about the joint origin: xx xy xz yy yz zz) of a link of
 * the given mass with centre of mass c and principal moments d about it, in axes Q. */
static void mb_link_inertia(ffwd_joint *j, double mass, const double c[3], const double d[3],
                            const double Q[9])
{
    double cc = c[0] * c[0] + c[1] * c[1] + c[2] * c[2];
    double I[9];
    for (int a = 0; a < 3; ++a)
        for (int b = 0; b < 3; ++b)
            I[3 * a + b] = Q[3 * a] * d[0] * Q[3 * b] + Q[3 * a + 1] * d[1] * Q[3 * b + 1]
                         + Q[3 * a + 2] * d[2] * Q[3 * b + 2]
                         + mass * ((a == b ? cc : 0.0) - c[a] * c[b]);
    j->inertia[0] = (ffwd_real)mass;
    for (int k = 0; k < 3; ++k) j->inertia[1 + k] = (ffwd_real)(mass * c[k]);
    j->inertia[4] = (ffwd_real)I[0];
    j->inertia[5] = (ffwd_real)I[1];
    j->inertia[6] = (ffwd_real)I[2];
    j->inertia[7] = (ffwd_real)I[4];
    j->inertia[8] = (ffwd_real)I[5];
    j->inertia[9] = (ffwd_real)I[8];
}

#endif /* FFWD_MODEL_BUILD_H */
