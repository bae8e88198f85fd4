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
 * call converts only its inputs. */

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
