#!/bin/sh
# Local build of the ffwd core and the C tests with gcc directly (the project build is CMake).
# usage: tests/c/build_local.sh [extra CFLAGS...]   e.g. -DFFWD_SINGLE, -DFFWD_MAX_DOF=32
# Objects and test programs go to ${OUT:-/tmp/ffwd_c}.
set -e
cd "$(dirname "$0")/../.."
OUT=${OUT:-/tmp/ffwd_c}
CC=${CC:-gcc}
mkdir -p "$OUT"
W="-O2 -Wall -Wextra -Wpedantic -Wshadow -Wconversion -Werror -Icsrc/include -Icsrc"
# as in CMakeLists.txt: sqrt without errno, so the core needs no libm
CORE="-fno-math-errno"
OBJS=""
for f in model payload dynamics kinematics regressor trig plant governor; do
    std=c99; [ $f = payload ] && std=c11
    $CC -std=$std $W $CORE "$@" -c csrc/$f.c -o "$OUT/$f.o"
    OBJS="$OBJS $OUT/$f.o"
done
# the core must not need libm
if nm "$OUT"/*.o | grep -E ' U (sin|cos|sqrt|fabs|floor|round|lround|rint|nearbyint|fmod|pow|exp|log)f?$'; then
    echo "core objects need libm"; exit 1
fi
ar rcs "$OUT/libffwd_core.a" $OBJS
# every tests/c/test_*.c, like the CMake build (C11 where it uses stdatomic.h)
for t in tests/c/test_*.c; do
    name=$(basename "$t" .c)
    case $name in
        test_payload_single)   # includes csrc/payload.c itself, built without atomics
            $CC -std=c99 $W "$@" "$t" "$OUT/libffwd_core.a" -o "$OUT/$name" -lm ;;
        *)
            std=c99; grep -q stdatomic.h "$t" && std=c11
            $CC -std=$std $W -Itests/c "$@" "$t" "$OUT/libffwd_core.a" -o "$OUT/$name" -lpthread -lm ;;
    esac
done
echo "built in $OUT"
