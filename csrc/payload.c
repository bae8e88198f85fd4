/* payload.c - run-time payload swap without locks.
 *
 * One writer (ffwd_payload_set, not real-time) and any number of real-time readers
 * (every dynamics call of a work bound to the box). The box holds two buffers and one
 * atomic 32-bit word:
 *   bit 0        index A of the active buffer
 *   bits 1..15   number of readers holding the active buffer
 *   bits 16..30  number of readers holding the other (inactive) buffer
 * Reader: one fetch_add(2) counts it on the active buffer and returns A in the same
 *   atomic step; it copies the 10 parameters, then releases with a CAS that
 *   decrements the count field its buffer is in now (the active field if no flip
 *   happened meanwhile, the other field if one did). The writer flips at most once
 *   while a reader holds a buffer (a second flip would wait for that reader), so
 *   the reader never waits; a CAS retry only happens when another thread changed
 *   the word in between (lock-free).
 * Writer: waits until no reader holds the inactive buffer, writes it, then flips
 *   with a CAS that toggles bit 0 and swaps the two counts. No reader can start on
 *   the inactive buffer, so the writer never overwrites a buffer being read and a
 *   reader never sees a torn payload.
 * With FFWD_NO_ATOMICS the same layout is used single-threaded with plain stores.
 */
#if !defined(FFWD_NO_ATOMICS)
#include <stdatomic.h>
#endif
#include "spatial.h"
#if !defined(FFWD_NO_ATOMICS) && !defined(FFWD_BOX_ATOMIC)
#error "payload.c needs C11 atomics (-std=c11), or define FFWD_NO_ATOMICS for a single-threaded build"
#endif

#define HOLD_ACTIVE 2u
#define HOLD_OTHER 0x10000u
#define COUNT_MASK 0x7fffu

#if defined(FFWD_NO_ATOMICS)
static uint32_t state_load(ffwd_payload_box *b) { return b->state; }
#else
static uint32_t state_load(ffwd_payload_box *b) { return atomic_load(&b->state); }
#endif

/* th' and J of K(tool_parent) for body tool_parent (TP area, saved by ffwd_work_init)
 * plus a payload rotated into the aligned tool_parent frame, one copy of the code */
static FFWD_NOINLINE void tool_body_set(const ffwd_model *m, ffwd_work *w, const ffwd_real *pay)
{
    const ffwd_real *base = w->scratch + FFWD_OFF_TP;
    ffwd_real *out = w->scratch + FFWD_OFF_K + FFWD_K_STRIDE * (uint32_t)m->tool_parent;
    int k;
    for (k = 0; k < 10; k++)
        out[FFWD_K_TH + k] = base[k] + pay[k];
    second_moment(out + FFWD_K_TH, out + FFWD_K_J);
}

void ffwd_fill_tool_body_(const ffwd_model *m, ffwd_work *w)
{
    tool_body_set(m, w, w->scratch + FFWD_OFF_PAY);
    ffwd_subtree_(m, w);
}

/* Body tool_parent plus the payload of w's box (see spatial.h): the box's payload is
 * copied under the hold, then rotated; the subtree constants follow where its mass or
 * first moment changed. Without a box K(tool_parent) already holds the body with the
 * model's payload (ffwd_fill_tool_body_). */
void ffwd_load_tool_body_(const ffwd_model *m, ffwd_work *w)
{
    ffwd_payload_box *box = w->payload;
    ffwd_real raw[10], rot[10];
    int k;
    if (box == NULL)
        return;
    {
#if defined(FFWD_NO_ATOMICS)
        uint32_t idx = box->state & 1u;
        for (k = 0; k < 10; k++)
            raw[k] = box->buf[idx][k];
#else
        uint32_t old = atomic_fetch_add(&box->state, HOLD_ACTIVE);
        uint32_t idx = old & 1u, cur, nw;
        for (k = 0; k < 10; k++)
            raw[k] = box->buf[idx][k];
        cur = atomic_load(&box->state);
        do {
            nw = ((cur & 1u) == idx) ? cur - HOLD_ACTIVE : cur - HOLD_OTHER;
        } while (!atomic_compare_exchange_weak(&box->state, &cur, nw));
#endif
    }
    params_rotate_t(w->scratch + FFWD_OFF_ATP, raw, rot);
    tool_body_set(m, w, rot);
    {
        /* the subtree constants again where mass or first moment changed */
        const ffwd_real *th = w->scratch + FFWD_OFF_K + FFWD_K_STRIDE * (uint32_t)m->tool_parent + FFWD_K_TH;
        const ffwd_real *key = w->scratch + FFWD_OFF_SUBKEY;
        if ((th[0] != key[0]) | (th[1] != key[1]) | (th[2] != key[2]) | (th[3] != key[3]))
            ffwd_subtree_(m, w);
    }
}

ffwd_status ffwd_payload_init(ffwd_payload_box *box, const ffwd_model *m)
{
    ffwd_status st;
    int k;
    if (box == NULL || m == NULL)
        return FFWD_E_ARG;
    st = ffwd_model_check(m);
    if (st != FFWD_OK)
        return st;
    for (k = 0; k < 10; k++) {
        box->buf[0][k] = m->payload[k];
        box->buf[1][k] = m->payload[k];
    }
#if defined(FFWD_NO_ATOMICS)
    box->state = 0u;
#else
    atomic_init(&box->state, 0u);
#endif
    return FFWD_OK;
}

/* 10 parameters of the payload in the tool_parent joint frame. */
static ffwd_status payload_params(const ffwd_model *m, ffwd_real mass, const ffwd_real com[3],
                                  const ffwd_real inertia[6], ffwd_real th[10])
{
    ffwd_real tt[10], cc;
    const ffwd_real *c = com, *I = inertia;
    int k;
    if (!ffwd_finite_(&mass, 1) || !ffwd_finite_(com, 3) || !ffwd_finite_(inertia, 6))
        return FFWD_E_NONFINITE;
    if (mass < FR(0))
        return FFWD_E_ARG;
    if (mass == FR(0)) {
        for (k = 0; k < 10; k++)
            th[k] = FR(0);
        return FFWD_OK;
    }
    /* about the COM first, to validate the inertia as given */
    tt[0] = mass; tt[1] = tt[2] = tt[3] = FR(0);
    for (k = 0; k < 6; k++)
        tt[4 + k] = I[k];
    if (!ffwd_payload_params_ok_(tt))
        return FFWD_E_ARG;
    /* about the tool-frame origin (parallel axis), still in tool axes */
    cc = v3_dot(c, c);
    tt[1] = mass * c[0]; tt[2] = mass * c[1]; tt[3] = mass * c[2];
    tt[4] = I[0] + mass * (cc - c[0] * c[0]);
    tt[5] = I[1] - mass * c[0] * c[1];
    tt[6] = I[2] - mass * c[0] * c[2];
    tt[7] = I[3] + mass * (cc - c[1] * c[1]);
    tt[8] = I[4] - mass * c[1] * c[2];
    tt[9] = I[5] + mass * (cc - c[2] * c[2]);
    params_to_parent(m->tool_rot, m->tool_pos, tt, th);
    return FFWD_OK;
}

ffwd_status ffwd_payload_set(ffwd_payload_box *box, const ffwd_model *m, ffwd_real mass,
                             const ffwd_real com[3], const ffwd_real inertia[6])
{
    ffwd_real th[10];
    ffwd_status st;
    uint32_t cur, inactive;
    int k;
    if (box == NULL || m == NULL || com == NULL || inertia == NULL)
        return FFWD_E_ARG;
    st = ffwd_model_check(m);
    if (st != FFWD_OK)
        return st;
    st = payload_params(m, mass, com, inertia, th);
    if (st != FFWD_OK)
        return st;
    /* wait until the readers that still hold the inactive buffer are done */
    cur = state_load(box);
    while (((cur >> 16) & COUNT_MASK) != 0u)
        cur = state_load(box);
    inactive = (cur & 1u) ^ 1u;
    for (k = 0; k < 10; k++)
        box->buf[inactive][k] = th[k];
#if defined(FFWD_NO_ATOMICS)
    box->state = inactive;
#else
    {
        uint32_t nw;
        do {
            uint32_t act = (cur >> 1) & COUNT_MASK;   /* readers of the old active buffer */
            nw = inactive | (act << 16);             /* other count was 0: new active count 0 */
        } while (!atomic_compare_exchange_weak(&box->state, &cur, nw));
    }
#endif
    return FFWD_OK;
}
