#!/bin/sh
# oom-cli.sh - the program out of memory at every allocation of one run
# (`make check-oom`).  RIGMAT is the program linked with tests/oomwrap.c
# (build/san/rigmat-oom, a test-only link of the sanitizer build), which
# fails the allocation named by RIGMAT_OOM_FAIL_AT and writes how many it
# counted to RIGMAT_OOM_COUNT.  For n = 1, 2, ... until a run no longer
# reaches the n-th allocation, each run must exit 4, say "out of memory",
# leave no -o file behind (whole or nothing) and leak nothing
# (LeakSanitizer turns a leak into exit 23).
#
# OOM_STEP=K fails every K-th allocation only (1, 1+K, 1+2K, ...): each run
# is a sanitized process, about 0.2 s of CPU, and one command makes some
# 760 allocations.  `make check` uses a step of 7; .ci/run and
# `make check-oom OOM_CLI_STEP=1` take every one.  tests/oom.c covers every
# allocation of the library in `make check`.
set -u
STEP=${OOM_STEP:-1}
R=${RIGMAT:?RIGMAT must name the out-of-memory build of the program}
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT INT TERM
fail=0
runs=0

# one_command NAME ARGS...: every allocation of `rigmat ARGS -o FILE` fails in turn
one_command() {
    name=$1; shift
    n=1
    while :; do
        rm -f "$T/count" "$T/out"
        RIGMAT_OOM_FAIL_AT=$n RIGMAT_OOM_COUNT="$T/count" \
            ASAN_OPTIONS=detect_leaks=1:abort_on_error=0 "$R" "$@" -o "$T/out" \
            >/dev/null 2>"$T/err"
        rc=$?
        runs=$((runs + 1))
        count=$(cat "$T/count" 2>/dev/null || echo 0)
        if [ "$count" -lt "$n" ]; then
            if [ "$rc" != 0 ]; then
                fail=$((fail + 1)); echo "FAIL: $name: the run without a failure exits $rc" >&2
                sed 's/^/  | /' "$T/err" >&2
            fi
            echo "oom-cli: $name: $count allocations; every allocation at a step of $STEP failed in turn"
            return
        fi
        if [ "$rc" != 4 ] || ! grep -q "out of memory" "$T/err" || [ -e "$T/out" ]; then
            fail=$((fail + 1))
            echo "FAIL: $name: allocation $n of $count failed: exit $rc (want 4," \
                 "'out of memory', no output file)" >&2
            sed 's/^/  | /' "$T/err" | head -30 >&2
            [ "$fail" -gt 20 ] && return
        fi
        n=$((n + STEP))
    done
}

one_command "discretize balancer json" discretize examples/balancer.yaml --rate 200Hz \
    --format json --catalog catalog
echo "oom-cli: $runs runs, $fail failed"
[ "$fail" = 0 ]
