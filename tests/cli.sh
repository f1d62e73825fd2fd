#!/bin/sh
# cli.sh - command-line behaviour: exit codes, help, diagnostics on stderr,
# whole-or-nothing output.  Run by `make check` with RIGMAT=path/to/rigmat.
set -u
R=${RIGMAT:-build/rigmat}
DEMO=examples/balancer.yaml
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT INT TERM
pass=0
fail=0

ok() { pass=$((pass + 1)); }
bad() { fail=$((fail + 1)); echo "FAIL: $*" >&2; }

# expect CODE DESCRIPTION -- command...
expect() {
    want=$1; what=$2; shift 3
    "$@" >"$T/out" 2>"$T/err"
    got=$?
    if [ "$got" = "$want" ]; then ok; else bad "$what: exit $got, want $want"; sed 's/^/  | /' "$T/err" >&2; fi
}

# bounded COMMAND...: at most 5 s and 1 GiB of address space (as tests/hostile.sh).
# A sanitized build reserves terabytes of shadow address space, so there the
# address-space bound is left out and only the time bound holds.
sanitized=0
if ASAN_OPTIONS=help=1 "$R" --version 2>&1 | grep -q AddressSanitizer; then sanitized=1; fi
bounded() {
    (
        [ "$sanitized" = 1 ] || ulimit -v 1048576 2>/dev/null
        OPENBLAS_NUM_THREADS=1 exec timeout 5 "$@"
    )
}

has() { # has FILE PATTERN DESCRIPTION
    if grep -q -- "$2" "$1"; then ok; else bad "$3: '$2' not in $1"; sed 's/^/  | /' "$1" >&2; fi
}

expect 0 "top-level help" -- "$R" --help
has "$T/out" "usage: rigmat" "help goes to stdout"
expect 0 "version" -- "$R" --version
has "$T/out" "rigmat [0-9]" "version line"
expect 2 "no command" -- "$R"
expect 2 "unknown command" -- "$R" frobnicate
has "$T/err" "unknown command" "unknown command message"
expect 0 "check help" -- "$R" check --help
has "$T/out" "usage:" "check help text"
expect 2 "unknown option" -- "$R" check "$DEMO" --no-such-option
expect 2 "missing file" -- "$R" check
expect 4 "model file does not exist" -- "$R" check "$T/nope.yaml"
expect 4 "model is a folder" -- "$R" check "$T"

expect 0 "demo checks" -- "$R" check "$DEMO"
has "$T/out" "tilt" "summary names the tilt joint"
expect 0 "demo json" -- "$R" check "$DEMO" --format json
expect 2 "bad format" -- "$R" check "$DEMO" --format yamlish

# A broken model: exit 1, FILE:LINE:COL: error: on stderr, nothing on stdout.
printf 'rigmat: 1\nbodies:\n  b: {mass: 3 m}\n' >"$T/bad.yaml"
expect 1 "bad model" -- "$R" check "$T/bad.yaml"
has "$T/err" "bad.yaml:3:[0-9]*: error: " "diagnostic format"
if [ -s "$T/out" ]; then bad "bad model printed a result"; else ok; fi

# regression (fuzz_pipeline leak): a --set value with a duplicate key is
# refused, and under the sanitizer build nothing leaks (exit 1, not 23)
expect 1 "--set value with a duplicate key" -- "$R" check "$DEMO" --set 'bodies.wheel={mass: 1 kg, mass: 2 kg}'
has "$T/err" "duplicate key 'mass'" "duplicate key in --set value"

# Output is written whole or not at all.
expect 0 "-o writes a file" -- "$R" check "$DEMO" -o "$T/sum.txt"
if [ -s "$T/sum.txt" ]; then ok; else bad "-o file empty"; fi
cp "$T/sum.txt" "$T/before.txt"
expect 1 "bad model with -o" -- "$R" check "$T/bad.yaml" -o "$T/sum.txt"
if cmp -s "$T/sum.txt" "$T/before.txt"; then ok; else bad "failed run changed the -o file"; fi
RIGMAT_TEST_WRITE_FAIL=10 "$R" check "$DEMO" -o "$T/sum.txt" >/dev/null 2>"$T/err"
if [ $? = 4 ]; then ok; else bad "injected write fault: want exit 4"; fi
if cmp -s "$T/sum.txt" "$T/before.txt"; then ok; else bad "injected write fault changed the file"; fi
if ls "$T" | grep -q 'tmp-'; then bad "temporary file left behind"; else ok; fi
expect 4 "-o into a missing folder" -- "$R" check "$DEMO" -o "$T/no/such/dir/out.txt"
if [ -w /dev/full ]; then
    "$R" check "$DEMO" >/dev/full 2>"$T/err"
    if [ $? = 4 ]; then ok; else bad "/dev/full: want exit 4"; fi
    "$R" check "$DEMO" -o /dev/full 2>"$T/err"
    if [ $? = 4 ]; then ok; else bad "-o /dev/full: want exit 4"; fi
fi
"$R" check "$DEMO" -o /dev/stdout >"$T/viastdout" 2>"$T/err"
if [ $? = 0 ] && [ -s "$T/viastdout" ]; then ok; else bad "-o /dev/stdout"; fi

# A link is never renamed over: one to an open stream is written in place,
# one to a regular file has its target replaced and stays a link.
ln -s /proc/self/fd/1 "$T/fdlink"
"$R" check "$DEMO" -o "$T/fdlink" >"$T/viafd" 2>"$T/err"
if [ $? = 0 ] && [ -L "$T/fdlink" ] && [ -s "$T/viafd" ]; then ok; else bad "-o link to stdout"; fi
: >"$T/target.txt"
ln -s target.txt "$T/filelink"
"$R" check "$DEMO" -o "$T/filelink" 2>"$T/err"
if [ $? = 0 ] && [ -L "$T/filelink" ] && [ -s "$T/target.txt" ]; then ok; else bad "-o link to a file"; fi

# Later stages, when present.
if "$R" --help | grep -q '^  linearize'; then
    expect 0 "linearize demo" -- "$R" linearize "$DEMO"
    expect 0 "linearize demo json" -- "$R" linearize "$DEMO" --format json
    has "$T/out" '"order_hash"' "linearize json has order_hash"
    expect 1 "linearize bad model" -- "$R" linearize "$T/bad.yaml"
fi
if "$R" --help | grep -q '^  discretize'; then
    expect 0 "discretize demo" -- "$R" discretize "$DEMO" --rate 200Hz
    expect 0 "discretize demo json" -- "$R" discretize "$DEMO" --period 5ms --format json
    has "$T/out" '"Qd"' "discretize json has Qd"
    expect 2 "discretize without rate" -- "$R" discretize "$DEMO"
    expect 2 "rate in rad/s" -- "$R" discretize "$DEMO" --rate 100rad/s
    # regression (fuzz_pipeline): an overflowing variance is an error, never "inf"
    expect 3 "overflowing Rd, text" -- "$R" discretize "$DEMO" --rate 100Hz --set sensors.gyro.gain=-1e308
    has "$T/err" "not finite" "overflowing Rd message"
    if grep -q inf "$T/out"; then bad "inf printed"; else ok; fi

    # issue 10, item 1: a delay is bounded by the states it implies, refused
    # fast (5 s, 1 GiB of address space, as tests/hostile.sh) with exit 2
    expect 2 "delay of 1e9 samples" -- bounded "$R" discretize "$DEMO" --rate 1kHz --delay 1e9
    has "$T/err" "above the limit of 1024 states" "delay limit message"
    if [ -s "$T/out" ]; then bad "refused delay printed a result"; else ok; fi
    {
        printf 'rigmat: 1\nbodies:\n  m: {mass: 1 kg}\n'
        printf 'joints:\n  x: {type: slider, parent: ground, child: m, axis: [1, 0]}\nforces:\n'
        for i in 1 2 3 4; do printf '  f%s: {on: m, at: [0, 0], direction: [1, 0]}\n' "$i"; done
        printf 'sensors:\n  p: {measures: position, of: x}\n'
        printf 'operating_point:\n  coordinates: {x: 0 m}\n  rates: {}\n'
        printf '  inputs: {f1: 0 N, f2: 0 N, f3: 0 N, f4: 0 N}\n'
    } >"$T/four.yaml"
    expect 0 "four inputs, delay 2" -- bounded "$R" discretize "$T/four.yaml" --rate 1kHz --delay 2
    expect 2 "four inputs, 2^31 states" -- bounded "$R" discretize "$T/four.yaml" --rate 1kHz --delay 536870911
    has "$T/err" "needs 2147483646 states" "2^31-state delay message"

    # issue 10, item 4: stiff process noise is right (tests/ref/gen_stiff_noise.py:
    # Qd = diag(5.0e-19, 5.0e8) for 1e-9 kg on 1e18 N/m with 1 N*s/m) or refused
    stiff() { # stiff MASS STIFFNESS DAMPING
        printf 'rigmat: 1\ngravity: 0 m/s^2\nbodies:\n  m: {mass: %s kg}\n' "$1"
        printf 'joints:\n  x: {type: slider, parent: ground, child: m, axis: [1, 0]}\n'
        printf 'springs:\n  k: {across: x, stiffness: %s N/m, rest: 0 m}\n' "$2"
        printf 'dampers:\n  c: {across: x, coefficient: %s N*s/m}\n' "$3"
        printf 'forces:\n  w: {on: m, at: [0, 0], direction: [1, 0], role: disturbance, '
        printf 'density: 1 N/sqrt(Hz)}\nsensors:\n  p: {measures: position, of: x, noise: 1 mm}\n'
        printf 'operating_point:\n  coordinates: {x: 0 m}\n  rates: {}\n  inputs: {}\n'
    }
    stiff 1e-9 1e18 1 >"$T/stiff.yaml"
    expect 0 "stiff damped oscillator" -- "$R" discretize "$T/stiff.yaml" --rate 1kHz --format json
    has "$T/out" '"qd_error_bound"' "discretize json has qd_error_bound"
    # 5.0e-19 to 12 digits (it was 1.9e132, labelled exact)
    if grep -Eq '\[(4\.99999999999|5\.00000000000)[0-9]*e-19,' "$T/out"; then ok; else bad "stiff Qd[0][0] is not 5.0e-19"; fi
    stiff 1e-9 1e18 0 >"$T/undamped.yaml"
    expect 3 "stiff undamped oscillator refused" -- "$R" discretize "$T/undamped.yaml" --rate 1kHz
    has "$T/err" "Qd cannot be computed within" "refused Qd message"
    if [ -s "$T/out" ]; then bad "refused Qd printed a result"; else ok; fi
fi

for f in examples/*.yaml; do
    expect 0 "example $f checks" -- "$R" check "$f"
done

echo "cli: $pass passed, $fail failed"
[ "$fail" = 0 ]
