"""Write the C source of the cffi API-mode module ffwd._calls (the helpers of calls.c).

    python calls_build.py OUT.c

CMake runs this at build time and compiles OUT.c as the extension module ffwd._calls;
ffwd/native.py uses it when present and the ABI-mode (libffi) call otherwise."""
import os
import sys

from cffi import FFI

HERE = os.path.dirname(os.path.abspath(__file__))

CDEF = """
typedef struct ffwd_call { void (*fn)(void); void *model; void *work; void *out[4]; } ffwd_call;
int ffwd_call_1_1(const ffwd_call *c, const char *a);
int ffwd_call_3_1(const ffwd_call *c, const char *a, const char *b, const char *d);
int ffwd_call_3_4(const ffwd_call *c, const char *a, const char *b, const char *d);
typedef struct ffwd_batch {
    const char *src[3]; char *dst[4];
    ptrdiff_t src_step; ptrdiff_t dst_step[4]; ptrdiff_t count;
} ffwd_batch;
ptrdiff_t ffwd_call_batch(const ffwd_call *c, int n_in, int n_out, const ffwd_batch *b,
                          int *status);
"""


def main(argv):
    if len(argv) != 1:
        print("usage: calls_build.py OUT.c", file=sys.stderr)
        return 2
    with open(os.path.join(HERE, "calls.c"), encoding="utf-8") as f:
        source = f.read()
    ffi = FFI()
    ffi.cdef(CDEF)
    ffi.set_source("ffwd._calls", source)
    ffi.emit_c_code(argv[0])
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
