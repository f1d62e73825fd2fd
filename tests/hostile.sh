#!/bin/sh
# hostile.sh - every file in the hostile corpus must be refused cleanly.
#
# Runs the plain build of the program (RIGMAT, default build/rigmat) on each
# entry of tests/hostile/ (files, and the folder that stands in for a model)
# and on large inputs generated here into HOSTILE_GEN (default
# build/hostile), so megabytes never sit in the repository.  Each entry is
# given to `check`, `linearize`, `discretize --rate 100Hz` and
# `modes --rate 100Hz`, and as the weights file of `gains
# examples/balancer.yaml --rate 100Hz --weights ENTRY` (the weights reader
# shares the model loader's YAML reader and limits).  Every run is bounded:
# address space HOSTILE_VMEM_KB (default 1 GiB), wall time HOSTILE_TIMEOUT
# seconds (default 10).  A run passes when
#   - it exits 1 (bad model) or 4 (input/output error): not 0, not a
#     signal, not the timeout;
#   - standard error holds a diagnostic line containing `error:`;
#   - standard output is empty (nothing is printed for a refused model);
#   - standard error holds no control character except newline and tab
#     (input echoed in messages is cleaned) and is under 1 MiB (the error
#     count is capped).
# The peak resident set of the worst run is printed when /usr/bin/time
# (Debian package `time`) is there.  The last line is
# `hostile: N passed, N failed`.  The corpus deliberately holds no valid
# model: each file is broken in exactly the way its first line says.
set -u
R=${RIGMAT:-build/rigmat}
H=${HOSTILE_DIR:-tests/hostile}
G=${HOSTILE_GEN:-build/hostile}
VMEM_KB=${HOSTILE_VMEM_KB:-1048576}
TIME_S=${HOSTILE_TIMEOUT:-10}
MAX_ERR_BYTES=1048576
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT INT TERM
pass=0
fail=0
worst_kb=0
worst_what=none
# One BLAS thread: each run is tiny, and thread stacks only eat address space.
OPENBLAS_NUM_THREADS=1
export OPENBLAS_NUM_THREADS
# Parts are found next to the model (tests/hostile/catalog), never elsewhere.
unset RIGMAT_CATALOG

if [ ! -x "$R" ]; then
    echo "hostile: $R is not built" >&2
    exit 1
fi

# ------------------------------------------------------------ big inputs
# Each generator writes one file once (remove HOSTILE_GEN to remake them);
# awk keeps them fast and POSIX.
gen() { # gen NAME AWK-PROGRAM
    if [ ! -s "$G/$1" ]; then
        awk "BEGIN { $2 }" >"$G/$1.tmp" && mv "$G/$1.tmp" "$G/$1"
    fi
}
mkdir -p "$G"
gen list-1e6-flow.yaml 'printf "rigmat: 1\nbodies: [1"; for (i = 1; i < 1000000; i++) printf ",1"; print "]"'
gen list-1e6-block.yaml 'print "rigmat: 1\nbodies:"; for (i = 0; i < 1000000; i++) print "- 1"'
gen bodies-1e5.yaml 'print "rigmat: 1\nbodies:"; for (i = 0; i < 100000; i++) printf "  b%d: {mass: 1 kg}\n", i'
gen bodies-1e4-bad.yaml 'print "rigmat: 1\nbodies:"; for (i = 0; i < 10000; i++) printf "  b%d: {mass: 3 m}\n", i'
gen oversize-5mib.yaml 'print "rigmat: 1"; for (i = 0; i < 81920; i++) printf "# %061d\n", i'
gen deep-flow-1e6.yaml 'printf "rigmat: 1\nbodies: "; for (i = 0; i < 1000000; i++) printf "["; print ""'
gen deep-flow-map-1e5.yaml 'printf "rigmat: 1\nbodies: "; for (i = 0; i < 100000; i++) printf "{a: "; print ""'
gen deep-block-2000.yaml 'print "rigmat: 1\nbodies:"; s = " "; for (i = 0; i < 2000; i++) { printf "%sk:\n", s; s = s " " }; printf "%sv: 1\n", s'
gen unit-sqrt-1e4.yaml 'printf "rigmat: 1\nbodies:\n  b: {mass: 1 "; for (i = 0; i < 10000; i++) printf "sqrt("; printf "kg"; for (i = 0; i < 10000; i++) printf ")"; print "}"'
gen unit-parens-1e5.yaml 'printf "rigmat: 1\nbodies:\n  b: {mass: \"1 "; for (i = 0; i < 100000; i++) printf "("; print "kg\"}"'
gen unit-product-1e5.yaml 'printf "rigmat: 1\nbodies:\n  b: {mass: \"1 kg"; for (i = 0; i < 100000; i++) printf "*kg"; print "\"}"'
gen number-1e6-digits.yaml 'printf "rigmat: 1\nbodies:\n  b: {mass: 1"; for (i = 0; i < 1000000; i++) printf "0"; print " kg}"'
gen long-line-3mb.yaml 'printf "rigmat: 1\nname: "; for (i = 0; i < 300000; i++) printf "xxxxxxxxxx"; print "\nbodies: 7"'
gen long-key-1mb.yaml 'printf "rigmat: 1\n"; for (i = 0; i < 100000; i++) printf "kkkkkkkkkk"; print ": 1"'
gen long-name-echoed.yaml 'printf "rigmat: 1\nbodies:\n  b: {mass: 1 kg}\njoints:\n  j: {type: hinge, parent: "; for (i = 0; i < 100000; i++) printf "pppppppppp"; print ", child: b}"'
gen duplicate-keys-1e5.yaml 'print "rigmat: 1\nbodies:"; for (i = 0; i < 100000; i++) print "  b: {}"'
gen anchors-1e5.yaml 'print "rigmat: 1"; for (i = 0; i < 100000; i++) printf "k%d: &a%d v\n", i, i; print "z: *a99999"'
gen laughs-wide.yaml 'print "rigmat: 1\nl0: &l0 [lol]"; for (i = 1; i < 40; i++) { printf "l%d: &l%d [", i, i; for (j = 0; j < 500; j++) printf "*l%d,", i - 1; print "x]" }'
gen unknown-keys-1e5.yaml 'print "rigmat: 1"; for (i = 0; i < 100000; i++) printf "zz%d: 1\n", i'
# Paths that are not plain files.
ln -sf symlink-loop.yaml "$G/symlink-loop.yaml"
mkdir -p "$G/empty-folder.yaml"

# ------------------------------------------------------------ one run
# Memory: prlimit when present (util-linux), else the shell's ulimit.  The
# peak RSS comes from /usr/bin/time, which waits for the whole chain.
PRLIMIT=
if command -v prlimit >/dev/null 2>&1; then PRLIMIT=prlimit; fi
TIMER=
if [ -x /usr/bin/time ]; then TIMER=/usr/bin/time; fi
bounded() { # bounded COMMAND [ARGS...]
    set -- timeout -s KILL "$TIME_S" "$@"
    echo 0 >"$T/rss"
    if [ -n "$TIMER" ]; then set -- "$TIMER" -q -f %M -o "$T/rss" "$@"; fi
    if [ -n "$PRLIMIT" ]; then
        "$PRLIMIT" --as=$((VMEM_KB * 1024)) -- "$@"
    else
        # shellcheck disable=SC3045 # dash and bash both have ulimit -v
        (ulimit -v "$VMEM_KB" && exec "$@")
    fi
}

bad() { fail=$((fail + 1)); echo "FAIL: $*" >&2; }

run() { # run WHAT PATH COMMAND [ARGS...]
    what=$1; shift
    bounded "$R" "$@" >"$T/out" 2>"$T/err" </dev/null
    rc=$?
    why=
    case $rc in
    1 | 4) ;;
    0) why="accepted (exit 0)" ;;
    137) why="killed: over ${TIME_S}s or out of memory (exit 137)" ;;
    *) why="exit $rc" ;;
    esac
    if [ -z "$why" ] && ! grep -q 'error:' "$T/err"; then why="no 'error:' line on stderr"; fi
    if [ -z "$why" ] && [ -s "$T/out" ]; then why="printed to stdout"; fi
    if [ -z "$why" ]; then
        nctl=$(LC_ALL=C tr -d '\t\n\040-\176\200-\377' <"$T/err" | wc -c)
        [ "$nctl" -eq 0 ] || why="$nctl raw control characters on stderr"
    fi
    if [ -z "$why" ]; then
        nerr=$(wc -c <"$T/err")
        [ "$nerr" -lt "$MAX_ERR_BYTES" ] || why="$nerr bytes on stderr"
    fi
    if [ -n "$why" ]; then
        bad "$what ($1): $why"
        head -c 600 "$T/err" | LC_ALL=C tr -c '\n\040-\176' '?' | head -n 4 | sed 's/^/  | /' >&2
    else
        pass=$((pass + 1))
    fi
    kb=$(tail -n 1 "$T/rss" 2>/dev/null)
    case $kb in
    '' | *[!0-9]*) kb=0 ;;
    esac
    if [ "$kb" -gt "$worst_kb" ]; then worst_kb=$kb; worst_what="$what ($1)"; fi
}

# every command that reads a model (tests/cli.sh fails if one goes missing;
# none is skipped here for want of it)
cmds="check linearize discretize modes gains-weights"

n=0
for f in "$H"/* "$G"/* /dev/zero /dev/null; do
    case $f in
    "$H/catalog" | *.tmp) continue ;;
    esac
    [ -e "$f" ] || [ -L "$f" ] || continue
    n=$((n + 1))
    for c in $cmds; do
        if [ "$c" = discretize ] || [ "$c" = modes ]; then
            run "$f" "$c" "$f" --rate 100Hz
        elif [ "$c" = gains-weights ]; then
            run "$f" gains examples/balancer.yaml --rate 100Hz --weights "$f"
        else
            run "$f" "$c" "$f"
        fi
    done
done
# A path through a file as if it were a folder.
n=$((n + 1))
run "$H/empty.yaml/" check "$H/empty.yaml/"

echo "hostile: $n inputs, commands: $cmds"
if [ -n "$TIMER" ]; then
    echo "hostile: peak RSS $worst_kb KiB, on $worst_what"
else
    echo "hostile: peak RSS not measured (install Debian package time)"
fi
echo "hostile: $pass passed, $fail failed"
[ "$fail" = 0 ]
