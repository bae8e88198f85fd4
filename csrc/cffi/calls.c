/* ffwd._calls: one call of a libffwd computation through its address, for the cffi
 * loader (ffwd/native.py), compiled once into a cffi API-mode module so that a call
 * costs a direct C call instead of a libffi one.
 *
 * It serves any libffwd build (any FFWD_MAX_DOF, double or float): the model, the work
 * area and the arrays pass through as untyped pointers, and the function is called
 * through a pointer type of the same shape whose pointer arguments are void *. Every
 * ABI this runs on passes all data pointers alike, as libffi (the ABI-mode call this
 * replaces) assumes as well; ffwd/native.py checks the declared argument list of each
 * function against the shape it calls it with. What stays the same from call to call
 * (function, model, work area, output arrays) is set once in an ffwd_call, so that a
 * call converts only its inputs. A batch runs as one call (ffwd_call_batch). */

#include <stddef.h>

typedef struct ffwd_call {
    void (*fn)(void);  /* the ffwd_* function of the library */
    void *model;       /* its const ffwd_model * */
    void *work;        /* its ffwd_work * */
    void *out[4];      /* the output arrays (as many as the function has) */
} ffwd_call;

typedef int (*ffwd_fn_1_1)(const void *, void *, const void *, void *);
typedef int (*ffwd_fn_3_1)(const void *, void *, const void *, const void *, const void *,
                           void *);
typedef int (*ffwd_fn_3_4)(const void *, void *, const void *, const void *, const void *,
                           void *, void *, void *, void *);

/* f(model, work, a, out[0]) */
static int ffwd_call_1_1(const ffwd_call *c, const char *a)
{
    return ((ffwd_fn_1_1)c->fn)(c->model, c->work, a, c->out[0]);
}

/* f(model, work, a, b, d, out[0]) */
static int ffwd_call_3_1(const ffwd_call *c, const char *a, const char *b, const char *d)
{
    return ((ffwd_fn_3_1)c->fn)(c->model, c->work, a, b, d, c->out[0]);
}

/* f(model, work, a, b, d, out[0], out[1], out[2], out[3]) */
static int ffwd_call_3_4(const ffwd_call *c, const char *a, const char *b, const char *d)
{
    return ((ffwd_fn_3_4)c->fn)(c->model, c->work, a, b, d,
                                c->out[0], c->out[1], c->out[2], c->out[3]);
}

/* The samples of a batch: sample i reads src[j] + i * src_step and writes
 * dst[j] + i * dst_step[j] (steps in bytes). */
typedef struct ffwd_batch {
    const char *src[3];
    char *dst[4];
    ptrdiff_t src_step;
    ptrdiff_t dst_step[4];
    ptrdiff_t count;
} ffwd_batch;

/* f(model, work, inputs, outputs) over the samples of b, in order, with n_in inputs and
 * n_out outputs as above. Returns the number of samples done: count, or the index of the
 * first sample f refused, whose status is then in *status (else 0; -1 for an n_in, n_out
 * pair it has no call for). */
static ptrdiff_t ffwd_call_batch(const ffwd_call *c, int n_in, int n_out,
                                 const ffwd_batch *b, int *status)
{
    ptrdiff_t i;
    *status = 0;
    for (i = 0; i < b->count; ++i) {
        const char *x0 = b->src[0] + i * b->src_step;
        int st;
        if (n_in == 1 && n_out == 1) {
            st = ((ffwd_fn_1_1)c->fn)(c->model, c->work, x0, b->dst[0] + i * b->dst_step[0]);
        } else if (n_in == 3 && (n_out == 1 || n_out == 4)) {
            const char *x1 = b->src[1] + i * b->src_step;
            const char *x2 = b->src[2] + i * b->src_step;
            if (n_out == 1) {
                st = ((ffwd_fn_3_1)c->fn)(c->model, c->work, x0, x1, x2,
                                          b->dst[0] + i * b->dst_step[0]);
            } else {
                st = ((ffwd_fn_3_4)c->fn)(c->model, c->work, x0, x1, x2,
                                          b->dst[0] + i * b->dst_step[0],
                                          b->dst[1] + i * b->dst_step[1],
                                          b->dst[2] + i * b->dst_step[2],
                                          b->dst[3] + i * b->dst_step[3]);
            }
        } else {
            st = -1;
        }
        if (st != 0) {
            *status = st;
            return i;
        }
    }
    return b->count;
}
