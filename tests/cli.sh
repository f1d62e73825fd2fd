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
# Every command is listed and answers its own --help: a command that goes
# missing fails here (no test below skips itself for want of a command).
cp "$T/out" "$T/help.txt"
for c in check linearize trim discretize parts; do
    has "$T/help.txt" "^  $c " "top-level help lists '$c'"
    expect 0 "$c --help" -- "$R" $c --help
    has "$T/out" "usage: rigmat $c" "$c help text"
done
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
# The write fault comes from the LD_PRELOAD shim tests/shim/writefail.c
# (the Makefile passes WRITE_SHIM); the program has no hook of its own.
# verify_asan_link_order=0: under the sanitizer build the shim is loaded
# before libasan, which is harmless here (the shim allocates nothing).
SHIM=${WRITE_SHIM:-build/shim/writefail.so}
if [ -f "$SHIM" ]; then ok; else bad "write-fault shim $SHIM missing (make $SHIM)"; fi
LD_PRELOAD="$(cd "$(dirname "$SHIM")" && pwd)/$(basename "$SHIM")" RIGMAT_SHIM_WRITE_FAIL=10 \
    ASAN_OPTIONS="${ASAN_OPTIONS:+$ASAN_OPTIONS:}verify_asan_link_order=0" \
    "$R" check "$DEMO" -o "$T/sum.txt" >/dev/null 2>"$T/err"
if [ $? = 4 ]; then ok; else bad "injected write fault: want exit 4"; fi
has "$T/err" "No space left on device" "injected write fault reported"
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

# linearize and discretize
expect 0 "linearize demo" -- "$R" linearize "$DEMO"
expect 0 "linearize demo json" -- "$R" linearize "$DEMO" --format json
has "$T/out" '"order_hash"' "linearize json has order_hash"
expect 1 "linearize bad model" -- "$R" linearize "$T/bad.yaml"
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
has "$T/err" "above the limit of 2048 states" "delay limit message"
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

# JSON is read with Debian's python3, as the reference scripts read it.
PY=${PYTHON:-/usr/bin/python3}
# json_keys FILE KEY... : FILE is one JSON object holding every KEY
json_keys() {
    f=$1
    shift
    if "$PY" -c 'import json, sys
d = json.load(open(sys.argv[1]))
missing = [k for k in sys.argv[2:] if k not in d]
sys.exit("missing keys: " + " ".join(missing) if missing else 0)' "$f" "$@" 2>"$T/pyerr"; then
        ok
    else
        bad "JSON keys of $f: $(cat "$T/pyerr")"
    fi
}
# json_val FILE EXPR : print EXPR, a Python expression on d (the JSON object)
json_val() {
    "$PY" -c 'import json, sys
d = json.load(open(sys.argv[1]))
print(eval(sys.argv[2]))' "$1" "$2"
}
# close GOT WANT RTOL DESCRIPTION : |GOT - WANT| <= RTOL |WANT|
close() {
    if awk -v a="$1" -v b="$2" -v t="$3" 'BEGIN { if (a == "" || b == "") exit 1
            d = a - b; if (d < 0) d = -d; m = b < 0 ? -b : b; exit !(d <= t * m) }'; then
        ok
    else
        bad "$4: got '$1', want '$2'"
    fi
}
# below VALUE LIMIT DESCRIPTION : |VALUE| < LIMIT
below() {
    if awk -v v="$1" -v l="$2" 'BEGIN { if (v == "") exit 1; if (v < 0) v = -v; exit !(v < l) }'; then
        ok
    else
        bad "$3: got '$1', want below $2"
    fi
}

# trim: solves the operating point, prints it and the residual
PM=examples/pendulum-motor.yaml
expect 0 "trim the held pendulum" -- "$R" trim "$PM"
has "$T/out" "^solved: drive" "trim names what it solved"
has "$T/out" "a steady state" "trim says the point is steady"
has "$T/out" "^  drive  *[0-9]" "trim prints the solved input"
expect 0 "trim json" -- "$R" trim "$PM" --format json
cp "$T/out" "$T/trim.json"
json_keys "$T/trim.json" rigmat model kind order_hash states inputs outputs x u residual \
    tolerance iterations converged free_unknowns unmet_equations
has "$T/trim.json" '"kind": "trim"' "trim json kind"
has "$T/trim.json" '"converged": true' "trim json converged"
# The holding voltage, hand-derived from the example's figures: gravity's
# torque at 20 deg from hanging is g sin(20 deg) (0.35 kg * 0.14 m (the
# rod's middle) + 0.2 kg * 0.28 m (the bob)); at rest the motor gives
# N eta Kt i = 50 * 0.66 * 0.0195 N*m/A * i against it, and V = R i with
# R = 2.3 ohm (catalog/motors/gearmotor-12v-50.yaml; no back-EMF at rest).
want_v=$(awk 'BEGIN { pi = atan2(0, -1); tq = 9.80665 * sin(20 * pi / 180) * (0.35 * 0.14 + 0.2 * 0.28)
    printf "%.17g", 2.3 * tq / (50 * 0.66 * 0.0195) }')
want_i=$(awk -v v="$want_v" 'BEGIN { printf "%.17g", v / 2.3 }')
close "$(json_val "$T/trim.json" 'repr(d["u"][0])')" "$want_v" 1e-9 "trim: holding voltage"
close "$(json_val "$T/trim.json" 'repr(d["x"][2])')" "$want_i" 1e-9 "trim: holding current"
below "$(json_val "$T/trim.json" 'repr(d["residual"])')" 1e-10 "trim: residual below the tolerance"
# a coordinate nothing fixes is named; a free cart is steady only with no net force
cat >"$T/free.yaml" <<'YAML'
rigmat: 1
name: a cart free to rest anywhere
bodies:
  cart: {mass: 1 kg}
joints:
  rail: {type: slider, parent: ground, child: cart}
forces:
  push: {on: cart, direction: [1, 0]}
operating_point:
  inputs: {push: 0.7 N}
  solve: [rail, push]
YAML
expect 0 "trim with a free coordinate" -- "$R" trim "$T/free.yaml" --format json
cp "$T/out" "$T/free.json"
got=$(json_val "$T/free.json" '" ".join(d["free_unknowns"])')
[ "$got" = "rail.position" ] && ok || bad "free unknowns: '$got', want 'rail.position'"
below "$(json_val "$T/free.json" 'repr(d["u"][0])')" 1e-12 "a free cart's steady push"
expect 0 "linearize warns of a free name in solve" -- "$R" linearize "$T/free.yaml"
has "$T/err" "free.yaml:[0-9]*:[0-9]*: warning: 'rail.position' in solve is not fixed by the equations" "linearize free-unknown warning"
expect 0 "discretize warns of a free name in solve" -- "$R" discretize "$T/free.yaml" --rate 100Hz
has "$T/err" "warning: 'rail.position' in solve is not fixed by the equations" "discretize free-unknown warning"
expect 0 "trim text with a free coordinate" -- "$R" trim "$T/free.yaml"
has "$T/out" "not fixed by the equations.*rail.position" "trim text names the free coordinate"
# nothing in solve: the equations above the tolerance are the unmet ones,
# at once, and only they (the pushed cart's, not the resting one's)
cat >"$T/nosolve.yaml" <<'YAML'
rigmat: 1
bodies:
  a: {mass: 1 kg}
  b: {mass: 2 kg}
joints:
  ra: {type: slider, parent: ground, child: a}
  rb: {type: slider, parent: ground, child: b}
forces:
  push: {on: a, direction: [1, 0]}
operating_point:
  inputs: {push: 0.5 N}
YAML
expect 3 "trim with nothing to solve" -- "$R" trim "$T/nosolve.yaml" --format json
has "$T/err" "not a steady state and nothing is solved for: residual 0.5 " "trim with nothing to solve: message"
got=$(json_val "$T/out" '" ".join(d["unmet_equations"])')
[ "$got" = "d(ra.velocity)/dt" ] && ok || bad "nothing to solve: unmet '$got', want 'd(ra.velocity)/dt'"
# no steady state exists: exit 3, the unmet equation named, nothing on stdout
sed -e 's/solve: \[rail, push\]/solve: [rail]/' "$T/free.yaml" >"$T/push.yaml"
expect 3 "trim with no steady state" -- "$R" trim "$T/push.yaml"
has "$T/err" "did not converge" "trim failure message"
has "$T/err" "cannot be met: d(rail.velocity)/dt" "trim names the unmet equation"
if [ -s "$T/out" ]; then bad "failed trim printed a result"; else ok; fi
# with --format json the failed trim still writes its result, and exits 3
expect 3 "failed trim json" -- "$R" trim "$T/push.yaml" --format json
got=$(json_val "$T/out" 'str(d["converged"]) + " " + " ".join(d["unmet_equations"])')
[ "$got" = "False d(rail.velocity)/dt" ] && ok || bad "failed trim json: '$got'"
# The two-link arm (tests/models/two-link-arm.yaml): no shoulder current
# holds the elbow at 50 deg, the shoulder alone can be held, so exactly the
# elbow's equation is named; exit 3, the residual table on stderr, and with
# --format json the result is still written (to stdout and to -o).
ARM2=tests/models/two-link-arm.yaml
UNMET='operating_point.solve=[sh]'
expect 3 "two-link arm: the elbow cannot be held" -- "$R" trim "$ARM2" --set "$UNMET"
has "$T/err" "residual per equation at the last iterate" "failed trim prints the residual table"
has "$T/err" "d(elbow.rate)/dt  *-*[0-9.e+-]* rad/s^2  (cannot be met)" "the table marks the elbow"
if grep -q "shoulder.rate)/dt.*cannot be met" "$T/err"; then bad "the shoulder was named"; else ok; fi
expect 3 "two-link arm json" -- "$R" trim "$ARM2" --set "$UNMET" --format json -o "$T/arm2.json"
json_keys "$T/arm2.json" converged x u residual residuals unmet_equations free_unknowns
got=$(json_val "$T/arm2.json" 'str(d["converged"]) + " " + " ".join(d["unmet_equations"])')
[ "$got" = "False d(elbow.rate)/dt" ] && ok || bad "two-link arm unmet: '$got'"
got=$(json_val "$T/arm2.json" '" ".join(e["name"] + ":" + e["equation"] + ":" + e["unit"] for e in d["residuals"])')
[ "$got" = "shoulder.rate:d(shoulder.rate)/dt:rad/s^2 elbow.rate:d(elbow.rate)/dt:rad/s^2" ] && ok ||
    bad "two-link arm residual entries: '$got'"
# By hand (common practice, the planar two-link arm with uniform rods, angles
# from the downward vertical): at rest M qdd = tau e1 - G; the last iterate is
# the least-squares current tau = (b . a) / (b . b), b = M^-1 e1, a = M^-1 G,
# and each residual is tau b - a.
want=$(awk 'BEGIN { pi = atan2(0, -1); g = 9.80665; m1 = 0.9; m2 = 0.55; l1 = 0.35; l2 = 0.28
    q1 = 35 * pi / 180; q2 = 50 * pi / 180; I1 = m1 * l1 * l1 / 12; I2 = m2 * l2 * l2 / 12
    c1 = l1 / 2; c2 = l2 / 2
    M11 = I1 + m1 * c1 * c1 + I2 + m2 * (l1 * l1 + c2 * c2 + 2 * l1 * c2 * cos(q2))
    M12 = I2 + m2 * (c2 * c2 + l1 * c2 * cos(q2)); M22 = I2 + m2 * c2 * c2
    G2 = g * m2 * c2 * sin(q1 + q2); G1 = g * (m1 * c1 + m2 * l1) * sin(q1) + G2
    det = M11 * M22 - M12 * M12; b1 = M22 / det; b2 = -M12 / det
    a1 = (M22 * G1 - M12 * G2) / det; a2 = (-M12 * G1 + M11 * G2) / det
    tau = (b1 * a1 + b2 * a2) / (b1 * b1 + b2 * b2)
    printf "%.17g %.17g %.17g", tau / (15 * 0.05), tau * b1 - a1, tau * b2 - a2 }')
set -- $want
close "$(json_val "$T/arm2.json" 'repr(d["u"][0])')" "$1" 1e-9 "two-link arm: last iterate's current"
close "$(json_val "$T/arm2.json" 'repr(d["residuals"][0]["value"])')" "$2" 1e-9 "two-link arm: shoulder residual"
close "$(json_val "$T/arm2.json" 'repr(d["residuals"][1]["value"])')" "$3" 1e-9 "two-link arm: elbow residual"
expect 3 "two-link arm json to stdout" -- "$R" trim "$ARM2" --set "$UNMET" --format json
has "$T/out" '"converged": false' "failed trim json on stdout"
# with the elbow solved (the file as written) the forearm hangs straight,
# and the current is the statics one,
# i = g sin(35 deg) (m1 l1 / 2 + m2 l1) / (N Kt) (common practice)
expect 0 "two-link arm with the elbow solved" -- "$R" trim "$ARM2" --format json
cp "$T/out" "$T/arm2ok.json"
got=$(json_val "$T/arm2ok.json" 'str(d["converged"]) + " " + str(len(d["unmet_equations"])) + " " + str(len(d["residuals"]))')
[ "$got" = "True 0 2" ] && ok || bad "two-link arm held: '$got'"
want=$(awk 'BEGIN { pi = atan2(0, -1); printf "%.17g", 9.80665 * sin(35 * pi / 180) * (0.9 * 0.175 + 0.55 * 0.35) / 0.75 }')
close "$(json_val "$T/arm2ok.json" 'repr(d["u"][0])')" "$want" 1e-9 "two-link arm: holding current"
close "$(json_val "$T/arm2ok.json" 'repr(d["x"][1])')" "-0.61086523819801535" 1e-9 "two-link arm: elbow hangs at -35 deg"
below "$(json_val "$T/arm2ok.json" 'repr(max(abs(e["value"]) for e in d["residuals"]))')" 1e-10 "held arm: residuals below tolerance"
# a hand on a wrist below the forearm: two balances no shoulder current
# reaches, both named (and only they), exit 3
sed -e 's|^  fore: .*|&\n  hand: {mass: 0.23 kg, shape: {rod: {length: 0.17 m, direction: -90 deg}}}|' \
    -e 's|^  elbow: .*|&\n  wrist: {type: hinge, parent: fore, child: hand, at: [0, -0.28 m]}|' \
    -e 's|elbow: 50 deg}|elbow: 50 deg, wrist: -20 deg}|' "$ARM2" >"$T/arm3.yaml"
expect 3 "three-link arm: elbow and wrist unmet" -- "$R" trim "$T/arm3.yaml" --set "$UNMET" --format json
got=$(json_val "$T/out" 'str(d["converged"]) + " " + " ".join(d["unmet_equations"]) + " " + str(len(d["residuals"]))')
[ "$got" = "False d(elbow.rate)/dt d(wrist.rate)/dt 3" ] && ok || bad "three-link arm unmet: '$got'"
has "$T/err" "d(wrist.rate)/dt .*(cannot be met)" "three-link table marks the wrist"
expect 2 "trim without a model" -- "$R" trim
expect 1 "trim bad model" -- "$R" trim "$T/bad.yaml"
expect 4 "trim missing file" -- "$R" trim "$T/nope.yaml"

# parts: the catalog (exit codes as in README.md, "Commands")
expect 0 "parts lists the catalog" -- "$R" parts
has "$T/out" "^motors/gearmotor-24v-27 " "parts lists a motor"
has "$T/out" "^sensors/gyro-mems " "parts lists a sensor"
has "$T/out" "^wheels/wheel-122mm " "parts lists a wheel"
expect 0 "parts json" -- "$R" parts --format json
cp "$T/out" "$T/parts.json"
json_keys "$T/parts.json" folders parts
got=$(json_val "$T/parts.json" 'len(d["parts"]) > 5 and all(sorted(p) == ["file", "name", "summary"] for p in d["parts"])')
[ "$got" = True ] && ok || bad "parts json: every entry carries name, summary and file"
expect 0 "parts shows one part" -- "$R" parts motors/gearmotor-24v-27
has "$T/out" "^part motors/gearmotor-24v-27 (" "parts names the part and its file"
has "$T/out" "gear_ratio  *27" "parts shows the part's values"
expect 0 "parts shows one part, json" -- "$R" parts motors/gearmotor-6v-100 --format json
cp "$T/out" "$T/part.json"
json_keys "$T/part.json" part file values
# each value as written and in SI: rpm * 2 pi / 60 (common practice)
written=$(json_val "$T/part.json" 'd["values"]["no_load_speed"]["written"].split()[0]')
want=$(awk -v w="$written" 'BEGIN { printf "%.17g", w * 2 * atan2(0, -1) / 60 }')
close "$(json_val "$T/part.json" 'repr(d["values"]["no_load_speed"]["si"])')" "$want" 1e-12 \
    "parts: no-load speed in SI"
expect 4 "parts: no such part" -- "$R" parts motors/no-such-motor
has "$T/err" "part 'motors/no-such-motor' not found" "parts not-found message"
expect 2 "parts: not a part name" -- "$R" parts ../catalog/motors/gearmotor-24v-27
expect 2 "parts: absolute name" -- "$R" parts /etc/passwd
expect 2 "parts: two names" -- "$R" parts motors/a motors/b
expect 2 "parts: bad format" -- "$R" parts --format yamlish
# --catalog comes first; a broken part file is a bad part (exit 1); the
# not-found hint lists every folder searched, in order
mkdir -p "$T/cat1/motors" "$T/cat2/motors"
printf '# broken part\nresistance: [1 ohm\n' >"$T/cat1/motors/broken.yaml"
printf '# a test motor\nresistance: 3 ohm\n' >"$T/cat2/motors/only-here.yaml"
expect 1 "parts: a broken part file" -- "$R" parts motors/broken --catalog "$T/cat1"
expect 0 "parts: --catalog" -- "$R" parts motors/only-here --catalog "$T/cat2"
has "$T/out" "resistance  *3 ohm" "parts reads the --catalog folder"
RIGMAT_CATALOG="$T/cat2" "$R" parts motors/nope --catalog "$T/cat1" >"$T/out" 2>"$T/err"
[ $? = 4 ] && ok || bad "parts, not found in two catalogs: want exit 4"
has "$T/err" "looked in $T/cat1, $T/cat2, " "not-found hint: --catalog, then \$RIGMAT_CATALOG, then the rest"

# The catalog beside the program: a copy of the program in INST/bin finds
# INST/catalog for a model kept anywhere, run from anywhere; with no
# catalog anywhere, parts exits 4 and says where it looked.
mkdir -p "$T/inst/bin" "$T/inst/catalog/motors" "$T/away/models" "$T/lost/bin"
cp "$R" "$T/inst/bin/rigmat" && cp "$R" "$T/lost/bin/rigmat"
printf '# a motor only the catalog beside the program has\nresistance: 2 ohm\n' \
    >"$T/inst/catalog/motors/beside.yaml"
printf 'inductance: neglect\ntorque_constant: 0.02 N*m/A\nrotor_inertia: 1 g*cm^2\n' \
    >>"$T/inst/catalog/motors/beside.yaml"
cat >"$T/away/models/spin.yaml" <<'YAML'
rigmat: 1
name: a flywheel on a catalog motor
bodies:
  fly: {mass: 0.1 kg, inertia: 1e-4 kg*m^2}
joints:
  shaft: {type: hinge, parent: ground, child: fly}
motors:
  drive: {part: motors/beside, across: shaft}
YAML
(cd "$T/away" && RIGMAT_CATALOG= "$T/inst/bin/rigmat" check models/spin.yaml) >"$T/out" 2>"$T/err"
[ $? = 0 ] && ok || { bad "a model kept anywhere finds the catalog beside the program"; sed 's/^/  | /' "$T/err" >&2; }
(cd "$T/away" && RIGMAT_CATALOG= "$T/inst/bin/rigmat" parts) >"$T/out" 2>"$T/err"
[ $? = 0 ] && ok || bad "parts run from anywhere: want exit 0"
has "$T/out" "^motors/beside " "parts lists the catalog beside the program"
(cd "$T/away" && RIGMAT_CATALOG= "$T/lost/bin/rigmat" parts) >"$T/out" 2>"$T/err"
[ $? = 4 ] && ok || bad "parts with no catalog folder: want exit 4"
has "$T/err" "no catalog folder found" "no-catalog message"
has "$T/err" "looked for \./catalog, $T/lost/bin/\.\./catalog, " "no-catalog hint lists the folders"
(cd "$T/away" && RIGMAT_CATALOG= "$T/lost/bin/rigmat" parts --format json) >"$T/out" 2>"$T/err"
[ $? = 4 ] && ok || bad "parts --format json with no catalog folder: want exit 4"
if [ -s "$T/out" ]; then bad "parts printed a result without a catalog"; else ok; fi
(cd "$T/away" && RIGMAT_CATALOG= "$T/lost/bin/rigmat" check models/spin.yaml) >"$T/out" 2>"$T/err"
[ $? = 1 ] && ok || bad "a model naming a part no folder holds: want exit 1"
has "$T/err" "part 'motors/beside' not found" "a missing part in a model"

# has_cmd NAME: the command is listed by --help; a missing one fails the run
has_cmd() {
    if "$R" --help | grep -q "^  $1 "; then return 0; fi
    bad "command '$1' is missing from rigmat --help"
    return 1
}
if has_cmd modes; then
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
    # --validity: the table of simulate --validity after the modes (text) and
    # the same members in JSON
    expect 0 "modes --validity" -- "$R" modes "$DEMO" --validity
    has "$T/out" "^validity of the linear model" "modes text prints the validity range"
    has "$T/out" "offset of tilt.angle \\[rad\\]" "modes validity names the tilt"
    expect 0 "modes --validity json" -- "$R" modes "$DEMO" --validity --format json
    has "$T/out" '"validity"' "modes json has validity"
    has "$T/out" '"criterion"' "modes json has the criterion"
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

if has_cmd simulate; then
    C=examples/cart.yaml
    expect 0 "simulate help" -- "$R" simulate --help
    has "$T/out" "step:VALUE" "simulate help lists the signals"
    # CSV contract (README.md, "Simulation"): header, absolute values, round(duration/step)+1 rows
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
    # the export formats carry the gains (tests/ref/test_exports.py reads them back)
    expect 0 "gains csv" -- "$R" gains "$DEMO" --rate 200Hz --weights "$G/balancer.yaml" --format csv
    has "$T/out" "^kalman_gain," "gains csv has the filter gain"
    has "$T/out" "^lqr_gain," "gains csv has the regulator gain"
    rm -rf "$T/gmtx"
    expect 0 "gains mtx" -- "$R" gains "$DEMO" --rate 200Hz --format mtx -o "$T/gmtx"
    if [ -f "$T/gmtx/kalman_prior_covariance.mtx" ] && [ ! -e "$T/gmtx/lqr_gain.mtx" ]; then ok; else
        bad "gains mtx: want kalman_prior_covariance.mtx and, without --weights, no lqr_gain.mtx"; fi
    expect 2 "gains bad format" -- "$R" gains "$DEMO" --rate 200Hz --format html
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
    # the demo's drive is a duty (always limited to [-1, 1]): without a
    # weight it takes the room to its limit, so it is not reported missing
    if grep -q "control input 'drive' has no weight" "$T/err"; then bad "a limited input reported without a weight"; else ok; fi
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

# Export formats (README.md, "Export formats"): usage errors, and the mtx
# folder written whole or not at all.
expect 2 "unknown format" -- "$R" linearize "$DEMO" --format yamlish
has "$T/err" "unknown format 'yamlish'" "unknown format message"
has "$T/err" "hint: use one of text, json, csv, c, numpy, mtx, latex" "unknown format hint"
expect 2 "format not offered by check" -- "$R" check "$DEMO" --format c
has "$T/err" "not offered by this command" "format not offered message"
has "$T/err" "linearize and discretize write every format" "format not offered hint"
expect 2 "format not offered by trim" -- "$R" trim "$DEMO" --format csv
expect 2 "format not offered by parts" -- "$R" parts --format numpy
expect 2 "mtx without -o" -- "$R" discretize "$DEMO" --rate 200Hz --format mtx
has "$T/err" "give the folder" "mtx without -o hint"
expect 2 "--ctype without --format c" -- "$R" linearize "$DEMO" --format numpy --ctype float
has "$T/err" "applies to the C header only" "--ctype without c message"
expect 2 "unknown --ctype" -- "$R" discretize "$DEMO" --rate 200Hz --format c --ctype half
expect 0 "c header" -- "$R" discretize "$DEMO" --rate 200Hz --format c -o "$T/model.h"
has "$T/model.h" "static const double aisle_courier_balancing_base_Ad" "c header arrays"
has "$T/model.h" "#define AISLE_COURIER_BALANCING_BASE_ORDER_HASH" "c header order hash"
if grep -q '[0-9][0-9]:[0-9][0-9]:[0-9][0-9]' "$T/model.h"; then bad "c header has a time"; else ok; fi
"$R" discretize "$DEMO" --rate 200Hz --format c >"$T/again.h" 2>/dev/null
if cmp -s "$T/model.h" "$T/again.h"; then ok; else bad "c header not reproducible"; fi
expect 0 "float header" -- "$R" discretize "$DEMO" --rate 200Hz --format c --ctype float --name plant
has "$T/out" "static const float plant_Ad" "float header with --name"
expect 0 "mtx folder" -- "$R" discretize "$DEMO" --rate 200Hz --format mtx -o "$T/mtx"
if [ -f "$T/mtx/Ad.mtx" ] && [ -f "$T/mtx/Qd.mtx" ] && [ ! -s "$T/out" ]; then ok; else bad "mtx files"; fi
has "$T/mtx/Ad.mtx" "%%MatrixMarket matrix array real general" "mtx header"
expect 0 "mtx folder replaced" -- "$R" linearize "$DEMO" --format mtx -o "$T/mtx"
if [ -f "$T/mtx/A.mtx" ] && [ ! -e "$T/mtx/Ad.mtx" ]; then ok; else bad "mtx folder not replaced whole"; fi
expect 1 "mtx with a bad model" -- "$R" linearize "$T/bad.yaml" --format mtx -o "$T/mtx2"
if [ -e "$T/mtx2" ]; then bad "failed mtx run left a folder"; else ok; fi
mkdir "$T/keep" && echo mine >"$T/keep/notes.txt"
expect 4 "mtx into a folder with other files" -- "$R" linearize "$DEMO" --format mtx -o "$T/keep"
if [ "$(cat "$T/keep/notes.txt")" = mine ] && [ ! -e "$T/keep/A.mtx" ]; then ok; else bad "mtx touched a foreign folder"; fi
if ls "$T" | grep -q 'tmp-\|old-'; then bad "temporary folder left behind"; else ok; fi
expect 3 "non-finite result, csv" -- "$R" discretize "$DEMO" --rate 100Hz --format csv --set sensors.gyro.gain=-1e308
if [ -s "$T/out" ]; then bad "non-finite csv printed"; else ok; fi

# sweep (README.md, "Sweeps"): exit codes, the failed-point warning, the
# npy folder written whole or not at all
has "$T/help.txt" "^  sweep " "top-level help lists 'sweep'"
expect 0 "sweep --help" -- "$R" sweep --help
has "$T/out" "usage: rigmat sweep" "sweep help text"
expect 2 "sweep without --vary" -- "$R" sweep "$DEMO"
expect 2 "sweep without COUNT" -- "$R" sweep "$DEMO" --vary tilt=0deg:1deg
expect 2 "sweep COUNT 0" -- "$R" sweep "$DEMO" --vary tilt=0deg:1deg:0
expect 2 "sweep unknown name" -- "$R" sweep "$DEMO" --vary nosuch=0:1:2
has "$T/err" "neither a coordinate nor an input" "sweep unknown name message"
expect 2 "sweep mixed units" -- "$R" sweep "$DEMO" --vary tilt=0deg:1rad:2
expect 2 "sweep too many points" -- "$R" sweep "$DEMO" --vary tilt=0deg:1deg:1000000 --vary drive=0:1:2
has "$T/err" "more than 1000000 points" "sweep point cap message"
expect 2 "sweep text format" -- "$R" sweep "$DEMO" --vary drive=0:1:2 --format text
expect 2 "sweep npy without -o" -- "$R" sweep "$DEMO" --vary drive=0:1:2 --format npy
expect 2 "sweep --threads 0" -- "$R" sweep "$DEMO" --vary drive=0:1:2 --threads 0
expect 2 "sweep --method without --rate" -- "$R" sweep "$DEMO" --vary drive=0:1:2 --method zoh
expect 1 "sweep bad model" -- "$R" sweep "$T/bad.yaml" --vary drive=0:1:2
expect 0 "sweep some points failed" -- "$R" sweep "$DEMO" --vary drive=-1.5:1.5:4
has "$T/err" "warning: 2 of 4 points failed" "sweep failed-point warning"
has "$T/out" '"ok": false' "sweep marks failed points"
expect 3 "sweep every point failed" -- "$R" sweep "$DEMO" --vary drive=2:3:2
if [ -s "$T/out" ]; then bad "sweep with no good point printed a result"; else ok; fi
expect 0 "sweep npy" -- "$R" sweep "$DEMO" --vary tilt=-5deg:5deg:3 --rate 200Hz --format npy -o "$T/npy"
if [ -f "$T/npy/A.npy" ] && [ -f "$T/npy/Ad.npy" ] && [ -f "$T/npy/index.json" ]; then ok; else bad "npy files"; fi
expect 0 "sweep npy folder replaced" -- "$R" sweep "$DEMO" --vary tilt=-5deg:5deg:3 --format npy -o "$T/npy"
if [ -f "$T/npy/A.npy" ] && [ ! -e "$T/npy/Ad.npy" ]; then ok; else bad "npy folder not replaced whole"; fi
expect 4 "sweep npy into a folder with other files" -- "$R" sweep "$DEMO" --vary drive=0:1:2 --format npy -o "$T/keep"
if [ "$(cat "$T/keep/notes.txt")" = mine ] && [ ! -e "$T/keep/A.npy" ]; then ok; else bad "npy touched a foreign folder"; fi
"$R" sweep "$DEMO" --vary drive=-0.5:0.5:5 --vary tilt=-5deg:5deg:3 --threads 1 >"$T/t1.json" 2>/dev/null
"$R" sweep "$DEMO" --vary drive=-0.5:0.5:5 --vary tilt=-5deg:5deg:3 --threads 3 >"$T/t3.json" 2>/dev/null
if [ -s "$T/t1.json" ] && cmp -s "$T/t1.json" "$T/t3.json"; then ok; else bad "sweep output depends on --threads"; fi
# sensor filter and bias (issue 15): a 20 Hz filter is fast at 10 Hz (lambda T =
# 12.6 > 5) and earns the suggestion; at 100 Hz (1.26) it does not
FA=tests/sensors/filtered-accelerometer.yaml
expect 0 "filtered sensor, slow rate" -- "$R" discretize "$FA" --rate 10Hz
has "$T/err" "sensor 'filt': its filter's time constant (7.96 ms)" "fast filter suggestion"
expect 0 "filtered sensor, fast rate" -- "$R" discretize "$FA" --rate 100Hz
if grep -q "filter's time constant" "$T/err"; then bad "filter suggestion at 100 Hz"; else ok; fi
# behind the filter only the 0.01 m/s^2 noise is per sample; the raw twin's
# density 0.002 m/s^2/sqrt(Hz) averaged over 10 ms is 0.02 m/s^2
expect 0 "filtered sensor check" -- "$R" check "$FA" --rate 100Hz
has "$T/out" "filt         sensor, sd 0.01 m/s^2" "filtered sensor noise per sample"
has "$T/out" "raw          sensor, sd 0.02 m/s^2" "raw sensor noise per sample"
expect 0 "bias check" -- "$R" check tests/models/gyro-bias.yaml --rate 100Hz
has "$T/out" "gyro         random walk, sd 1.74533e-06 rad/s after one sample" "bias sd per sample"

# the refusal of 'com' with a rod names the rod recipe (issue 15)
expect 1 "com with a rod" -- "$R" check tests/bad/rod_com.yaml
has "$T/err" "A rod hinged at its end" "com refusal names the recipe"
has README.md "### A rod hinged at its end" "the recipe is in the README"
# limits (README.md, "Limits") on the arm of tests/models/arm-duty.yaml,
# whose header derives the holding duty by hand: 0.345373 at 24 V, 1.381490 at
# 6 V, and a winding current of 2.072 A
ARM=tests/models/arm-duty.yaml
expect 0 "arm trims at 24 V" -- "$R" trim "$ARM"
has "$T/out" "0.34537" "arm holding duty at 24 V"
expect 3 "arm refused at 6 V (trim)" -- "$R" trim "$ARM" --set motors.sh.supply=6V
has "$T/err" "needs duty 1.381 of drive 'sh'; its limit is 1 (supply 6 V)" "duty limit message"
has "$T/err" "raise the supply or lower the load" "duty limit hint"
expect 3 "arm refused at 6 V (linearize)" -- "$R" linearize "$ARM" --set motors.sh.supply=6V
expect 3 "arm refused at 6 V (discretize)" -- "$R" discretize "$ARM" --rate 100Hz --set motors.sh.supply=6V
if [ -s "$T/out" ]; then bad "a refused point printed a model"; else ok; fi
expect 3 "arm refused at a 2 A current limit" -- "$R" trim "$ARM" --set motors.sh.current_limit=2A
has "$T/err" "arm-duty.yaml:[0-9]*:[0-9]*: error: the operating point needs 2.072 A in motor 'sh'; its current_limit is 2 A" "current limit message"
expect 3 "current limit refused by discretize" -- "$R" discretize "$ARM" --rate 100Hz --set motors.sh.current_limit=2A
expect 0 "a 3 A current limit holds" -- "$R" linearize "$ARM" --set motors.sh.current_limit=3A --format json
has "$T/out" '"limit": \[-1,1\],"current_limit": 3' "limits in the linearize json"
expect 0 "check shows the headroom beyond a limit" -- "$R" check "$ARM" --set motors.sh.supply=6V --set motors.sh.current_limit=2A
has "$T/out" "sh           input   1.38149 of \[-1, 1\]: 138.1 % used" "duty headroom"
has "$T/out" "sh           current 2.07223 A of \[-2, 2\]: 103.6 % used" "current headroom"
expect 0 "check headroom at 24 V" -- "$R" check "$ARM"
has "$T/out" "34.5 % used, headroom 0.654628" "duty headroom at 24 V"
expect 1 "given input beyond its limit" -- "$R" check "$ARM" --set 'operating_point={coordinates: {shoulder: 0 deg}, inputs: {sh: 0.8}}' --set 'motors.sh.limit=0.5'
has "$T/err" "error: operating-point input 'sh' is 0.8, outside its limit \[-0.5, 0.5\]" "given input message"
expect 1 "duty limit wider than 1" -- "$R" check "$ARM" --set 'motors.sh.limit=[-1, 1.2]'
has "$T/err" "wider than \[-1, 1\]" "duty limit wider message"
expect 1 "empty limit" -- "$R" check "$ARM" --set 'motors.sh.limit=[0.5, -0.5]'
has "$T/err" "holds no value" "empty limit message"
expect 1 "zero limit" -- "$R" check "$ARM" --set 'motors.sh.limit=0'
has "$T/err" "limit must be positive" "zero limit message"
expect 0 "c header carries limits" -- "$R" linearize "$ARM" --set motors.sh.current_limit=3A --format c
has "$T/out" "input_limit\[ARM_HELD_AT_25_DEG_BY_A_DUTY_DRIVE_N_INPUTS\]\[2\]" "c header limit array"
has "$T/out" "input_current_limit" "c header current limit"

# the sampled affine term (tests/ref/test_fd.py checks its values)
expect 0 "fd at a point that is not a steady state" -- "$R" discretize examples/cart.yaml --rate 50Hz --set operating_point.inputs.push=2N
has "$T/err" "warning: the operating point is not a steady state: the largest component of f0 is d(track.velocity)/dt = 1.48148 m/s per s" "not-steady warning"
has "$T/out" "fd (sampled affine term: the point is not a steady state)" "fd in the text"
expect 0 "steady motion warns of the drift" -- "$R" linearize examples/cart.yaml --set operating_point.rates.track=0.5m/s --set operating_point.inputs.push=1.35N
has "$T/err" "a steady motion, not a rest point: the largest component of f0 is d(track.position)/dt = 0.5 m per s" "steady-motion warning"
expect 0 "no warning at rest" -- "$R" discretize examples/cart.yaml --rate 50Hz
if grep -q "steady" "$T/err"; then bad "warning at a rest point"; else ok; fi

# Qd not declared: a warning with a one-line `forces:` entry that works
expect 0 "Qd zero warned" -- "$R" discretize examples/cart.yaml --rate 50Hz
has "$T/err" "warning: Qd is zero: the model declares no disturbance with a \`density\`, and a Kalman filter needs process noise" "Qd zero warning"
has "$T/err" "load: {torque_on: carriage, role: disturbance, density: 0.01 N\*m/sqrt(Hz)}" "Qd zero hint"
expect 0 "the hint's entry silences it" -- "$R" discretize examples/cart.yaml --rate 50Hz --set 'forces.load={torque_on: carriage, role: disturbance, density: 0.01 N*m/sqrt(Hz)}'
if grep -q "Qd is zero" "$T/err"; then bad "Qd warning with a density"; else ok; fi

# discretize JSON without glue: states are Ad's rows (delay stages with their
# kind), Qc matches Gd's columns, an empty Gd reads as n x 0 in numpy
expect 0 "discretize json with a delay" -- "$R" discretize "$DEMO" --rate 200Hz --delay 1 --format json -o "$T/glue.json"
if /usr/bin/python3 -c '
import json, sys, numpy as np
j = json.load(open(sys.argv[1]))
ad = np.array(j["Ad"]); gd = np.array(j["Gd"])
assert len(j["states"]) == ad.shape[0], "states vs Ad"
assert j["states"][-1]["kind"] == "delay" and j["states"][0]["kind"] == "coordinate"
assert len(j["Qc"]) == gd.shape[1], "Qc vs Gd columns"
' "$T/glue.json" 2>"$T/err"; then ok; else bad "discretize json glue"; sed 's/^/  | /' "$T/err" >&2; fi
expect 0 "discretize json without disturbances" -- "$R" discretize examples/cart.yaml --rate 50Hz --format json -o "$T/cart.json"
if /usr/bin/python3 -c '
import json, sys, numpy as np
j = json.load(open(sys.argv[1]))
assert np.array(j["Gd"]).shape == (2, 0) and np.array(j["Qc"]).shape == (0,)
' "$T/cart.json" 2>"$T/err"; then ok; else bad "empty Gd shape"; sed 's/^/  | /' "$T/err" >&2; fi

# state basis: physical for zoh and the Euler forms, transformed (with the
# map in the text and no Qd) for foh and tustin (tests/ref/test_state_basis.py
# checks the maps against the zoh state)
expect 0 "tustin states its basis" -- "$R" discretize "$DEMO" --rate 200Hz --method tustin
has "$T/out" "state basis: transformed (tustin): the state is xi = (I - A T/2) x - (T/2) (B u + G w + f0)" "tustin map"
has "$T/out" "Qd and S are not given for a transformed state" "tustin Qd rule"
expect 0 "foh states its basis" -- "$R" discretize "$DEMO" --rate 200Hz --method foh --format json
has "$T/out" '"state_basis": "transformed"' "foh state_basis"
has "$T/out" '"Qd": null' "foh Qd null"
expect 0 "zoh states its basis" -- "$R" discretize "$DEMO" --rate 200Hz --delay 1 --format json
has "$T/out" '"state_basis": "physical"' "zoh state_basis"

# closed loops (README.md, "Closed loops")
expect 0 "four-bar check" -- "$R" check examples/fourbar.yaml
has "$T/out" "independent: crank (named in 'independent:')" "check says which coordinate is independent and why"
has "$T/out" "dependent: knee, swing" "check names the dependent coordinates"
has "$T/out" "relative singular value" "check gives the distance from a dead centre"
expect 0 "four-bar check json" -- "$R" check examples/fourbar.yaml --format json
has "$T/out" '"chosen_by": "named"' "json: how the independent coordinates were chosen"
sed 's/\[\[280 mm, 0\], \[200 mm, 0\]\]/[[280 mm, 0], [900 mm, 0]]/' examples/fourbar.yaml >"$T/farbar.yaml"
expect 3 "a loop that cannot close" -- "$R" linearize "$T/farbar.yaml"
has "$T/err" "farbar.yaml:[0-9]*:3: error: closure 'pin_c' cannot assemble" "the closure is named at its line"
if [ -s "$T/out" ]; then bad "a loop that cannot close printed a result"; else ok; fi
printf 'rigmat: 1\nbodies:\n  a: {mass: 1 kg}\n  b: {mass: 1 kg}\njoints:\n  j1: {type: hinge, parent: ground, child: a}\n  j2: {type: hinge, parent: a, child: b}\n  j3: {type: hinge, parent: ground, child: b}\n' >"$T/twoparents.yaml"
expect 1 "a body with two parents" -- "$R" check "$T/twoparents.yaml"
has "$T/err" "closures:" "the two-parents hint points to closures"
expect 1 "solve names a dependent coordinate" -- "$R" trim examples/fourbar.yaml --set 'operating_point.solve=[knee]'
has "$T/err" "'knee' is a dependent coordinate" "dependent coordinate in solve refused"

for f in examples/*.yaml; do
    expect 0 "example $f checks" -- "$R" check "$f"
    expect 0 "example $f modes" -- "$R" modes "$f" --rate 500Hz --format json
done

# start-up (DEVELOPERS.md, "BLAS"): a small problem never loads OpenBLAS;
# the dynamic loader's own log (LD_DEBUG=files) names every file it maps
for args in "--help" "discretize $DEMO --rate 200Hz"; do
    # shellcheck disable=SC2086
    LD_DEBUG=files "$R" $args >/dev/null 2>"$T/ld" || true
    if grep -q "file=" "$T/ld"; then
        if grep -qi "openblas" "$T/ld"; then bad "rigmat $args loaded OpenBLAS"; else ok; fi
    else
        bad "LD_DEBUG=files printed nothing for rigmat $args"
    fi
done

echo "cli: $pass passed, $fail failed"
[ "$fail" = 0 ]
