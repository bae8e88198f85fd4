/* ffwd.h - the public C API of the ffwd core.
 *
 * Real-time torque feedforward for robot arms: inverse dynamics (recursive
 * Newton-Euler), gravity, torque parts, mass matrix (composite rigid body),
 * forward dynamics (articulated body), tool pose and Jacobian, the joint-torque
 * regressor and a lock-free run-time payload swap.
 *
 * Rules: no heap, no stdio, no globals; all memory is caller-owned.
 *   ffwd_model  what the robot is (read-only after ffwd_model_check passes);
 *   ffwd_work   scratch memory, one per thread, bound to one model by ffwd_work_init.
 * Every function returns an ffwd_status. On any error the outputs are set to zero
 * (never NaN). Arrays are row-major; vectors have model->dof entries.
 *
 * Conventions
 *   Joint frame i at q_i = 0 is placed relative to its parent's joint frame by
 *   (rot, pos): rot is the 3x3 rotation (row-major) whose columns are frame i's axes
 *   in parent coordinates, pos is frame i's origin in parent coordinates. The joint
 *   motion is applied after that fixed transform: revolute joints rotate by q_i about
 *   `axis`, prismatic joints translate by q_i along `axis` (axis in frame i, unit).
 *   The body (link) moved by joint i is described in joint frame i (after the motion).
 *   Inertial parameters, 10 per body, in this order:
 *     m, m*cx, m*cy, m*cz, Ixx, Ixy, Ixz, Iyy, Iyz, Izz
 *   with c the centre of mass and I the 3x3 inertia matrix about the joint-frame
 *   origin (matrix entries, i.e. Ixy = -sum(m x y)), all in joint frame i.
 *   Friction torque: viscous*qd + coulomb*clamp(qd/coulomb_band, -1, 1).
 *   Armature (reflected rotor inertia, gear_ratio^2 * rotor inertia) adds armature*qdd.
 */
#ifndef FFWD_H
#define FFWD_H

#include <stdint.h>
#include "ffwd_config.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum ffwd_status {
    FFWD_OK = 0,
    FFWD_E_ARG = 1,        /* null pointer, or argument out of range (e.g. |q| >= 2^20, 2^14 in float) */
    FFWD_E_NONFINITE = 2,  /* NaN or Inf in an input */
    FFWD_E_MODEL = 3,      /* model fails ffwd_model_check, or work not bound to this model */
    FFWD_E_SINGULAR = 4,   /* a matrix that must be invertible is not */
    FFWD_E_LIMIT = 5,      /* a limit needed by the function is missing or violated */
    FFWD_E_INFEASIBLE = 6  /* no admissible solution (e.g. path not feasible) */
} ffwd_status;

enum { FFWD_REVOLUTE = 0, FFWD_PRISMATIC = 1 };

/* bits of ffwd_joint.has_limits */
enum {
    FFWD_LIM_POSITION = 1u,
    FFWD_LIM_VELOCITY = 2u,
    FFWD_LIM_ACCELERATION = 4u,
    FFWD_LIM_JERK = 8u,
    FFWD_LIM_TORQUE = 16u
};

typedef struct ffwd_joint {
    int32_t type;          /* FFWD_REVOLUTE or FFWD_PRISMATIC */
    int32_t parent;        /* index of the parent joint, -1 for the base; must be < own index */
    ffwd_real rot[9];      /* parent joint frame -> this joint frame at q = 0 (see above) */
    ffwd_real pos[3];
    ffwd_real axis[3];     /* unit vector in this joint frame */
    ffwd_real inertia[10]; /* body inertial parameters (see above) */
    ffwd_real armature;    /* reflected rotor inertia [kg m^2 or kg] */
    ffwd_real viscous;     /* [N m s/rad or N s/m] */
    ffwd_real coulomb;     /* [N m or N] */
    ffwd_real coulomb_band;/* velocity band of the Coulomb ramp, > 0 */
    uint32_t has_limits;   /* FFWD_LIM_* bits of the limits below that are set */
    ffwd_real q_min, q_max, v_max, a_max, j_max, tau_max;
} ffwd_joint;

typedef struct ffwd_model {
    uint32_t dof;                   /* 1 .. FFWD_MAX_DOF */
    ffwd_real gravity[3];           /* gravity acceleration in the base frame, e.g. {0, 0, -9.81} */
    ffwd_joint joint[FFWD_MAX_DOF];
    int32_t tool_parent;            /* joint whose body carries the tool frame */
    ffwd_real tool_rot[9];          /* tool frame relative to that joint frame, same convention as rot/pos */
    ffwd_real tool_pos[3];
    ffwd_real payload[10];          /* default payload as 10 parameters in the tool_parent joint frame */
} ffwd_model;

/* Payload double buffer shared between one writer (non-real-time) and the real-time
 * readers. Readers never wait; ffwd_payload_set may wait for a reader still using
 * the buffer it wants to overwrite. Define FFWD_NO_ATOMICS for a single-threaded
 * build without C11 atomics. */
typedef struct ffwd_payload_box {
    ffwd_real buf[2][10];
#if defined(FFWD_NO_ATOMICS) || defined(__cplusplus) || !defined(__STDC_VERSION__) \
    || __STDC_VERSION__ < 201112L || defined(__STDC_NO_ATOMICS__)
    volatile uint32_t state;       /* same size and alignment as the atomic word */
#else
#define FFWD_BOX_ATOMIC 1
    _Atomic uint32_t state;
#endif
} ffwd_payload_box;

/* scratch: per joint 32 cached constants, 30 per-call body state, 48 composite /
 * articulated-body data, 5 for the joint angles, 4 subtree constants; plus the tool body,
 * cached tool and payload constants and temporaries (they keep the stack small) */
#define FFWD_WORK_REALS (FFWD_MAX_DOF * 120 + 176)

typedef struct ffwd_work {
    const ffwd_model *model;        /* the model this work was checked against */
    ffwd_payload_box *payload;      /* NULL: use model->payload */
    uint32_t stamp;                 /* set by ffwd_work_init */
    ffwd_real scratch[FFWD_WORK_REALS];
} ffwd_work;

/* ---- model and work ---------------------------------------------------------- */
const char *ffwd_status_str(ffwd_status s);
/* Checks a model filled in by hand: dof in 1..FFWD_MAX_DOF, parent in [-1, own index),
 * joint type known, every number finite (fields of unset limits are ignored), axes unit
 * (1e-6; float 1e-5), rot/tool_rot orthonormal with det +1 (1e-9; float 1e-4), mass > 0,
 * inertia about the COM positive definite with principal moments satisfying the
 * triangle inequality, drive parameters >= 0 and coulomb_band > 0, set limits positive
 * with q_min < q_max, no unknown has_limits bits, tool_parent in range, payload all
 * zero or a valid body. FFWD_E_MODEL when a rule fails. */
ffwd_status ffwd_model_check(const ffwd_model *m);
/* Checks m, caches per-joint constants in w and binds w to m. Every other call needs
 * (m, w) bound this way (else FFWD_E_MODEL). Call it again after changing m. */
ffwd_status ffwd_work_init(ffwd_work *w, const ffwd_model *m);
/* Build facts for loaders: FFWD_MAX_DOF, sizeof(ffwd_real), sizeof(ffwd_model), sizeof(ffwd_work). */
void ffwd_build_info(uint32_t *max_dof, uint32_t *real_size, uint32_t *model_size, uint32_t *work_size);

/* ---- payload swap -------------------------------------------------------------- */
/* Fills both buffers with the model's default payload. */
ffwd_status ffwd_payload_init(ffwd_payload_box *box, const ffwd_model *m);
/* New payload: mass, centre of mass in the tool frame, inertia about the centre of
 * mass in tool-frame axes {Ixx, Ixy, Ixz, Iyy, Iyz, Izz}. Mass 0 removes it. */
ffwd_status ffwd_payload_set(ffwd_payload_box *box, const ffwd_model *m, ffwd_real mass,
                             const ffwd_real com[3], const ffwd_real inertia[6]);
/* Makes w's calls read the payload from box (NULL: back to the model's default). */
ffwd_status ffwd_work_use_payload(ffwd_work *w, ffwd_payload_box *box);

/* ---- dynamics -------------------------------------------------------------------- */
ffwd_status ffwd_inverse_dynamics(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                                  const ffwd_real *qd, const ffwd_real *qdd, ffwd_real *tau);
ffwd_status ffwd_gravity_torque(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *tau);
/* inertial = M(q) qdd (armature included), velocity = C(q, qd) qd, gravity = g(q),
 * friction = drive friction at qd; they sum to ffwd_inverse_dynamics. */
ffwd_status ffwd_torque_parts(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                              const ffwd_real *qd, const ffwd_real *qdd, ffwd_real *inertial,
                              ffwd_real *velocity, ffwd_real *gravity, ffwd_real *friction);
/* M: dof x dof, row-major, armature on the diagonal. */
ffwd_status ffwd_mass_matrix(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *M);
/* qdd from tau, friction included. */
ffwd_status ffwd_forward_dynamics(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                                  const ffwd_real *qd, const ffwd_real *tau, ffwd_real *qdd);

/* ---- kinematics ------------------------------------------------------------------ */
/* T: 4x4 row-major homogeneous transform of the tool frame in the base frame. */
ffwd_status ffwd_tool_pose(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *T);
/* J: 6 x dof row-major, rows vx vy vz wx wy wz: linear velocity of the tool-frame
 * origin and angular velocity, both in the base frame. */
ffwd_status ffwd_tool_jacobian(const ffwd_model *m, ffwd_work *w, const ffwd_real *q, ffwd_real *J);

/* ---- identification -------------------------------------------------------------- */
/* Y: dof x (13*dof) row-major with Y * theta = inverse dynamics, theta per joint j at
 * columns 13j .. 13j+12: the 10 inertial parameters of body j, then armature,
 * viscous, coulomb. The payload is part of body tool_parent's parameters. */
ffwd_status ffwd_regressor(const ffwd_model *m, ffwd_work *w, const ffwd_real *q,
                           const ffwd_real *qd, const ffwd_real *qdd, ffwd_real *Y);

#ifdef __cplusplus
}
#endif

#include "ffwd_governor.h"
#include "ffwd_plant.h"

#endif /* FFWD_H */
