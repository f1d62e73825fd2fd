#!/bin/sh
# valgrind-cli.sh - the program under valgrind memcheck on a subset of
# inputs: every example with check (and linearize, discretize, modes when the
# program has them), and a handful of hostile files that take the loader's
# error paths.  RIGMAT is the -O0 -g build (build/vg/rigmat); valgrind
# cannot run a sanitizer build.  A run passes when valgrind finds no error
# and no definite or indirect leak (its exit code 9 says otherwise) and the
# program's own exit code is the one expected (0 for examples, 1 or 4 for
# hostile files).  The last line is `valgrind-cli: N passed, N failed`.
set -u
R=${RIGMAT:-build/vg/rigmat}
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT INT TERM
pass=0
fail=0
OPENBLAS_NUM_THREADS=1
export OPENBLAS_NUM_THREADS
RIGMAT_CATALOG=$(pwd)/catalog
export RIGMAT_CATALOG

if ! command -v valgrind >/dev/null 2>&1; then
    echo "valgrind-cli: valgrind is not installed (make deps)" >&2
    exit 1
fi

vg() { # vg WANT(0|fail) COMMAND ARGS...
    want=$1; shift
    valgrind -q --error-exitcode=9 --leak-check=full --errors-for-leak-kinds=definite,indirect \
        --log-file="$T/vg" "$R" "$@" >"$T/out" 2>"$T/err" </dev/null
    rc=$?
    case "$want:$rc" in
    0:0 | fail:1 | fail:4 | 3:3) pass=$((pass + 1)) ;;
    *)
        fail=$((fail + 1))
        echo "FAIL: $* : exit $rc (want $want; 9 is a valgrind report)" >&2
        head -n 30 "$T/vg" "$T/err" | sed 's/^/  | /' >&2
        ;;
    esac
}

# every command that reads a model (tests/cli.sh fails if one goes missing;
# none is skipped here for want of it)
cmds="check linearize discretize modes"

for f in examples/*.yaml; do
    for c in $cmds; do
        case "$c" in
        discretize) vg 0 discretize "$f" --rate 100Hz ;;
        modes) vg 0 modes "$f" --rate 100Hz --format json ;;
        *) vg 0 "$c" "$f" ;;
        esac
    done
done
for f in empty.yaml binary-garbage.bin truncated-flow-map.yaml alias-billion-laughs.yaml \
    deep-flow-seq-5000.yaml duplicate-keys-1000.yaml tree-cycle.yaml part-self.yaml \
    part-dotdot.yaml unit-kg-pow-99999.yaml number-1e999.yaml control-chars-echoed.yaml \
    model-is-a-directory.yaml bodies-1100.yaml long-body-name.yaml; do
    vg fail check "tests/hostile/$f"
done
vg fail discretize tests/hostile/number-nan-word.yaml --rate 100Hz

if true; then  # simulate (tests/cli.sh fails if it goes missing)
    vg 0 simulate examples/balancer.yaml --duration 0.2s --step 10ms --offset tilt.angle=1deg \
        --input drive=sine:0.1@3Hz --input shove=impulse:0.01N*s@50ms --plot "$T/sim.svg"
    vg 0 simulate examples/balancer.yaml --model linear --duration 0.2s --input drive=ramp:1/s@0.05s
    vg 0 simulate examples/balancer.yaml --model sampled --rate 100Hz --duration 0.2s --format json
    # a nonlinear run that fails part-way (exit 3), keeping its rows
    printf '%s\n' 'rigmat: 1' 'gravity: 0 m/s^2' 'bodies:' '  rod: {mass: 0 kg}' \
        '  bead: {mass: 0.05 kg}' 'joints:' '  spin: {type: hinge, parent: ground, child: rod}' \
        '  along: {type: slider, parent: rod, child: bead, axis: [1, 0]}' 'operating_point:' \
        '  coordinates: {along: 50 mm}' '  rates: {along: -0.5 m/s}' >"$T/bead.yaml"
    vg 3 simulate "$T/bead.yaml" --duration 0.2s --step 25ms --partial "$T/part.csv"
fi
if "$R" --help 2>/dev/null | grep -q '^  gains'; then
    vg 0 gains examples/balancer.yaml --rate 100Hz --weights tests/gains/balancer.yaml
    vg 0 gains examples/ball-beam.yaml --rate 100Hz --weights tests/gains/ball-beam.yaml --format json
    printf 'states:\n  tilt.angel: 3 deg\ninputs: {drive: 0.6, shove: 1 N}\n' >"$T/w.yaml"
    vg fail gains examples/balancer.yaml --rate 100Hz --weights "$T/w.yaml"
    for f in alias-billion-laughs.yaml deep-flow-seq-5000.yaml duplicate-keys-1000.yaml \
        binary-garbage.bin; do
        vg fail gains examples/balancer.yaml --rate 100Hz --weights "tests/hostile/$f"
    done
fi

# every export format of the demo, the mtx folder included
for fmt in json csv c numpy latex; do
    vg 0 discretize examples/balancer.yaml --rate 200Hz --format "$fmt"
done
vg 0 discretize examples/balancer.yaml --rate 200Hz --format c --ctype float
vg 0 linearize examples/balancer.yaml --format mtx -o "$T/mtx"
vg 0 trim examples/balancer.yaml --format json
vg 0 parts --format json

echo "valgrind-cli: $pass passed, $fail failed"
[ "$fail" = 0 ]
