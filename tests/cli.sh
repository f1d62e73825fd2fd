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
if "$R" --help | grep -q '^  modes'; then
    expect 0 "modes help" -- "$R" modes --help
    has "$T/out" "--rate" "modes help lists --rate"
    expect 0 "modes demo" -- "$R" modes "$DEMO"
    # the text leads with the one-line summary
    if head -1 "$T/out" | grep -q "unstable mode at .* rad/s, lives in tilt; reached by drive"; then
        ok; else bad "modes text does not lead with the summary"; head -3 "$T/out" >&2; fi
    has "$T/out" "right half plane" "modes names the right-half-plane zeros"
    expect 0 "modes demo json with rate" -- "$R" modes "$DEMO" --rate 200Hz --format json
    for k in '"kind": *"modes"' '"modes"' '"zeros"' '"dc_gain"' '"order_hash"' '"s"' '"z"' \
            '"frequency"' '"damping"' '"time_constant"' '"stability"' '"controllable"' \
            '"observable"' '"reached_by"' '"seen_by"' '"states"' '"share"' '"values"'; do
        has "$T/out" "$k" "modes json key $k"
    done
    if /usr/bin/python3 -m json.tool "$T/out" >/dev/null 2>&1; then ok; else bad "modes json does not parse"; fi
    expect 0 "modes json without rate" -- "$R" modes "$DEMO" --format json
    if grep -q '"z"' "$T/out"; then bad "z without --rate"; else ok; fi
    expect 2 "modes rate in rad/s" -- "$R" modes "$DEMO" --rate 100rad/s
    expect 2 "modes negative rate" -- "$R" modes "$DEMO" --rate -5Hz
    expect 2 "modes bad format" -- "$R" modes "$DEMO" --format csv
    expect 2 "modes without a file" -- "$R" modes
    expect 1 "modes bad model" -- "$R" modes "$T/bad.yaml"
    if [ -s "$T/out" ]; then bad "modes bad model printed a result"; else ok; fi
    expect 4 "modes missing file" -- "$R" modes "$T/nope.yaml"
    if [ -w /dev/full ]; then
        "$R" modes "$DEMO" >/dev/full 2>"$T/err"
        if [ $? = 4 ]; then ok; else bad "modes /dev/full: want exit 4"; fi
    fi
    expect 0 "twin pendulums" -- "$R" modes tests/models/twin-pendulums.yaml
    has "$T/out" "1 not controllable, 1 not observable" "twin pendulums: one pair flagged"
    # check and linearize text end with the summary line; their JSON does not change
    expect 0 "check summary line" -- "$R" check "$DEMO"
    if tail -1 "$T/out" | grep -q '^modes: 1 unstable mode'; then ok; else bad "check text: no modes line at the end"; fi
    expect 0 "linearize summary line" -- "$R" linearize "$DEMO"
    if tail -1 "$T/out" | grep -q '^modes: 1 unstable mode'; then ok; else bad "linearize text: no modes line at the end"; fi
    expect 0 "linearize json" -- "$R" linearize "$DEMO" --format json
    if grep -q '"summary"\|modes:' "$T/out"; then bad "linearize json changed"; else ok; fi
fi

if "$R" --help | grep -q '^  simulate'; then
    C=examples/cart.yaml
    expect 0 "simulate help" -- "$R" simulate --help
    has "$T/out" "step:VALUE" "simulate help lists the signals"
    # CSV contract (DESIGN.md section 5): header, absolute values, round(duration/step)+1 rows
    expect 0 "simulate csv" -- "$R" simulate "$C" --input push=step:1N --duration 0.1s --step 10ms
    if [ "$(head -n 1 "$T/out")" = "time [s],track.position [m],track.velocity [m/s],push [N],position [m]" ]; then ok; else bad "simulate csv header: $(head -n 1 "$T/out")"; fi
    if [ "$(wc -l <"$T/out")" = 12 ]; then ok; else bad "simulate csv: want 11 rows"; fi
    if [ "$(sed -n 2p "$T/out" | cut -d, -f1,4)" = "0,1" ]; then ok; else bad "simulate csv: first row time 0, push 1 N (absolute)"; fi
    expect 0 "simulate rounds duration/step" -- "$R" simulate "$C" --duration 0.1s --step 30ms
    if [ "$(wc -l <"$T/out")" = 5 ]; then ok; else bad "simulate csv: round(0.1/0.03)+1 = 4 rows"; fi
    expect 0 "simulate json" -- "$R" simulate "$C" --model linear --duration 50ms --format json
    has "$T/out" '"simulated": *"linear"' "simulate json names the model"
    expect 0 "simulate sampled" -- "$R" simulate "$C" --model sampled --rate 100Hz --duration 0.1s
    if [ "$(wc -l <"$T/out")" = 12 ]; then ok; else bad "sampled: one row per period"; fi
    expect 2 "sampled without rate" -- "$R" simulate "$C" --model sampled
    expect 2 "sampled step not a multiple" -- "$R" simulate "$C" --model sampled --rate 100Hz --step 15ms
    has "$T/err" "multiple of the period" "sampled step message"
    expect 2 "unknown model" -- "$R" simulate "$C" --model quadratic
    expect 2 "unknown input" -- "$R" simulate "$C" --input shove=step:1N
    has "$T/err" "the inputs are push" "unknown input lists the inputs"
    expect 2 "unknown signal" -- "$R" simulate "$C" --input push=square:1N
    expect 2 "signal in the wrong unit" -- "$R" simulate "$C" --input push=step:1V
    expect 2 "impulse needs an area" -- "$R" simulate "$C" --input push=impulse:1N
    expect 2 "unknown state" -- "$R" simulate "$C" --offset track.angle=1
    expect 2 "offset in the wrong unit" -- "$R" simulate "$C" --offset track.position=3deg
    expect 2 "criterion without --validity" -- "$R" simulate "$C" --criterion 0.1
    expect 2 "format text for a response" -- "$R" simulate "$C" --format text
    expect 4 "signal file missing" -- "$R" simulate "$C" --input push=file:"$T/none.csv"
    printf 'time,push\n0,0\n0.05,2\n0.1,0\n' >"$T/push.csv"
    expect 0 "signal from a file" -- "$R" simulate "$C" --input push=file:"$T/push.csv" --duration 0.1s --step 25ms
    if [ "$(sed -n 4p "$T/out" | cut -d, -f4)" = 2 ]; then ok; else bad "file signal at t = 0.05 s"; fi
    expect 0 "simulate --plot" -- "$R" simulate "$C" --input push=sine:1N@2Hz --plot "$T/sim.svg"
    if [ -s "$T/sim.svg" ] && [ -s "$T/out" ]; then ok; else bad "--plot wrote nothing"; fi
    if command -v xmllint >/dev/null 2>&1; then
        if xmllint --noout "$T/sim.svg" 2>"$T/err"; then ok; else bad "--plot SVG is not well-formed XML"; fi
    fi
    expect 0 "validity" -- "$R" simulate "$C" --validity --horizon 0.5s
    has "$T/out" "within 5 %" "validity states its criterion"
    expect 0 "validity json" -- "$R" simulate "$C" --validity --format json --criterion 0.02
    has "$T/out" '"criterion": *0.02' "validity json criterion"
    # Failure part-way: a bead sliding inward on a massless spinning rod
    # reaches the axis at t = 0.1 s, where the mass matrix is singular.
    printf '%s\n' 'rigmat: 1' 'name: bead on a massless rod' 'gravity: 0 m/s^2' 'bodies:' \
        '  rod: {mass: 0 kg, inertia: 0 kg*m^2}' '  bead: {mass: 0.05 kg}' 'joints:' \
        '  spin: {type: hinge, parent: ground, child: rod}' \
        '  along: {type: slider, parent: rod, child: bead, axis: [1, 0]}' \
        'operating_point:' '  coordinates: {along: 50 mm}' '  rates: {along: -0.5 m/s}' \
        '  inputs: {}' '  solve: []' >"$T/bead.yaml"
    expect 3 "failure part-way" -- "$R" simulate "$T/bead.yaml" --duration 0.2s --step 25ms --plot "$T/bead.svg"
    if [ -e "$T/bead.svg" ]; then bad "failed simulation wrote a plot"; else ok; fi
    has "$T/err" "fails at t = 0.1 s" "failure names the time"
    has "$T/err" "singular" "failure names the cause"
    if [ -s "$T/out" ]; then bad "failed simulation printed rows"; else ok; fi
    echo keep >"$T/res.csv"
    expect 3 "failure part-way with -o and --partial" -- "$R" simulate "$T/bead.yaml" --duration 0.2s --step 25ms -o "$T/res.csv" --partial "$T/part.csv"
    if [ "$(cat "$T/res.csv")" = keep ]; then ok; else bad "failed simulation changed the -o file"; fi
    if [ "$(wc -l <"$T/part.csv")" = 5 ]; then ok; else bad "--partial: header and the 4 rows before t = 0.1 s"; fi
    has "$T/err" "rows before the failure are in" "--partial note"
fi

for f in examples/*.yaml; do
    expect 0 "example $f checks" -- "$R" check "$f"
    if "$R" --help | grep -q '^  modes'; then
        expect 0 "example $f modes" -- "$R" modes "$f" --rate 500Hz --format json
    fi
done

echo "cli: $pass passed, $fail failed"
[ "$fail" = 0 ]
