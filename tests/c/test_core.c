/* test_core.c - C core: status strings, argument checks, model rules, dynamics identities,
 * regressor, Jacobian. Exit 0 when every check passes. */
#include "test_util.h"

#define N6 6u

static void test_status(void)
{
    int s;
    for (s = 0; s <= 6; s++) {
        const char *t = ffwd_status_str((ffwd_status)s);
        CHECK(t != NULL && strlen(t) > 1 && strcmp(t, "unknown status") != 0, "status %d has no name", s);
    }
    CHECK(strcmp(ffwd_status_str((ffwd_status)99), "unknown status") == 0, "unknown code");
}

/* single pendulum: revolute about z, mass m with its COM at distance l along x, gravity
 * along +x ("down" is +x, so q = 0 hangs): holding torque m g l sin(q)
 * (common practice, no source). */
static void pendulum_model(ffwd_model *m, double mass, double l, double Izz_c)
{
    double c[3] = { l, 0, 0 }, Ic[9] = { 1e-4, 0, 0, 0, Izz_c, 0, 0, 0, Izz_c };
    memset(m, 0, sizeof *m);
    m->dof = 1;
    m->gravity[0] = (ffwd_real)9.81;
    m->joint[0].type = FFWD_REVOLUTE;
    m->joint[0].parent = -1;
    m->joint[0].rot[0] = m->joint[0].rot[4] = m->joint[0].rot[8] = 1;
    m->joint[0].axis[2] = 1;
    m->joint[0].coulomb_band = (ffwd_real)0.01;
    params_from(mass, c, Ic, m->joint[0].inertia);
    m->tool_parent = 0;
    m->tool_rot[0] = m->tool_rot[4] = m->tool_rot[8] = 1;
    m->tool_pos[0] = (ffwd_real)l;
}

static void test_pendulum(void)
{
    ffwd_model m;
    static ffwd_work w;
    double mass = 2.0, l = 0.5, Izz = 0.01, qs[5] = { 0.0, 0.3, 1.2, -2.5, 3.0 };
    int i;
    pendulum_model(&m, mass, l, Izz);
    CHECK(ffwd_work_init(&w, &m) == FFWD_OK, "pendulum model rejected");
    for (i = 0; i < 5; i++) {
        ffwd_real q = (ffwd_real)qs[i], qd = (ffwd_real)0.7, qdd = (ffwd_real)1.5, tau, g, T[16];
        double expect_g = mass * 9.81 * l * sin(qs[i]);
        /* tau = (Izz_c + m l^2) qdd + m g l sin q (common practice, no source) */
        double expect_tau = (Izz + mass * l * l) * 1.5 + expect_g;
        CHECK(ffwd_gravity_torque(&m, &w, &q, &g) == FFWD_OK, "gravity status");
        CHECK(fabs(g - expect_g) <= 1e-6 * (1 + fabs(expect_g)) + TOL_REL * 10, "pendulum gravity %g vs %g", (double)g, expect_g);
        CHECK(ffwd_inverse_dynamics(&m, &w, &q, &qd, &qdd, &tau) == FFWD_OK, "id status");
        CHECK(fabs(tau - expect_tau) <= 1e-6 * (1 + fabs(expect_tau)) + TOL_REL * 10, "pendulum tau %g vs %g", (double)tau, expect_tau);
        /* tool at the mass: (l cos q, l sin q, 0) */
        CHECK(ffwd_tool_pose(&m, &w, &q, T) == FFWD_OK, "pose status");
        CHECK(fabs(T[3] - l * cos(qs[i])) < 1e-6 && fabs(T[7] - l * sin(qs[i])) < 1e-6 && T[15] == 1,
              "pendulum tool position");
    }
}

/* planar two-link arm, point masses at the link ends, joints about z, gravity -y:
 * closed form from the standard two-link derivation (robotics textbooks, e.g. Spong,
 * Hutchinson & Vidyasagar, "Robot Modeling and Control", two-link planar arm; from memory). */
static void test_two_link(void)
{
    ffwd_model m;
    static ffwd_work w;
    double m1 = 1.5, m2 = 0.8, l1 = 0.6, l2 = 0.4, g = 9.81;
    double c1[3] = { 0.6, 0, 0 }, c2[3] = { 0.4, 0, 0 }, Ic[9] = { 1e-9, 0, 0, 0, 1e-9, 0, 0, 0, 1e-9 };
    ffwd_real q[2] = { (ffwd_real)0.4, (ffwd_real)-0.9 }, qd[2] = { (ffwd_real)1.1, (ffwd_real)-0.6 };
    ffwd_real qdd[2] = { (ffwd_real)0.3, (ffwd_real)2.0 }, tau[2];
    double s2, c2q, h, t1, t2, a1 = 0.4, a2 = -0.9, d1 = 1.1, d2 = -0.6, dd1 = 0.3, dd2 = 2.0;
    int k;
    memset(&m, 0, sizeof m);
    m.dof = 2;
    m.gravity[1] = (ffwd_real)-g;
    for (k = 0; k < 2; k++) {
        ffwd_joint *J = &m.joint[k];
        J->type = FFWD_REVOLUTE;
        J->parent = k - 1;
        J->rot[0] = J->rot[4] = J->rot[8] = 1;
        J->axis[2] = 1;
        J->coulomb_band = 1;
    }
    m.joint[1].pos[0] = (ffwd_real)l1;
    params_from(m1, c1, Ic, m.joint[0].inertia);
    params_from(m2, c2, Ic, m.joint[1].inertia);
    m.tool_parent = 1;
    m.tool_rot[0] = m.tool_rot[4] = m.tool_rot[8] = 1;
    CHECK(ffwd_work_init(&w, &m) == FFWD_OK, "two-link model rejected");
    CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, tau) == FFWD_OK, "two-link id");
    s2 = sin(a2); c2q = cos(a2);
    h = m2 * l1 * l2 * s2;
    t1 = (m1 * l1 * l1 + m2 * (l1 * l1 + l2 * l2 + 2 * l1 * l2 * c2q)) * dd1
       + (m2 * (l2 * l2 + l1 * l2 * c2q)) * dd2 - h * (2 * d1 * d2 + d2 * d2)
       + (m1 + m2) * g * l1 * cos(a1) + m2 * g * l2 * cos(a1 + a2);
    t2 = (m2 * (l2 * l2 + l1 * l2 * c2q)) * dd1 + m2 * l2 * l2 * dd2 + h * d1 * d1
       + m2 * g * l2 * cos(a1 + a2);
    CHECK(fabs(tau[0] - t1) < 1e-5 * (1 + fabs(t1)) && fabs(tau[1] - t2) < 1e-5 * (1 + fabs(t2)),
          "two-link: %g %g vs %g %g", (double)tau[0], (double)tau[1], t1, t2);
}

static void test_args(void)
{
    ffwd_model m;
    static ffwd_work w, w2;
    ffwd_real q[N6], qd[N6], qdd[N6], tau[N6], M[N6 * N6], T[16], J[6 * N6], Y[13 * N6 * N6];
    ffwd_real p1[N6], p2[N6], p3[N6], p4[N6];
    uint32_t i, a, b, c, d;
    rand_model(&m, N6, 0, 1);
    CHECK(ffwd_work_init(&w, &m) == FFWD_OK, "random model rejected");
    for (i = 0; i < N6; i++) { q[i] = (ffwd_real)0.1; qd[i] = (ffwd_real)0.2; qdd[i] = (ffwd_real)0.3; }
    /* null pointers: E_ARG and non-null outputs zeroed */
    for (i = 0; i < N6; i++) tau[i] = 7;
    CHECK(ffwd_inverse_dynamics(&m, &w, NULL, qd, qdd, tau) == FFWD_E_ARG && all_zero(tau, N6), "null q");
    for (i = 0; i < N6; i++) tau[i] = 7;
    CHECK(ffwd_inverse_dynamics(&m, NULL, q, qd, qdd, tau) == FFWD_E_ARG && all_zero(tau, N6), "null w");
    CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, NULL) == FFWD_E_ARG, "null tau");
    CHECK(ffwd_inverse_dynamics(NULL, &w, q, qd, qdd, tau) == FFWD_E_ARG, "null model");
    CHECK(ffwd_gravity_torque(&m, &w, NULL, tau) == FFWD_E_ARG && all_zero(tau, N6), "gravity null");
    CHECK(ffwd_mass_matrix(&m, &w, NULL, M) == FFWD_E_ARG && all_zero(M, N6 * N6), "mass null");
    CHECK(ffwd_forward_dynamics(&m, &w, q, NULL, qd, qdd) == FFWD_E_ARG && all_zero(qdd, N6), "fd null");
    for (i = 0; i < N6; i++) qdd[i] = (ffwd_real)0.3;
    CHECK(ffwd_tool_pose(&m, &w, NULL, T) == FFWD_E_ARG && all_zero(T, 16), "pose null");
    CHECK(ffwd_tool_jacobian(&m, &w, NULL, J) == FFWD_E_ARG && all_zero(J, 6 * N6), "jac null");
    CHECK(ffwd_regressor(&m, &w, q, qd, NULL, Y) == FFWD_E_ARG && all_zero(Y, 13 * N6 * N6), "reg null");
    CHECK(ffwd_torque_parts(&m, &w, q, qd, qdd, p1, NULL, p3, p4) == FFWD_E_ARG && all_zero(p1, N6)
          && all_zero(p3, N6) && all_zero(p4, N6), "parts null");
    CHECK(ffwd_work_init(NULL, &m) == FFWD_E_ARG && ffwd_work_init(&w2, NULL) == FFWD_E_ARG, "init null");
    CHECK(ffwd_model_check(NULL) == FFWD_E_ARG, "check null");
    CHECK(ffwd_work_use_payload(NULL, NULL) == FFWD_E_ARG, "use_payload null");
    ffwd_build_info(&a, &b, &c, &d);
    CHECK(a == FFWD_MAX_DOF && b == sizeof(ffwd_real) && c == sizeof(ffwd_model) && d == sizeof(ffwd_work), "build info");
    ffwd_build_info(NULL, NULL, NULL, NULL);

    /* non-finite inputs: E_NONFINITE and zero outputs, in each input position */
    {
        ffwd_real bad[2];
        int v, pos;
        bad[0] = (ffwd_real)NAN; bad[1] = (ffwd_real)INFINITY;
        for (v = 0; v < 2; v++)
            for (pos = 0; pos < 3; pos++) {
                ffwd_real *arr = pos == 0 ? q : pos == 1 ? qd : qdd, keep = arr[2];
                arr[2] = bad[v];
                for (i = 0; i < N6; i++) tau[i] = 7;
                CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, tau) == FFWD_E_NONFINITE && all_zero(tau, N6), "id nonfinite %d %d", v, pos);
                CHECK(ffwd_torque_parts(&m, &w, q, qd, qdd, p1, p2, p3, p4) == FFWD_E_NONFINITE && all_zero(p1, N6)
                      && all_zero(p2, N6) && all_zero(p3, N6) && all_zero(p4, N6), "parts nonfinite");
                CHECK(ffwd_regressor(&m, &w, q, qd, qdd, Y) == FFWD_E_NONFINITE && all_zero(Y, 13 * N6 * N6), "reg nonfinite");
                CHECK(ffwd_forward_dynamics(&m, &w, q, qd, qdd, p1) == FFWD_E_NONFINITE && all_zero(p1, N6), "fd nonfinite");
                if (pos == 0) {
                    CHECK(ffwd_gravity_torque(&m, &w, q, tau) == FFWD_E_NONFINITE && all_zero(tau, N6), "gravity nonfinite");
                    CHECK(ffwd_mass_matrix(&m, &w, q, M) == FFWD_E_NONFINITE && all_zero(M, N6 * N6), "mass nonfinite");
                    CHECK(ffwd_tool_pose(&m, &w, q, T) == FFWD_E_NONFINITE && all_zero(T, 16), "pose nonfinite");
                    CHECK(ffwd_tool_jacobian(&m, &w, q, J) == FFWD_E_NONFINITE && all_zero(J, 6 * N6), "jac nonfinite");
                }
                arr[2] = keep;
            }
    }
    /* joint positions beyond the accurate range of sin/cos: E_ARG and zero outputs; just
     * inside the range the result is finite */
    {
#ifdef FFWD_SINGLE
        const ffwd_real big = (ffwd_real)16384.0, inside = (ffwd_real)16000.0;
#else
        const ffwd_real big = (ffwd_real)1048576.0, inside = (ffwd_real)1.0e6;
#endif
        ffwd_real keep = q[1];
        q[1] = -big;
        for (i = 0; i < N6; i++) tau[i] = 7;
        CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, tau) == FFWD_E_ARG && all_zero(tau, N6), "id huge q");
        CHECK(ffwd_gravity_torque(&m, &w, q, tau) == FFWD_E_ARG && all_zero(tau, N6), "gravity huge q");
        CHECK(ffwd_tool_pose(&m, &w, q, T) == FFWD_E_ARG && all_zero(T, 16), "pose huge q");
        q[1] = inside;
        CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, tau) == FFWD_OK && !all_zero(tau, N6), "id large q");
        for (i = 0; i < N6; i++) CHECK(tau[i] == tau[i] && tau[i] - tau[i] == 0, "id large q finite");
        /* two such positions: each inside the range, the sum of squares (the quick test
         * in ffwd_trig_) beyond it: still accepted, the same torques as torque_parts
         * (which tests its inputs one by one) */
        {
            ffwd_real keep0 = q[0], t2[N6], s2 = 0;
            q[0] = inside;
            CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, tau) == FFWD_OK, "id two large q");
            CHECK(ffwd_torque_parts(&m, &w, q, qd, qdd, p1, p2, p3, p4) == FFWD_OK, "parts two large q");
            CHECK(ffwd_gravity_torque(&m, &w, q, t2) == FFWD_OK, "gravity two large q");
            for (i = 0; i < N6; i++) {
                double sum = (double)p1[i] + (double)p2[i] + (double)p3[i] + (double)p4[i];
                CHECK(t2[i] == p3[i], "gravity two large q: %g vs %g", (double)t2[i], (double)p3[i]);
                CHECK(fabs((double)tau[i] - sum) <= TOL_REL * 10 * (1 + fabs(sum)), "id two large q: %g vs %g", (double)tau[i], sum);
                s2 += p3[i] * p3[i];
            }
            CHECK(s2 > 0, "gravity two large q all zero");
            q[0] = keep0;
        }
        q[1] = keep;
    }
    /* finite inputs whose torques overflow: E_NONFINITE and zero outputs, never Inf */
    {
#ifdef FFWD_SINGLE
        const ffwd_real huge = (ffwd_real)-1e30; /* products of two of them overflow */
#else
        const ffwd_real huge = (ffwd_real)-1e200;
#endif
        for (i = 0; i < N6; i++) qd[i] = huge;
        ffwd_status so;
        for (i = 0; i < N6; i++) tau[i] = 7;
        so = ffwd_inverse_dynamics(&m, &w, q, qd, qdd, tau);
        CHECK(so == FFWD_E_NONFINITE && all_zero(tau, N6), "id overflow: status %d tau %g", (int)so, (double)tau[0]);
        CHECK(ffwd_torque_parts(&m, &w, q, qd, qdd, p1, p2, p3, p4) == FFWD_E_NONFINITE && all_zero(p1, N6)
              && all_zero(p2, N6) && all_zero(p3, N6) && all_zero(p4, N6), "parts overflow");
        for (i = 0; i < N6; i++) qd[i] = (ffwd_real)0.2;
    }
    /* unbound work */
    memset(&w2, 0, sizeof w2);
    CHECK(ffwd_inverse_dynamics(&m, &w2, q, qd, qdd, tau) == FFWD_E_MODEL && all_zero(tau, N6), "unbound work");
    {
        ffwd_model m2 = m;
        CHECK(ffwd_gravity_torque(&m2, &w, q, tau) == FFWD_E_MODEL, "work bound to another model");
        CHECK(ffwd_work_use_payload(&w2, NULL) == FFWD_E_MODEL, "use_payload on unbound work");
    }
}

/* every model_check rule rejects a model that breaks it */
static void test_model_rules(void)
{
    ffwd_model base, m;
    static ffwd_work w;
    int rule;
    rand_model(&base, 4, 1, 1);
    base.joint[2].has_limits = FFWD_LIM_POSITION | FFWD_LIM_VELOCITY | FFWD_LIM_ACCELERATION | FFWD_LIM_JERK | FFWD_LIM_TORQUE;
    base.joint[2].q_min = -1; base.joint[2].q_max = 1; base.joint[2].v_max = 2;
    base.joint[2].a_max = 3; base.joint[2].j_max = 4; base.joint[2].tau_max = 5;
    CHECK(ffwd_model_check(&base) == FFWD_OK, "base model rejected");
    for (rule = 0; rule < 35; rule++) {
        ffwd_joint *J;
        m = base;
        J = &m.joint[2];
        switch (rule) {
        case 0: m.dof = 0; break;
        case 1: m.dof = FFWD_MAX_DOF + 1; break;
        case 2: m.gravity[1] = (ffwd_real)NAN; break;
        case 3: J->type = 7; break;
        case 4: J->parent = 2; break;
        case 5: J->parent = -2; break;
        case 6: J->rot[4] = (ffwd_real)(J->rot[4] + 1e-3); break;
        case 7: { int k; for (k = 0; k < 3; k++) J->rot[k] = -J->rot[k]; } break; /* det -1 */
        case 8: J->pos[0] = (ffwd_real)INFINITY; break;
        case 9: J->axis[0] = (ffwd_real)(J->axis[0] * 1.01); break;
        case 10: J->inertia[0] = 0; break;
        case 11: J->inertia[0] = -1; break;
        case 12: J->inertia[4] = -J->inertia[4]; break;                 /* not PD */
        case 13: J->inertia[4] = (ffwd_real)(J->inertia[4] + 10.0); break; /* triangle fails */
        case 14: J->armature = -1; break;
        case 15: J->viscous = -1; break;
        case 16: J->coulomb = -1; break;
        case 17: J->coulomb_band = 0; break;
        case 18: J->q_min = 2; break;
        case 19: J->v_max = 0; break;
        case 20: J->a_max = -1; break;
        case 21: J->j_max = 0; break;
        case 22: J->tau_max = (ffwd_real)NAN; break;
        case 23: m.tool_parent = 4; break;
        case 24: m.tool_parent = -1; break;
        case 25: m.tool_rot[0] = 2; break;
        case 26: m.tool_pos[2] = (ffwd_real)NAN; break;
        case 27: m.payload[0] = -1; break;
        case 28: m.payload[0] = 1; m.payload[4] = 1; m.payload[7] = 1; m.payload[9] = 5; break; /* triangle */
        case 29: m.payload[4] = 1; break; /* inertia without mass */
        case 30: J->inertia[5] = (ffwd_real)NAN; break;
        case 31: J->has_limits |= 64u; break;
        case 32: m.gravity[2] = (ffwd_real)-5e30 * (ffwd_real)5e30 * (ffwd_real)1e-6; break; /* finite, absurd: 2.5e55 (inf in float) */
        case 33: J->tau_max = (ffwd_real)1e30 * (ffwd_real)1e30; break; /* 1e60 (inf in float) */
        default: J->viscous = (ffwd_real)INFINITY; break;
        }
        CHECK(ffwd_model_check(&m) == FFWD_E_MODEL, "rule %d not rejected", rule);
        CHECK(ffwd_work_init(&w, &m) == FFWD_E_MODEL, "work_init accepted rule %d", rule);
    }
    /* unset limits are ignored; a valid payload is accepted */
    m = base;
    m.joint[1].has_limits = 0; m.joint[1].q_min = 5; m.joint[1].q_max = -5;
    m.payload[0] = 1; m.payload[4] = (ffwd_real)0.01; m.payload[7] = (ffwd_real)0.01; m.payload[9] = (ffwd_real)0.01;
    CHECK(ffwd_model_check(&m) == FFWD_OK, "valid payload / unset limits rejected");
}

/* identities on random models */
/* tree: 0 a chain, 1 random parents, 2 random parents and several children of the base */
static void test_identities(int tree, int trials, uint32_t dof)
{
    int t;
    for (t = 0; t < trials; t++) {
        ffwd_model m;
        static ffwd_work w;
        uint32_t n = dof, i, j;
        ffwd_real q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF], qdd[FFWD_MAX_DOF], tau[FFWD_MAX_DOF], tau2[FFWD_MAX_DOF];
        ffwd_real g[FFWD_MAX_DOF], M[FFWD_MAX_DOF * FFWD_MAX_DOF], x[FFWD_MAX_DOF], z[FFWD_MAX_DOF];
        ffwd_real pi[FFWD_MAX_DOF], pv[FFWD_MAX_DOF], pg[FFWD_MAX_DOF], pf[FFWD_MAX_DOF];
        static ffwd_real Y[13 * FFWD_MAX_DOF * FFWD_MAX_DOF];
        double scale, err;
        rand_model(&m, n, tree, 1);
        if (tree == 2)  /* a forest: every third joint another child of the base */
            for (i = 3; i < n; i += 3)
                m.joint[i].parent = -1;
        if (t % 2) { m.tool_parent = (int32_t)(n / 2); rand_body(m.payload); }
        CHECK(ffwd_work_init(&w, &m) == FFWD_OK, "random model rejected");
        for (i = 0; i < n; i++) {
            q[i] = (ffwd_real)srand1(3); qd[i] = (ffwd_real)srand1(2); qdd[i] = (ffwd_real)srand1(5);
            z[i] = 0;
        }
        CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, tau) == FFWD_OK, "id");
        scale = 1 + max_abs(tau, n);
        /* gravity = ID(q, 0, 0) */
        CHECK(ffwd_gravity_torque(&m, &w, q, g) == FFWD_OK, "gravity");
        CHECK(ffwd_inverse_dynamics(&m, &w, q, z, z, tau2) == FFWD_OK, "id0");
        CHECK(max_diff(g, tau2, n) < TOL_REL * 10 * scale, "gravity vs ID(q,0,0): %g", max_diff(g, tau2, n));
        /* parts sum to ID */
        CHECK(ffwd_torque_parts(&m, &w, q, qd, qdd, pi, pv, pg, pf) == FFWD_OK, "parts");
        for (i = 0; i < n; i++) tau2[i] = pi[i] + pv[i] + pg[i] + pf[i];
        CHECK(max_diff(tau, tau2, n) < TOL_REL * 10 * scale, "parts sum: %g", max_diff(tau, tau2, n));
        /* mass matrix symmetric, M qdd = inertial part */
        CHECK(ffwd_mass_matrix(&m, &w, q, M) == FFWD_OK, "mass");
        err = 0;
        for (i = 0; i < n; i++) {
            double s = 0;
            for (j = 0; j < n; j++) {
                if (M[i * n + j] != M[j * n + i]) err = 1;
                s += (double)M[i * n + j] * (double)qdd[j];
            }
            x[i] = (ffwd_real)s;
        }
        CHECK(err == 0, "mass matrix not symmetric");
        CHECK(max_diff(x, pi, n) < TOL_REL * 10 * scale, "M qdd vs inertial part: %g", max_diff(x, pi, n));
        for (i = 0; i < n; i++) CHECK(M[i * n + i] > 0, "mass diagonal");
        /* forward dynamics inverts inverse dynamics */
        CHECK(ffwd_forward_dynamics(&m, &w, q, qd, tau, x) == FFWD_OK, "fd");
        CHECK(max_diff(x, qdd, n) < TOL_REL * 100 * (1 + max_abs(qdd, n)) * 10, "FD(ID) != qdd: %g", max_diff(x, qdd, n));
        /* regressor times the model's parameter vector equals ID */
        CHECK(ffwd_regressor(&m, &w, q, qd, qdd, Y) == FFWD_OK, "regressor");
        for (i = 0; i < n; i++) {
            double s = 0;
            for (j = 0; j < n; j++) {
                const ffwd_joint *J = &m.joint[j];
                int k;
                for (k = 0; k < 10; k++) {
                    double th = J->inertia[k] + ((int32_t)j == m.tool_parent ? m.payload[k] : 0);
                    s += (double)Y[i * 13 * n + 13 * j + (uint32_t)k] * th;
                }
                s += (double)Y[i * 13 * n + 13 * j + 10] * J->armature;
                s += (double)Y[i * 13 * n + 13 * j + 11] * J->viscous;
                s += (double)Y[i * 13 * n + 13 * j + 12] * J->coulomb;
            }
            x[i] = (ffwd_real)s;
        }
        CHECK(max_diff(x, tau, n) < TOL_REL * 10 * scale, "Y theta vs ID: %g", max_diff(x, tau, n));
        /* Jacobian vs central differences of the pose */
        {
            ffwd_real Jac[6 * FFWD_MAX_DOF], Tp[16], Tm[16], T0[16];
            double hstep = 1e-6;
#ifdef FFWD_SINGLE
            hstep = 1e-2;
#endif
            CHECK(ffwd_tool_jacobian(&m, &w, q, Jac) == FFWD_OK, "jacobian");
            CHECK(ffwd_tool_pose(&m, &w, q, T0) == FFWD_OK, "pose");
            for (j = 0; j < n; j++) {
                ffwd_real keep = q[j];
                double dR[9], wx, wy, wz, tol = tree ? 1e-5 : 1e-6;
                int r, c;
#ifdef FFWD_SINGLE
                tol = 2e-2;
#endif
                q[j] = (ffwd_real)(keep + hstep); ffwd_tool_pose(&m, &w, q, Tp);
                q[j] = (ffwd_real)(keep - hstep); ffwd_tool_pose(&m, &w, q, Tm);
                q[j] = keep;
                for (r = 0; r < 3; r++)
                    CHECK(fabs((Tp[4 * r + 3] - Tm[4 * r + 3]) / (2 * hstep) - Jac[(uint32_t)r * n + j]) < tol,
                          "J linear row %d col %u", r, j);
                /* dR/dq R^T = [w]x */
                for (r = 0; r < 3; r++)
                    for (c = 0; c < 3; c++)
                        dR[3 * r + c] = (Tp[4 * r + c] - Tm[4 * r + c]) / (2 * hstep);
                wx = dR[6] * T0[4] + dR[7] * T0[5] + dR[8] * T0[6];   /* (dR R^T)[2][1] */
                wy = dR[0] * T0[8] + dR[1] * T0[9] + dR[2] * T0[10];  /* (dR R^T)[0][2] */
                wz = dR[3] * T0[0] + dR[4] * T0[1] + dR[5] * T0[2];   /* (dR R^T)[1][0] */
                CHECK(fabs(wx - Jac[3 * n + j]) < tol && fabs(wy - Jac[4 * n + j]) < tol && fabs(wz - Jac[5 * n + j]) < tol,
                      "J angular col %u", j);
            }
        }
    }
}

/* a pivot that is not positive gives E_SINGULAR and zeros: only reachable by editing a
 * model after binding (a checked model always has positive pivots). The body parameters
 * are cached by ffwd_work_init; the armature is read per call, so a negative one does it. */
static void test_singular(void)
{
    ffwd_model m;
    static ffwd_work w;
    ffwd_real q[3] = { (ffwd_real)0.1, (ffwd_real)0.2, (ffwd_real)0.3 }, z[3] = { 0, 0, 0 }, out[3] = { 7, 7, 7 };
    rand_model(&m, 3, 0, 0);
    CHECK(ffwd_work_init(&w, &m) == FFWD_OK, "model rejected");
    m.joint[2].armature = (ffwd_real)-1e6;
    CHECK(ffwd_forward_dynamics(&m, &w, q, z, z, out) == FFWD_E_SINGULAR && all_zero(out, 3), "zero pivot not singular");
}

/* the batched sin/cos of the joint angles equals the scalar ffwd_sincos_ of the same
 * angle bit for bit, for an even and an odd count (nothing past q[n - 1] read: the odd
 * count runs on the end of the array), and returns the sum of q^2 (the last q of an odd
 * count twice) (internal functions, declared here) */
void ffwd_sincos_(ffwd_real x, ffwd_real *s, ffwd_real *c);
ffwd_real ffwd_sincos_joints_(const ffwd_real *q, const ffwd_real *rv, const ffwd_real *al,
                              ffwd_real *s, ffwd_real *c, uint32_t n);

static void test_sincos_joints(void)
{
    enum { NX = 512 };
    static ffwd_real x[NX], rv[NX], al[NX], s[NX + 1], c[NX + 1];
    const double scale[4] = { 1e-3, 4.0, 100.0, 1e4 };
    const uint32_t counts[2] = { NX, 7 };
    int i, k, bad = 0;
    for (i = 0; i < NX; i++) {
        x[i] = (ffwd_real)srand1(scale[i % 4]);
        rv[i] = (ffwd_real)(i % 5 == 0 ? 0.0 : 1.0);        /* 0: a prismatic joint's angle */
        al[i] = (ffwd_real)(i % 3 == 0 ? -0.0 : srand1(3.2)); /* offsets, -0 for none */
    }
    for (i = 0; i < 40; i++)    /* multiples of pi/2 as the nearest ffwd_real */
        x[i] = (ffwd_real)(1.5707963267948966 * (double)(i - 20));
    x[41] = (ffwd_real)-0.0;
    x[43] = (ffwd_real)0.0;
    for (k = 0; k < 2; k++) {
        const uint32_t n = counts[k];
        const ffwd_real *q = x + (NX - n);
        double ss = 0;
        ffwd_real got;
        got = ffwd_sincos_joints_(q, rv, al, s, c, n);
        for (i = 0; i < (int)n; i++) {
            ffwd_real a, b;
            ffwd_sincos_(rv[i] * q[i] + al[i], &a, &b);
            if (memcmp(&a, &s[i], sizeof a) != 0 || memcmp(&b, &c[i], sizeof b) != 0)
                bad++;
            ss += (double)q[i] * (double)q[i];
        }
        if (n & 1u)
            ss += (double)q[n - 1] * (double)q[n - 1];
        CHECK(fabs((double)got - ss) <= 1e-5 * ss, "sum of q^2 %g vs %g (n = %u)", (double)got, ss, (unsigned)n);
    }
    CHECK(bad == 0, "batched sin/cos differs from ffwd_sincos_ at %d points", bad);
}

ffwd_status ffwd_id_pair_gravity_(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                                  const ffwd_real *qd1, const ffwd_real *qdd1, ffwd_real *tau1,
                                  const ffwd_real *qd2, const ffwd_real *qdd2, ffwd_real *tau2,
                                  ffwd_real *grav);

/* The governor's three evaluations at one q with one sin/cos (spatial.h) give, bit for
 * bit, what the public calls give, on chains (with and without prismatic joints) and
 * trees, payload or none; a refused q gets the public call's status. */
static void test_pair_gravity(void)
{
    int t, bad = 0;
    for (t = 0; t < 24; t++) {
        ffwd_model m;
        static ffwd_work w;
        const uint32_t n = 2u + (uint32_t)t % 7u;
        ffwd_real q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF], qdd[FFWD_MAX_DOF], z[FFWD_MAX_DOF], a[FFWD_MAX_DOF];
        ffwd_real t1[FFWD_MAX_DOF], t2[FFWD_MAX_DOF], gr[FFWD_MAX_DOF];
        ffwd_real r1[FFWD_MAX_DOF], r2[FFWD_MAX_DOF], rg[FFWD_MAX_DOF];
        uint32_t i;
        rand_model(&m, n, t % 3 == 2, t % 2);
        if (t % 4 == 1) { m.tool_parent = (int32_t)(n / 2); rand_body(m.payload); }
        CHECK(ffwd_work_init(&w, &m) == FFWD_OK, "random model rejected");
        for (i = 0; i < n; i++) {
            q[i] = (ffwd_real)srand1(3); qd[i] = (ffwd_real)srand1(2); qdd[i] = (ffwd_real)srand1(5);
            a[i] = (ffwd_real)srand1(1); z[i] = 0;
        }
        CHECK(ffwd_id_pair_gravity_(&m, &w, q, qd, qdd, t1, z, a, t2, gr) == FFWD_OK, "pair status");
        CHECK(ffwd_inverse_dynamics(&m, &w, q, qd, qdd, r1) == FFWD_OK
              && ffwd_inverse_dynamics(&m, &w, q, z, a, r2) == FFWD_OK
              && ffwd_gravity_torque(&m, &w, q, rg) == FFWD_OK, "public calls");
        bad += memcmp(t1, r1, n * sizeof(ffwd_real)) != 0 || memcmp(t2, r2, n * sizeof(ffwd_real)) != 0
               || memcmp(gr, rg, n * sizeof(ffwd_real)) != 0;
        q[n - 1u] = (ffwd_real)NAN;
        CHECK(ffwd_id_pair_gravity_(&m, &w, q, qd, qdd, t1, z, a, t2, gr)
              == ffwd_inverse_dynamics(&m, &w, q, qd, qdd, r1), "pair status for a NaN q");
        CHECK(ffwd_id_pair_gravity_(&m, &w, q, qd, qdd, t1, z, a, t2, gr) == FFWD_E_NONFINITE
              && max_abs(t1, n) == 0, "NaN q: FFWD_E_NONFINITE, tau1 zero");
    }
    CHECK(bad == 0, "one sin/cos for three evaluations differs from the public calls in %d models", bad);
}

/* The regressor's Coulomb column is the clamp of qd / band to [-1, 1] at any ratio (the
 * friction law of ffwd.h; it must equal ID's Coulomb term, here with a band so narrow
 * that qd / band passes 2^53) */
static void test_coulomb_column(void)
{
    ffwd_model m;
    static ffwd_work w;
    ffwd_real q = (ffwd_real)0.3, qdd = 0, Y[13], tau, tau0;
    const ffwd_real qds[4] = { (ffwd_real)0.5, (ffwd_real)-0.5, (ffwd_real)1e-30, 0 };
    int i;
    pendulum_model(&m, 2.0, 0.5, 0.01);
    m.joint[0].coulomb_band = (ffwd_real)1e-30;
    m.joint[0].coulomb = (ffwd_real)3.0;
    CHECK(ffwd_work_init(&w, &m) == FFWD_OK, "narrow band model rejected");
    for (i = 0; i < 4; i++) {
        ffwd_real qd = qds[i], zero = 0;
        double expect = i == 0 ? 1.0 : (i == 1 ? -1.0 : (i == 2 ? 1.0 : 0.0));
        CHECK(ffwd_regressor(&m, &w, &q, &qd, &qdd, Y) == FFWD_OK, "regressor status");
        CHECK((double)Y[12] == expect, "Coulomb column %g for qd %g, expected %g", (double)Y[12], (double)qd, expect);
        CHECK(ffwd_inverse_dynamics(&m, &w, &q, &qd, &qdd, &tau) == FFWD_OK
              && ffwd_inverse_dynamics(&m, &w, &q, &zero, &qdd, &tau0) == FFWD_OK, "id status");
        CHECK(fabs((double)(tau - tau0) - 3.0 * expect - (double)(m.joint[0].viscous * qd)) < 1e-9,
              "ID's Coulomb term %g, expected %g", (double)(tau - tau0), 3.0 * expect);
    }
}

int main(void)
{
    test_sincos_joints();
    test_singular();
    test_status();
    test_pendulum();
    test_coulomb_column();
    test_pair_gravity();
    test_two_link();
    test_args();
    test_model_rules();
    test_identities(0, 20, N6);
    test_identities(1, 20, 7u);
    test_identities(2, 20, 8u);
    test_identities(0, 2, FFWD_MAX_DOF);
    test_identities(1, 2, FFWD_MAX_DOF);
    return finish("test_core");
}
