/* image.c - a controller firmware image for code size only (bench/embedded.py): it links
 * what a control loop of its kind calls, so that the linker (-Wl,--gc-sections) keeps just
 * those functions of the core and what they call. Built three times:
 *   IMAGE_EMPTY        no ffwd call: the C library's start-up alone (subtracted)
 *   IMAGE_FEEDFORWARD  model binding, run-time payload swap, inverse dynamics, gravity
 *   IMAGE_GOVERNOR     the same plus the speed-override governor
 * The model comes from the controller at run time (a volatile pointer), so nothing is
 * folded away; the image is never run. */
#include "ffwd.h"
#include "ffwd_governor.h"

static ffwd_model model;
volatile int image_status;
ffwd_model *volatile image_model = &model;
#if defined(IMAGE_FEEDFORWARD) || defined(IMAGE_GOVERNOR)
static ffwd_work work;
static ffwd_payload_box box;
static ffwd_real q[FFWD_MAX_DOF], qd[FFWD_MAX_DOF], qdd[FFWD_MAX_DOF], tau[FFWD_MAX_DOF];
#endif
#ifdef IMAGE_GOVERNOR
static ffwd_governor gov;
static ffwd_gov_config cfg;
static ffwd_gov_output out;
static ffwd_real dddq[FFWD_MAX_DOF];
#endif

int main(void)
{
#if defined(IMAGE_FEEDFORWARD) || defined(IMAGE_GOVERNOR)
    ffwd_model *m = image_model;
    int st = (int)ffwd_work_init(&work, m);
    st |= (int)ffwd_payload_init(&box, m);
    st |= (int)ffwd_work_use_payload(&work, &box);
    st |= (int)ffwd_payload_set(&box, m, q[0], qd, tau);
    st |= (int)ffwd_inverse_dynamics(m, &work, q, qd, qdd, tau);
    st |= (int)ffwd_gravity_torque(m, &work, q, tau);
#ifdef IMAGE_GOVERNOR
    st |= (int)ffwd_governor_init(&gov, m, &work, &cfg);
    while (ffwd_governor_room(&gov) > 0u)
        st |= (int)ffwd_governor_push(&gov, q, qd, qdd, dddq);
    st |= (int)ffwd_governor_finish(&gov);
    st |= (int)ffwd_governor_step(&gov, qd[0], &out);
#endif
    image_status = st;
    (void)ffwd_status_str((ffwd_status)st);
#else
    image_status = 0;
#endif
    return 0;
}
