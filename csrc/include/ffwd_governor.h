/* ffwd_governor.h - part of the public C API, included by ffwd.h.
 *
 * The online speed-override governor. A path q(s) is given as samples at a fixed
 * spacing ds of its own (nominal) time s: q, q' = dq/ds, q'' and q''' per sample.
 * Each control cycle the governor takes the override the operator commands
 * (0 .. override_max; 1 = nominal speed; it may jump at any moment) and returns the
 * override it applies (kappa = ds/dt), its rate u = d kappa/dt and the joint command:
 *     q = q(s),  qd = q' kappa,  qdd = q'' kappa^2 + q' u,  tau = inverse dynamics.
 * Guarantees, at every cycle:
 *   (a) torque (friction included), velocity and acceleration limits hold at the
 *       commanded state (limits are used reduced by cfg.margin, which absorbs the
 *       interpolation between samples);
 *   (b) |u| <= rate_max; |du/dt| <= rate_rate_max and joint jerk limits hold: a step
 *       is applied only if a braking plan from the state it leads to reaches rest inside
 *       the window meeting every limit (twice the margin) with |du/dt| <= rate_rate_max
 *       and the joint jerk limits; otherwise the last such plan's own step is applied
 *       (a plan is a state feedback, so following it keeps it valid). Two plans are
 *       tried: the fastest stop (each sample's smallest admissible u, the safe curve's
 *       own braking) when its changes of u fit one cycle each, else a constant
 *       deceleration with u ramped at a rate within the jerk limits. FFWD_GOV_JERK
 *       is set only if a plan could not be followed (not expected);
 *   (c) the robot can still be brought to rest before the last sample in the window
 *       (x = kappa^2 stays under the piecewise-linear safe curve of a backward
 *       reachability pass over the window, x = 0 at its last sample);
 *   (d) a feasible command is approached as fast as the bounds of (b) allow.
 * Cost per step: one backward pass over the window when samples were pushed,
 * O(dof * horizon) at most (only the lower bounds that are the largest somewhere on the
 * sample's speed range are kept, so usually far fewer), plus two inverse dynamics calls
 * and one gravity call at the current point (the torque there is exactly tau0 + a u);
 * plus the plan checks of (b): the fastest stop is O(dof * horizon); plan D simulates
 * its cycles to rest (at most FFWD_GOV_PLAN_CYCLES, a few scalar operations each, the
 * middle of a hold at once; a plan whose continuous stop is longer is rejected at once)
 * and then tests O(dof * horizon) boxes and jerk bounds (a second pass checks the joint
 * jerk cycle by cycle, at most 2048 cycles, only where the segments' bound does not
 * cover it); up to 6 steps are checked a cycle (the tracker's, the largest u whose
 * plan D stop length fits, then halvings towards the stored plan's); each push costs
 * two inverse-dynamics calls, one gravity call and O(dof^2) for the sample's largest
 * admissible speed. No heap.
 * (a) uses the limits reduced by margin; the safe curve of (c) is computed with the
 * limits reduced by 2 * margin, so a state on it can follow it between samples.
 *
 * Use:
 *   ffwd_governor_init(g, model, work, &cfg);
 *   each cycle: while (ffwd_governor_room(g) > 0 && samples left) ffwd_governor_push(g, ...);
 *               after the last sample: ffwd_governor_finish(g);
 *               ffwd_governor_step(g, override_cmd, &out);   until out.flags & FFWD_GOV_DONE
 * The first pushed sample is the start of the motion (at rest).
 */
#ifndef FFWD_GOVERNOR_H
#define FFWD_GOVERNOR_H
#ifdef __cplusplus
extern "C" {
#endif

#ifndef FFWD_GOV_MAX_HORIZON
#define FFWD_GOV_MAX_HORIZON 256   /* largest window, in samples */
#endif
#define FFWD_GOV_COLS (2 * FFWD_MAX_DOF + 1)   /* torque and acceleration per joint, rate */

/* bits of ffwd_gov_output.flags */
enum {
    FFWD_GOV_AT_REST = 1u,   /* the applied override is 0 */
    FFWD_GOV_DONE = 2u,      /* the end of the path is reached at rest (after finish) */
    FFWD_GOV_CAPPED = 4u,    /* the target is below the command: limits or the window bound it */
    FFWD_GOV_JERK = 8u,      /* rate-of-rate bound or a joint jerk limit gave way to (a) or (c) */
    FFWD_GOV_CONFLICT = 16u, /* the reduced limits and the safe bound conflicted: braking chosen */
    FFWD_GOV_STARVED = 32u   /* fewer than 2 samples ahead: holding at rest, push more */
};

typedef struct ffwd_gov_config {
    ffwd_real dt;            /* control period [s], > 0 */
    ffwd_real ds;            /* sample spacing in nominal time [s], > 0 */
    uint32_t horizon;        /* window length in samples, 2 .. FFWD_GOV_MAX_HORIZON */
    ffwd_real override_max;  /* largest override, > 0 */
    ffwd_real rate_max;      /* bound on |d override / dt| [1/s], > 0 */
    ffwd_real rate_rate_max; /* bound on |d2 override / dt2| [1/s^2], > 0 */
    ffwd_real margin;        /* fraction of each limit held in reserve, 0 <= margin < 0.5 */
} ffwd_gov_config;

/* the governor's stored braking plan (internal) */
enum { FFWD_GOV_PLAN_REST = 0u, FFWD_GOV_PLAN_FAST = 1u, FFWD_GOV_PLAN_DECEL = 2u };
#ifndef FFWD_GOV_PLAN_CYCLES
#define FFWD_GOV_PLAN_CYCLES 100000   /* cycles of plan D simulated at most */
#endif

typedef struct ffwd_gov_slot {     /* one window sample (internal) */
    ffwd_real q[FFWD_MAX_DOF], dq[FFWD_MAX_DOF], ddq[FFWD_MAX_DOF], dddq[FFWD_MAX_DOF];
    ffwd_real a[FFWD_MAX_DOF], b[FFWD_MAX_DOF], c[FFWD_MAX_DOF];
    /* braking test per lower bound that is not dominated by another one on
     * [0, x_max]: A k^2 + B k + C - Xs_next <= 0, columns 0 .. ncols - 1 */
    ffwd_real bA[FFWD_GOV_COLS], bB[FFWD_GOV_COLS], bC[FFWD_GOV_COLS];
    uint32_t ncols;
    ffwd_real x_max;               /* largest admissible kappa^2 here */
    ffwd_real x_safe;              /* largest kappa^2 from which rest is reachable in the window */
    ffwd_real x_try, x_plan;       /* the fastest-stop plan's kappa^2 here: tried, stored */
    ffwd_real u_try, u_plan;       /* and its u on the segment from here */
    ffwd_real vp;                  /* ramp rate the jerk limits allow plan D here (half) */
    ffwd_real dr;                  /* largest constant deceleration the limits allow at rest */
    ffwd_real jb[3][FFWD_MAX_DOF]; /* bounds of |q'|, |q''|, |q'''| on the segment from here */
    ffwd_real jr[3];               /* their largest ratios to the jerk limits (twice the margin) */
    /* for the box tests of plan D (twice the margin): the room of each torque row above
     * and below (limit less c and Coulomb friction), the viscous term gv = viscous q',
     * where b < 0 the kappa of the largest b kappa^2 + gv kappa (else -1) and that value,
     * and the largest kappa every velocity limit allows */
    ffwd_real thi[FFWD_MAX_DOF], tlo[FFWD_MAX_DOF], gv[FFWD_MAX_DOF], kv[FFWD_MAX_DOF], fv[FFWD_MAX_DOF];
    ffwd_real k_vel;
    /* a box of states (kappa low, high, u low, high) known to meet every limit here
     * (fit_ok 1; 0: none yet): a box inside it needs no test */
    ffwd_real fit_box[4];
    uint32_t fit_ok;
} ffwd_gov_slot;

typedef struct ffwd_governor {
    const ffwd_model *model;
    ffwd_work *work;
    ffwd_gov_config cfg;
    uint32_t head;          /* ring index of the window's first sample */
    uint32_t count;         /* samples in the window */
    uint32_t base;          /* path index of the window's first sample */
    uint32_t pushed;        /* samples pushed so far */
    uint32_t finished;      /* 1 after ffwd_governor_finish */
    uint32_t dirty;         /* the safe curve needs a backward pass */
    uint32_t pieces;        /* window segments one cycle can reach */
    ffwd_real sigma;        /* progress past the first sample, [0, ds) */
    ffwd_real kappa, u;     /* applied override and its rate */
    ffwd_real u_last;       /* the rate the last cycle applied (u differs: it came to rest) */
    ffwd_real qdd_prev[FFWD_MAX_DOF];   /* the last command's qdd (joint jerk per cycle) */
    uint32_t fault_index;   /* after FFWD_E_INFEASIBLE from push: sample index, */
    int32_t fault_joint;    /* joint (-1: none) and */
    uint32_t fault_limit;   /* FFWD_LIM_* bit of the limit that cannot be met */
    uint32_t plan;          /* the stored braking plan: FFWD_GOV_PLAN_* (internal) */
    uint32_t any_jerk;      /* a joint has a jerk limit */
    ffwd_real plan_D, plan_Vp;  /* plan D: deceleration and ramp rate */
    uint32_t hold_left;         /* plan D holds u this many cycles before it brakes */
    uint32_t try_first, try_last;  /* the samples the fastest stop tried last wrote */
    ffwd_real vp_min, dr_min;   /* the least vp and dr of the window's samples (mins_ok 1: */
    uint32_t mins_ok;           /* kept; 0: to be found again) */
    ffwd_real am2[FFWD_MAX_DOF];    /* each joint's acceleration limit, twice the margin */
    uint32_t clean;             /* the first `clean` samples are as the last backward pass
                                   saw them (rows, x_safe): where it meets one of their
                                   x_safe again, the rest is unchanged */
    ffwd_gov_slot slot[FFWD_GOV_MAX_HORIZON];
    /* scratch of the plan D check: per window segment the box of the plan's states
     * (kappa low, high, u low, high) and whether a cycle starts there (box_used 1; 2:
     * and the jerk bound covers the cycles from there); the command's qdd before the
     * plan and two cycles' qdd */
    ffwd_real box[FFWD_GOV_MAX_HORIZON][4];
    ffwd_real qdd0[FFWD_MAX_DOF], pq[FFWD_MAX_DOF], pq2[FFWD_MAX_DOF];
    uint8_t box_used[FFWD_GOV_MAX_HORIZON];
    /* q' and q'' of window segment pc_seg as polynomials in its fraction th (per joint,
     * constant term first; pc_seg = FFWD_GOV_MAX_HORIZON: none) */
    ffwd_real pc1[FFWD_MAX_DOF][5], pc2[FFWD_MAX_DOF][4];
    uint32_t pc_seg;
    /* plan D's first and last cycle (s, kappa, u) and the cycle before the one checked */
    ffwd_real cyc_first[3], cyc_last[3], cyc_prev[3];
    /* scratch of ffwd_governor_push (kept here, off the stack): the rows' lower and
     * upper bounds of u, u >= lB x + lG kappa + lD and u <= uB x + uG kappa + uD */
    ffwd_real lB[FFWD_GOV_COLS], lG[FFWD_GOV_COLS], lD[FFWD_GOV_COLS];
    ffwd_real uB[FFWD_GOV_COLS], uG[FFWD_GOV_COLS], uD[FFWD_GOV_COLS];
    /* scratch of ffwd_governor_step (path derivatives and torques at the current point),
     * also used by ffwd_governor_push */
    ffwd_real d1[FFWD_MAX_DOF], d2[FFWD_MAX_DOF];
    ffwd_real tau0[FFWD_MAX_DOF], ta[FFWD_MAX_DOF], gq[FFWD_MAX_DOF], zq[FFWD_MAX_DOF];
} ffwd_governor;

typedef struct ffwd_gov_output {
    ffwd_real q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF], qdd[FFWD_MAX_DOF], tau[FFWD_MAX_DOF];
    ffwd_real s;             /* progress along the path, nominal time [s] */
    ffwd_real override;      /* applied override kappa */
    ffwd_real rate;          /* u = d kappa/dt [1/s] */
    ffwd_real rate_rate;     /* (u - previous u)/dt [1/s^2] */
    ffwd_real safe_override; /* largest override the window allows here */
    uint32_t flags;          /* FFWD_GOV_* */
} ffwd_gov_output;

/* Checks the configuration and that every joint has torque, velocity and acceleration
 * limits (FFWD_E_LIMIT otherwise; jerk limits are used where given). work must be
 * bound to model; both must outlive g. */
ffwd_status ffwd_governor_init(ffwd_governor *g, const ffwd_model *model, ffwd_work *work,
                               const ffwd_gov_config *cfg);
/* Free window slots (0 when full or finished). */
uint32_t ffwd_governor_room(const ffwd_governor *g);
/* Appends the next path sample (arrays of dof values: q, q', q'', q'''). FFWD_E_ARG when
 * full or finished; FFWD_E_INFEASIBLE (fault_* set) when the robot cannot even stand
 * still there within its limits or q is outside a position limit. */
ffwd_status ffwd_governor_push(ffwd_governor *g, const ffwd_real *q, const ffwd_real *dq,
                               const ffwd_real *ddq, const ffwd_real *dddq);
/* The last pushed sample is the end of the path. */
ffwd_status ffwd_governor_finish(ffwd_governor *g);
/* One control cycle with the commanded override (clamped to [0, override_max]).
 * On error out is zeroed and the state is unchanged. */
ffwd_status ffwd_governor_step(ffwd_governor *g, ffwd_real override_cmd, ffwd_gov_output *out);

#ifdef __cplusplus
}
#endif
#endif /* FFWD_GOVERNOR_H */
