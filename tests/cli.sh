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
fi

if "$R" --help | grep -q '^  gains'; then
    G=tests/gains
    expect 0 "gains help" -- "$R" gains --help
    has "$T/out" "weights" "gains help names --weights"
    expect 0 "gains demo" -- "$R" gains "$DEMO" --rate 200Hz
    has "$T/out" "slowest estimator pole" "gains text summary"
    has "$T/out" "emergency stop" "gains text caution"
    expect 0 "gains demo json with weights" -- "$R" gains "$DEMO" --rate 200Hz --format json --weights "$G/balancer.yaml"
    has "$T/out" '"posterior_covariance"' "gains json kalman"
    has "$T/out" '"closed_loop_poles"' "gains json lqr"
    expect 2 "gains without rate" -- "$R" gains "$DEMO"
    expect 2 "gains with tustin" -- "$R" gains "$DEMO" --rate 200Hz --method tustin
    expect 0 "gains with euler, by period" -- "$R" gains "$DEMO" --period 5ms --method euler
    has "$T/out" "method euler" "gains text names the method"
    expect 4 "gains weights file missing" -- "$R" gains "$DEMO" --rate 200Hz --weights "$T/nope.yaml"
    # undetectable and unstabilizable modes: exit 3, the mode named
    expect 3 "gains undetectable mode" -- "$R" gains "$G/unlinked.yaml" --rate 200Hz
    has "$T/err" "z = 1.027.*mostly 'pivot.*not detectable" "undetectable mode named"
    expect 3 "gains unstabilizable mode" -- "$R" gains "$G/unlinked.yaml" --rate 200Hz \
        --weights "$G/unlinked-weights.yaml" --set 'sensors.arm_rate={measures: rate, of: arm, noise: 0.01 rad/s}'
    has "$T/err" "mostly 'pivot.*not stabilizable" "unstabilizable mode named"
    if [ -s "$T/out" ]; then bad "refused gains printed a result"; else ok; fi
    # a free mode without process noise, an integrator without weight
    expect 3 "gains noiseless free mode" -- "$R" gains examples/cart.yaml --rate 200Hz
    has "$T/err" "mostly 'track.position'.*no process noise" "noiseless mode named"
    printf 'states:\n  tilt.angle: 3 deg\ninputs:\n  drive: 0.6\n' >"$T/w0.yaml"
    expect 3 "gains unweighted integrator" -- "$R" gains "$DEMO" --rate 200Hz --weights "$T/w0.yaml"
    has "$T/err" "mostly 'travel.position'.*carries no weight" "unweighted integrator named"
    has "$T/err" "hint: give 'travel.position' a weight" "unweighted integrator hint"
    # bad weights: FILE:LINE:COL, a hint, exit 1, nothing printed
    printf 'states:\n  tilt.angel: 3 deg\ninputs:\n  drive: 0.6\n' >"$T/w1.yaml"
    expect 1 "gains misspelt state" -- "$R" gains "$DEMO" --rate 200Hz --weights "$T/w1.yaml"
    has "$T/err" "w1.yaml:2:3: error: no state 'tilt.angel'" "misspelt state placed"
    has "$T/err" "did you mean 'tilt.angle'" "misspelt state hint"
    if [ -s "$T/out" ]; then bad "bad weights printed a result"; else ok; fi
    printf 'states:\n  tilt.angle: 3 deg\ninputs:\n  driev: 0.6\n' >"$T/w2.yaml"
    expect 1 "gains misspelt input" -- "$R" gains "$DEMO" --rate 200Hz --weights "$T/w2.yaml"
    has "$T/err" "w2.yaml:4:3: error: no control input 'driev'" "misspelt input placed"
    has "$T/err" "did you mean 'drive'" "misspelt input hint"
    has "$T/err" "control input 'drive' has no weight" "missing input weight named"
    printf 'states:\n  tilt.angle: 3 kg\ninputs:\n  drive: 0.6\n  shove: 2 N\n' >"$T/w3.yaml"
    expect 1 "gains wrong unit, disturbance weighted" -- "$R" gains "$DEMO" --rate 200Hz --weights "$T/w3.yaml"
    has "$T/err" "w3.yaml:2:15: error: expected rad for 'tilt.angle', got kg" "wrong unit placed"
    has "$T/err" "'shove' is a disturbance input" "disturbance weight refused"
    printf 'states:\n  tilt.angle: -3 deg\ninput:\n  drive: 0.6\n' >"$T/w4.yaml"
    expect 1 "gains negative weight, unknown key" -- "$R" gains "$DEMO" --rate 200Hz --weights "$T/w4.yaml"
    has "$T/err" "must be positive" "negative weight refused"
    has "$T/err" "w4.yaml:3:1: error: unknown key 'input'" "unknown key placed"
    has "$T/err" "did you mean 'inputs'" "unknown key hint"
    # a weights file gets the model loader's protections
    for f in alias-billion-laughs.yaml deep-flow-seq-5000.yaml duplicate-keys-1000.yaml \
        binary-garbage.bin empty.yaml number-1e999.yaml control-chars-echoed.yaml; do
        "$R" gains "$DEMO" --rate 200Hz --weights "tests/hostile/$f" >"$T/out" 2>"$T/err"
        rc=$?
        if { [ $rc = 1 ] || [ $rc = 4 ]; } && grep -q "error" "$T/err" && [ ! -s "$T/out" ]; then ok
        else bad "hostile weights $f: exit $rc"; fi
    done
fi

for f in examples/*.yaml; do
    expect 0 "example $f checks" -- "$R" check "$f"
done

echo "cli: $pass passed, $fail failed"
[ "$fail" = 0 ]
