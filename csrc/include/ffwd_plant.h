/* ffwd_plant.h - part of the public C API, included by ffwd.h.
 *
 * A simulated arm for closed-loop and hardware-in-the-loop tests: the forward
 * dynamics of a model (which may differ from the controller's model) integrated
 * with a fixed step, and a sensor in front of it.
 *
 * Per step (ffwd_plant_step):
 *   1. the commanded torque is checked (finite) and, where cfg.saturate is set,
 *      clamped to +-tau_max of every joint that has a torque limit;
 *   2. the state (q, qd) is advanced by dt with cfg.substeps equal sub-steps of
 *      semi-implicit (symplectic) Euler  qd += h*qdd(q, qd, tau); q += h*qd
 *      or classic fourth-order Runge-Kutta on (q, qd); qdd comes from
 *      ffwd_forward_dynamics, so the model's joint friction (viscous plus smoothed
 *      Coulomb) acts on the plant; torque is held constant over the step;
 *   3. the sensor samples the new state: position quantised to the encoder
 *      resolution (cfg.counts_per_rev counts per revolution for revolute joints,
 *      per metre for prismatic joints; 0 = exact), plus zero-mean noise with the
 *      given standard deviations on position and velocity (seeded xorshift64*
 *      generator in the plant, normal variates by the sum of 12 uniforms, so no
 *      libm is needed and runs are reproducible); the sample enters a ring buffer;
 *   4. ffwd_plant_measure returns the sample taken cfg.delay steps ago.
 *
 * Brake: ffwd_plant_brake(p, 1) sets qd = 0 and holds q (gravity is held by the
 * brake); steps then only advance time and the sensor until ffwd_plant_brake(p, 0).
 *
 * Rules as in the rest of the core: no heap, no stdio, no globals, caller-owned
 * state. On any error the plant state is left unchanged and outputs are zero.
 */
#ifndef FFWD_PLANT_H
#define FFWD_PLANT_H
#ifdef __cplusplus
extern "C" {
#endif

enum { FFWD_PLANT_EULER = 0, FFWD_PLANT_RK4 = 1 };

#define FFWD_PLANT_MAX_DELAY 64u     /* largest measurement delay in steps */
#define FFWD_PLANT_MAX_SUBSTEPS 64u  /* largest number of sub-steps per step */

typedef struct ffwd_plant_config {
    ffwd_real dt;             /* step [s], > 0 */
    uint32_t integrator;      /* FFWD_PLANT_EULER or FFWD_PLANT_RK4 */
    uint32_t substeps;        /* integration sub-steps per step, 1 .. FFWD_PLANT_MAX_SUBSTEPS */
    uint32_t delay;           /* measurement delay in steps, 0 .. FFWD_PLANT_MAX_DELAY */
    uint32_t saturate;        /* nonzero: clamp torque to the joints' torque limits */
    ffwd_real counts_per_rev; /* encoder counts per revolution (per metre if prismatic); 0 = exact */
    ffwd_real noise_q;        /* standard deviation of position noise [rad or m], >= 0 */
    ffwd_real noise_qd;       /* standard deviation of velocity noise [rad/s or m/s], >= 0 */
    uint64_t seed;            /* noise generator seed (0 is replaced by a fixed constant) */
} ffwd_plant_config;

typedef struct ffwd_plant {
    const ffwd_model *model;  /* the plant's own model (may differ from the controller's) */
    ffwd_work work;           /* bound to model */
    ffwd_plant_config cfg;
    ffwd_real q[FFWD_MAX_DOF];
    ffwd_real qd[FFWD_MAX_DOF];
    ffwd_real tau[FFWD_MAX_DOF];   /* torque applied in the last step (after saturation) */
    ffwd_real t;                   /* simulated time [s] */
    uint64_t steps;                /* steps taken */
    uint64_t saturated_steps;      /* steps in which at least one joint was clamped */
    uint64_t braked_steps;         /* steps taken with the brake on */
    uint64_t rng;                  /* xorshift64* state, never 0 */
    uint32_t braked;               /* 1 while the brake holds the arm */
    uint32_t head;                 /* ring index of the newest sensor sample */
    ffwd_real ring_q[FFWD_PLANT_MAX_DELAY + 1u][FFWD_MAX_DOF];
    ffwd_real ring_qd[FFWD_PLANT_MAX_DELAY + 1u][FFWD_MAX_DOF];
    ffwd_real tmp[13][FFWD_MAX_DOF];  /* integration scratch of ffwd_plant_step (not the stack) */
} ffwd_plant;

/* Fills cfg with: the given dt, RK4, 1 sub-step, no delay, saturation on, exact
 * encoder, no noise, seed 1. */
ffwd_status ffwd_plant_config_default(ffwd_plant_config *cfg, ffwd_real dt);
/* Checks the config and the model, binds the plant to m and sets the state to
 * (q0, qd0) (qd0 may be NULL: at rest). The sensor history is filled with samples
 * of the initial state. m must outlive the plant. */
ffwd_status ffwd_plant_init(ffwd_plant *p, const ffwd_model *m, const ffwd_plant_config *cfg,
                            const ffwd_real *q0, const ffwd_real *qd0);
/* Sets the true state (qd may be NULL: at rest), releases the brake and refills the
 * sensor history; time and counters are kept. */
ffwd_status ffwd_plant_set_state(ffwd_plant *p, const ffwd_real *q, const ffwd_real *qd);
/* Applies tau (dof values) for one step of cfg.dt. */
ffwd_status ffwd_plant_step(ffwd_plant *p, const ffwd_real *tau);
/* The measurement the controller sees now: the sensor sample of cfg.delay steps ago.
 * Either output may be NULL. */
ffwd_status ffwd_plant_measure(const ffwd_plant *p, ffwd_real *q, ffwd_real *qd);
/* The true state, no sensor effects. Either output may be NULL. */
ffwd_status ffwd_plant_state(const ffwd_plant *p, ffwd_real *q, ffwd_real *qd);
/* on != 0: brake (qd = 0, q held); on == 0: release. */
ffwd_status ffwd_plant_brake(ffwd_plant *p, int on);

#ifdef __cplusplus
}
#endif
#endif /* FFWD_PLANT_H */
