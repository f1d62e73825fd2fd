#!/bin/sh
# firmware.sh - `rigmat firmware` (README.md, "Firmware"), run by
# `make check-firmware`:
#   - the generated NAME.h and NAME.c of every example and test model,
#     double and float,
#     compile with gcc -std=c99 -Wall -Wextra -Wpedantic -Werror, and the
#     float form for a Cortex-M4F with arm-none-eabi-gcc (skipped with a
#     message only when that compiler is absent); nm shows no undefined
#     symbol beyond sin, cos, sqrt, atan2, fabs (float forms for float) and
#     memcpy, memset.  On the host, sin and cos are compiled as calls
#     (-fno-builtin-sin ...): gcc otherwise fuses a sine and a cosine of one
#     angle into glibc's sincos, which is not in the source;
#   - the operation counts of f and h in the header are those of the
#     generated code, counted (tests/fw_count.c);
#   - f, h and the exact Jacobians equal the library's (tests/fw_host.c
#     jac: 1e-12 relative in double, 1e-5 in float), and a planted change
#     in the generated table is caught;
#   - the generated steady-state Kalman filter equals a numpy filter step
#     for step (tests/ref/firmware_kf.py), with and without a
#     cross-covariance S;
#   - the EKF's NEES on the balancer from 10 deg of tilt (tests/fw_host.c
#     ekf: Bar-Shalom, Li, Kirubarajan 2001, sec. 5.4.2), with a negative
#     control the test must reject;
#   - usage errors, and both files written or neither.
# Environment: RIGMAT (the program), RIGMAT_LIB (librigmat.a), FW_LIBS (its
# link flags), WRITE_SHIM (tests/shim/writefail.c built), PYTHON.
set -u
R=${RIGMAT:-build/rigmat}
LIB=${RIGMAT_LIB:-build/plain/librigmat.a}
LIBS=${FW_LIBS:-$(pkg-config --libs gsl yaml-0.1) -lm -lpthread}
PY=${PYTHON:-/usr/bin/python3}
SHIM=${WRITE_SHIM:-build/shim/writefail.so}
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
pass=0
fail=0
ok() { pass=$((pass + 1)); }
bad() { fail=$((fail + 1)); echo "FAIL $*"; }
HOSTCC="gcc -std=c99 -Wall -Wextra -Wpedantic -Werror -O2"
INC="-Iinclude -Isrc/util -Isrc/model -Isrc/mech -Isrc/sample -Isrc/study -Isrc/emit"
ARMCC="arm-none-eabi-gcc -std=c99 -Wall -Wextra -Wpedantic -mcpu=cortex-m4 -mthumb \
-mfpu=fpv4-sp-d16 -mfloat-abi=hard -O2 -Werror -Wdouble-promotion"
if command -v arm-none-eabi-gcc >/dev/null 2>&1; then ARM=1; else
    ARM=0
    echo "firmware.sh: arm-none-eabi-gcc is not installed: the Cortex-M4F builds are skipped" \
         "(apt-get install gcc-arm-none-eabi libnewlib-arm-none-eabi)"
fi

# undefined symbols of object $1 beyond the allowed list $2 (words)
only_allowed() {
    nm -u "$1" | awk -v allow=" $2 " '{ if (index(allow, " " $2 " ") == 0) { print $2; bad = 1 } }
        END { exit bad }'
}

# fwm.c with the real pass's operations counted into fw_ops (tests/fw_count.c)
count_copy() {
    sed -e '/pass 1/,/pass 2/{
s/^#define SADD(a, b) .*/#define SADD(a, b) fw_n(\&fw_ops[0], (a) + (b))/
s/^#define SSUB(a, b) .*/#define SSUB(a, b) fw_n(\&fw_ops[0], (a) - (b))/
s/^#define SMUL(a, b) .*/#define SMUL(a, b) fw_n(\&fw_ops[1], (a) * (b))/
s/^#define SKM(k, a) .*/#define SKM(k, a) fw_n(\&fw_ops[1], (k) * (a))/
s/^#define SDIV(a, b) .*/#define SDIV(a, b) fw_n(\&fw_ops[2], (a) \/ (b))/
s/^#define SSQRT(a) \(.*\)/#define SSQRT(a) fw_n(\&fw_ops[3], \1)/
s/^#define SSIN(a) \(.*\)/#define SSIN(a) fw_n(\&fw_ops[4], \1)/
s/^#define SCOS(a) \(.*\)/#define SCOS(a) fw_n(\&fw_ops[5], \1)/
}' -e 's/^#include <math.h>$/#include <math.h>\
unsigned long fw_ops[6];\
static fwm_real fw_n(unsigned long *c, fwm_real v)\
{\
    ++*c;\
    return v;\
}/' "$1"
}

# the examples, the test models, and tests/firmware/kinds.yaml (every kind
# the examples leave out)
for ex in examples/*.yaml tests/firmware/*.yaml tests/models/*.yaml tests/sensors/*.yaml; do
    base=$(basename "$ex" .yaml)
    if grep -q '^closures:' "$ex"; then
        # a linkage: refused at its first closure, exit 1, nothing written
        "$R" firmware "$ex" --rate 200Hz --name fwm -o "$T/$base-loop" >"$T/out" 2>"$T/err"
        rc=$?
        if [ $rc = 1 ] && grep -q "error: closure '.*' closes a loop" "$T/err" &&
            [ ! -e "$T/$base-loop/fwm.c" ]; then ok
        else bad "$base: a model with closures: want exit 1 and the closure named (got $rc: $(cat "$T/err"))"; fi
        continue
    fi
    for ct in double float; do
        D="$T/$base-$ct"
        if "$R" firmware "$ex" --rate 200Hz --name fwm --ctype "$ct" -o "$D" >"$T/out" 2>"$T/err"
        then ok; else bad "$base $ct: rigmat firmware failed: $(cat "$T/err")"; continue; fi
        if [ "$ct" = float ]; then
            F=-DFW_FLOAT
            allow="sinf cosf sqrtf atan2f fabsf memcpy memset"
            nob="-fno-builtin-sinf -fno-builtin-cosf"
        else
            F=
            allow="sin cos sqrt atan2 fabs memcpy memset"
            nob="-fno-builtin-sin -fno-builtin-cos"
        fi
        if $HOSTCC $nob -c "$D/fwm.c" -o "$D/fwm.o" 2>"$T/err"; then ok
        else bad "$base $ct: gcc: $(head -5 "$T/err")"; continue; fi
        if extra=$(only_allowed "$D/fwm.o" "$allow"); then ok
        else bad "$base $ct: undefined symbols beyond libm's allowed ones: $extra"; fi
        if [ "$ct" = float ] && [ $ARM = 1 ]; then
            if $ARMCC -c "$D/fwm.c" -o "$D/fwm-m4.o" 2>"$T/err"; then ok
            else bad "$base float: arm-none-eabi-gcc: $(head -5 "$T/err")"; fi
            if extra=$(only_allowed "$D/fwm-m4.o" "$allow"); then ok
            else bad "$base float (Cortex-M4F): undefined symbols: $extra"; fi
            if [ "$base" = balancer ]; then
                echo "firmware.sh: balancer, float, Cortex-M4F (arm-none-eabi-size):"
                arm-none-eabi-size "$D/fwm-m4.o"
            fi
        fi
        ekf=
        [ "$base" = balancer ] && [ "$ct" = double ] && ekf=-DFW_EKF
        if $HOSTCC $F $ekf -I"$D" $INC tests/fw_host.c "$D/fwm.c" "$LIB" $LIBS -o "$D/fw_host" \
            2>"$T/err"; then ok; else bad "$base $ct: fw_host: $(head -5 "$T/err")"; continue; fi
        if "$D/fw_host" jac "$ex" >"$T/out" 2>&1; then ok
        else bad "$base $ct: f, h, Jacobians against the library:"; cat "$T/out"; fi
        grep "largest relative error" "$T/out"
        # the operation counts the header states, counted in the real pass
        if [ "$ct" = double ] && grep -q "fwm_u0\[" "$D/fwm.h"; then
            count_copy "$D/fwm.c" >"$D/counted.c"
            if $HOSTCC -I"$D" tests/fw_count.c "$D/counted.c" -lm -o "$D/fw_count" 2>"$T/err" &&
                "$D/fw_count" >"$T/counts" && grep '^ \*   [fh]:' "$D/fwm.h" | cmp -s - "$T/counts"
            then ok; else bad "$base: the operation counts of fwm.h differ from the counted ones"; fi
        fi
        if [ "$ct" = double ] && grep -q "FWM_HAS_FILTERS 1" "$D/fwm.h"; then
            if "$PY" tests/ref/firmware_kf.py "$R" "$D/fw_host" "$ex" 200Hz; then ok
            else bad "$base: the generated Kalman filter differs from numpy's"; fi
        fi
    done
done

# examples with a mode at z = 1 that no noise reaches have no steady-state
# filter: the files say so (and stderr why); with a disturbance added (the
# gusts of tests/ref/test_gains_examples.py) the filter is there and tested
while read -r base gust; do
    D="$T/$base-double"
    if grep -q "FWM_HAS_FILTERS 0" "$D/fwm.h" && grep -q "No Kalman filters" "$D/fwm.h"; then ok
    else bad "$base: the files do not say there are no filters"; fi
    D="$T/$base-gust"
    if "$R" firmware "examples/$base.yaml" --rate 200Hz --name fwm -o "$D" --set "$gust" \
            >/dev/null 2>"$T/err" && grep -q "FWM_HAS_FILTERS 1" "$D/fwm.h" \
            && $HOSTCC -I"$D" $INC tests/fw_host.c "$D/fwm.c" "$LIB" $LIBS -o "$D/fw_host" \
            2>"$T/err"; then ok
    else bad "$base with a gust: $(head -3 "$T/err")"; continue; fi
    if "$PY" tests/ref/firmware_kf.py "$R" "$D/fw_host" "examples/$base.yaml" 200Hz --set "$gust"
    then ok; else bad "$base with a gust: the Kalman filter differs from numpy's"; fi
done <<'EOF'
cart forces.gust={on: carriage, direction: [1, 0], role: disturbance, density: 0.3 N/sqrt(Hz)}
cartpole-rack forces.gust={on: cart, direction: [1, 0], role: disturbance, density: 0.2 N/sqrt(Hz)}
gantry forces.gust={on: trolley, direction: [1, 0], role: disturbance, density: 0.5 N/sqrt(Hz)}
torsion forces.gust={torque_on: flywheel, role: disturbance, density: 0.01 N*m/sqrt(Hz)}
EOF

# the comparison can fail: the balancer's table with 1 % more gravity
D="$T/balancer-double"
sed 's|^\(    [^,]*\), [^,]*, /\* gravity|\1, -9.9, /* gravity|' "$D/fwm.c" >"$T/planted.c"
if cmp -s "$D/fwm.c" "$T/planted.c"; then bad "planted change: the gravity line was not found"
else
    $HOSTCC -I"$D" $INC tests/fw_host.c "$T/planted.c" "$LIB" $LIBS -o "$T/planted" 2>"$T/err"
    if "$T/planted" jac examples/balancer.yaml >"$T/out" 2>&1; then
        bad "a planted 1% change of gravity passed the comparison"
    else ok; fi
fi

# a cross-covariance S: a white disturbance reaches the accelerometer
D="$T/balancer-s"
BUMP='forces.bump={on: chassis, at: [0, 0.3 m], direction: [1, 0], role: disturbance, density: 0.5 N/sqrt(Hz)}'
if "$R" firmware examples/balancer.yaml --rate 200Hz --name fwm -o "$D" --set "$BUMP" >/dev/null \
    && grep -q "fwm_kalman_cross" "$D/fwm.h" \
    && $HOSTCC -I"$D" $INC tests/fw_host.c "$D/fwm.c" "$LIB" $LIBS -o "$D/fw_host" 2>"$T/err"
then ok; else bad "balancer with S: build failed: $(head -5 "$T/err")"; fi
if "$PY" tests/ref/firmware_kf.py "$R" "$D/fw_host" examples/balancer.yaml 200Hz --set "$BUMP"
then ok; else bad "balancer with S: the Kalman filter differs from numpy's"; fi

# the EKF's NEES (prints its own closing line; its counts join ours)
if "$T/balancer-double/fw_host" ekf examples/balancer.yaml 200 >"$T/out" 2>&1; then ok
else bad "EKF NEES test"; fi
cat "$T/out" | grep -v "passed, .* failed"

# the command line
expect() { # expect CODE LABEL -- command...
    want=$1 label=$2
    shift 3
    "$@" >"$T/out" 2>"$T/err"
    got=$?
    if [ "$got" = "$want" ]; then ok; else bad "$label: exit $got, want $want: $(head -3 "$T/err")"; fi
}
expect 0 "firmware help" -- "$R" firmware --help
grep -q -- "--ctype" "$T/out" && ok || bad "firmware help names --ctype"
expect 2 "firmware without -o" -- "$R" firmware examples/balancer.yaml --rate 200Hz
expect 2 "firmware without a rate" -- "$R" firmware examples/balancer.yaml -o "$T/x"
expect 2 "firmware with --ctype int" -- "$R" firmware examples/balancer.yaml --rate 200Hz --ctype int -o "$T/x"
expect 1 "firmware of a bad model" -- "$R" firmware tests/bad/$(ls tests/bad | head -1) --rate 200Hz -o "$T/x"
[ ! -e "$T/x" ] && ok || bad "a failed run made the output folder"
expect 3 "firmware float of a value beyond float" -- "$R" firmware examples/cart.yaml --rate 200Hz \
    --ctype float -o "$T/big" --set 'springs.stiff={across: track, stiffness: 1e40 N/m}'
grep -q "does not fit in a float" "$T/err" && [ ! -e "$T/big" ] && ok \
    || bad "a value beyond float: no message, or files written"
: >"$T/afile"
expect 4 "firmware -o a regular file" -- "$R" firmware examples/balancer.yaml --rate 200Hz -o "$T/afile"
expect 0 "firmware default name" -- "$R" firmware examples/balancer.yaml --period 5ms -o "$T/named"
[ -f "$T/named/aisle_courier_balancing_base.h" ] && [ -f "$T/named/aisle_courier_balancing_base.c" ] \
    && ok || bad "the default NAME is the model's name as an identifier"
# both files or neither: a full disk while writing the second keeps the old pair
if [ -f "$SHIM" ]; then
    D="$T/pair"
    "$R" firmware examples/ball-beam.yaml --rate 200Hz --name fwm -o "$D" >/dev/null 2>&1
    cp "$D/fwm.h" "$T/old.h"
    cp "$D/fwm.c" "$T/old.c"
    hsize=$(wc -c <"$T/old.h")
    LD_PRELOAD="$(cd "$(dirname "$SHIM")" && pwd)/$(basename "$SHIM")" \
        RIGMAT_SHIM_WRITE_FAIL=$((hsize + 2000)) \
        ASAN_OPTIONS="${ASAN_OPTIONS:+$ASAN_OPTIONS:}verify_asan_link_order=0" \
        "$R" firmware examples/balancer.yaml --rate 200Hz --name fwm -o "$D" >/dev/null 2>"$T/err"
    if [ $? = 4 ]; then ok; else bad "injected write fault: want exit 4"; fi
    cmp -s "$D/fwm.h" "$T/old.h" && cmp -s "$D/fwm.c" "$T/old.c" && ok \
        || bad "injected write fault changed a file"
    if ls -A "$D" | grep -qv '^fwm\.[ch]$'; then bad "temporary file left behind"; else ok; fi
else
    bad "write-fault shim $SHIM missing"
fi

echo "firmware: $pass passed, $fail failed"
[ "$fail" = 0 ]
