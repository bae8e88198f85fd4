/* test_payload_single.c - payload swap built with FFWD_NO_ATOMICS (single-threaded):
 * the box starts with the model's payload, ffwd_payload_set changes what every call of
 * a work bound to the box sees, mass 0 removes it, bad payloads are refused and leave
 * the active one in place, and the result matches a model with the payload built in.
 * The payload swap is compiled here, single-threaded, from csrc/payload.c; the rest of
 * the core comes from the library (whose payload.o is then not linked). */
#define FFWD_NO_ATOMICS 1
#include "test_util.h"
#include "payload.c"

#define N 5u

int main(void)
{
    ffwd_model m, m2;
    static ffwd_work w, w2;
    ffwd_payload_box box;
    ffwd_real q[N], qd[N], qdd[N], t0[N], t1[N], t2[N], g1[N], g2[N];
    const ffwd_real com[3] = { (ffwd_real)0.02, (ffwd_real)-0.01, (ffwd_real)0.08 };
    const ffwd_real I[6] = { (ffwd_real)0.01, (ffwd_real)0.001, (ffwd_real)-0.002, (ffwd_real)0.012, (ffwd_real)0.0005,
                             (ffwd_real)0.009 };
    const ffwd_real Ibad[6] = { (ffwd_real)0.01, 0, 0, (ffwd_real)0.01, 0, (ffwd_real)0.05 };
    uint32_t i;
    rand_model(&m, N, 0, 1);
    CHECK(ffwd_work_init(&w, &m) == FFWD_OK, "model rejected");
    CHECK(ffwd_payload_init(&box, &m) == FFWD_OK, "payload init");
    CHECK(ffwd_work_use_payload(&w, &box) == FFWD_OK, "use payload");
    for (i = 0; i < N; i++) { q[i] = (ffwd_real)srand1(2); qd[i] = (ffwd_real)srand1(1); qdd[i] = (ffwd_real)srand1(3); }
    CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, t0) == FFWD_OK, "id");
    CHECK(ffwd_payload_set(&box, &m, (ffwd_real)2.5, com, I) == FFWD_OK, "set");
    CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, t1) == FFWD_OK, "id with payload");
    CHECK(max_diff(t0, t1, N) > 1e-3, "payload changed nothing");
    /* same payload through the model's default payload field: build its 10 parameters
     * in the tool frame and move them to the joint frame by hand */
    {
        double c[3], Ic[9], Rt[9], p[3], cj[3], Ij[9], T[9];
        int r, k2, l;
        for (r = 0; r < 3; r++) { c[r] = com[r]; p[r] = m.tool_pos[r]; }
        for (r = 0; r < 9; r++) Rt[r] = m.tool_rot[r];
        Ic[0] = I[0]; Ic[1] = I[1]; Ic[2] = I[2]; Ic[3] = I[1]; Ic[4] = I[3]; Ic[5] = I[4];
        Ic[6] = I[2]; Ic[7] = I[4]; Ic[8] = I[5];
        for (r = 0; r < 3; r++) cj[r] = p[r] + Rt[3 * r] * c[0] + Rt[3 * r + 1] * c[1] + Rt[3 * r + 2] * c[2];
        for (r = 0; r < 3; r++)
            for (k2 = 0; k2 < 3; k2++) {
                T[3 * r + k2] = 0;
                for (l = 0; l < 3; l++) T[3 * r + k2] += Rt[3 * r + l] * Ic[3 * l + k2];
            }
        for (r = 0; r < 3; r++)
            for (k2 = 0; k2 < 3; k2++) {
                Ij[3 * r + k2] = 0;
                for (l = 0; l < 3; l++) Ij[3 * r + k2] += T[3 * r + l] * Rt[3 * k2 + l];
            }
        m2 = m;
        params_from(2.5, cj, Ij, m2.payload);
    }
    CHECK(ffwd_work_init(&w2, &m2) == FFWD_OK, "model with payload rejected");
    CHECK(ffwd_inverse_dynamics(&m2, &w2, q, qd, qdd, t2) == FFWD_OK, "id2");
    CHECK(max_diff(t1, t2, N) < TOL_REL * 100 * (1 + max_abs(t1, N)), "box payload vs built-in payload: %g", max_diff(t1, t2, N));
    /* the same for gravity (its chain path keeps subtree constants that the box changes) */
    CHECK(ffwd_gravity_torque(&m, &w, q, g1) == FFWD_OK, "gravity with payload");
    CHECK(ffwd_gravity_torque(&m2, &w2, q, g2) == FFWD_OK, "gravity2");
    CHECK(max_diff(g1, g2, N) < TOL_REL * 100 * (1 + max_abs(g1, N)), "gravity: box payload vs built-in payload: %g", max_diff(g1, g2, N));
    /* refused payloads leave the active one */
    CHECK(ffwd_payload_set(&box, &m, (ffwd_real)-1, com, I) == FFWD_E_ARG, "negative mass accepted");
    CHECK(ffwd_payload_set(&box, &m, (ffwd_real)1, com, Ibad) == FFWD_E_ARG, "triangle-violating inertia accepted");
    {
        ffwd_real nanc[3] = { 0, (ffwd_real)NAN, 0 };
        CHECK(ffwd_payload_set(&box, &m, (ffwd_real)1, nanc, I) == FFWD_E_NONFINITE, "NaN com accepted");
    }
    CHECK(ffwd_payload_set(NULL, &m, (ffwd_real)1, com, I) == FFWD_E_ARG, "null box");
    CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, t2) == FFWD_OK && memcmp(t1, t2, sizeof t1) == 0, "refused set changed the payload");
    /* mass 0 removes it; back to the model default with NULL */
    CHECK(ffwd_payload_set(&box, &m, 0, com, I) == FFWD_OK, "remove");
    CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, t2) == FFWD_OK && max_diff(t0, t2, N) < TOL_REL * 10 * (1 + max_abs(t0, N)), "mass 0 did not remove");
    CHECK(ffwd_payload_set(&box, &m, (ffwd_real)2.5, com, I) == FFWD_OK, "set again");
    CHECK(ffwd_work_use_payload(&w, NULL) == FFWD_OK, "unbind box");
    CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, t2) == FFWD_OK && memcmp(t0, t2, sizeof t0) == 0, "NULL box not the default");
    return finish("test_payload_single");
}
