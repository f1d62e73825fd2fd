#!/bin/sh
# mutants.sh - the mutation check (`make check-mutants`): plant each one-line
# bug of tests/mutants.list in a scratch copy of the sources, rebuild the
# plain test program and require the tests to catch it.
#
# List format, one mutant per line, fields separated by one TAB:
#     FILE  ORIGINAL  REPLACEMENT  WHAT-IT-FLIPS  [EXTRA]
# ORIGINAL is literal text (no TAB, no newline) that must occur exactly once
# in FILE: anything else stops the run with an error naming the line, so
# the list cannot rot silently when the code moves.  Every mutant runs the
# fast Check suites (all of them, stopping at the first failure).  EXTRA,
# when present, is a comma-separated list of further checks for a mutant
# the suites alone might miss: `cli` (tests/cli.sh) or a reference script
# `ref:tests/ref/NAME.py`.  Lines that are empty or start with # are
# comments.
#
# Environment: MUTANTS_LIST (default tests/mutants.list), MUTANTS_DIR (the
# scratch folder; default a new temporary one, removed afterwards),
# PYTHON (default /usr/bin/python3), MAKE (default make), MUTANTS_JOBS
# (parallel jobs for the first build, default 2), MUTANTS_TIMEOUT (seconds
# per test case, default 300).  A test that times out does not count as a
# catch: the run stops and says so (a busy machine, or a mutant that loops).
set -u
LIST=${MUTANTS_LIST:-tests/mutants.list}
PY=${PYTHON:-/usr/bin/python3}
MK=${MAKE:-make}
JOBS=${MUTANTS_JOBS:-2}
TIMEOUT=${MUTANTS_TIMEOUT:-300}
TOP=$(pwd)
TAB=$(printf '\t')

die() { echo "mutants: $*" >&2; exit 2; }

[ -f "$LIST" ] || die "no list file $LIST"
[ -f Makefile ] && [ -d src ] || die "run from the top of the source tree"
if [ -n "${MUTANTS_DIR:-}" ]; then
    S=$MUTANTS_DIR
    mkdir -p "$S" || die "cannot create $S"
    keep=1
else
    S=$(mktemp -d "${TMPDIR:-/tmp}/rigmat-mutants.XXXXXX") || die "cannot create a scratch folder"
    keep=0
fi
cleanup() { [ "$keep" = 1 ] || rm -rf "$S"; }
trap cleanup EXIT
trap 'exit 130' INT TERM

# The scratch copy: everything the build and the tests read.
for d in src include tests catalog examples; do
    rm -rf "${S:?}/$d"
    cp -R "$d" "$S/$d" || die "cannot copy $d"
done
cp Makefile rigmat.pc.in README.md "$S/" || die "cannot copy the Makefile and README.md"

build() { # build TARGET... (quiet; the log goes to $S/build.log)
    (cd "$S" && $MK --no-print-directory -j"$JOBS" BUILD=build "$@") </dev/null >"$S/build.log" 2>&1
}

# The suites, from the generated list.
echo "mutants: building the plain test program in $S"
build build/plain/check_rigmat build/plain/rigmat build/shim/writefail.so || { cat "$S/build.log" >&2; die "the unmutated sources do not build"; }
SUITES=$(sed -n 's/^RIGMAT_SUITE(\(.*\))$/\1/p' "$S/build/suites.h")
[ -n "$SUITES" ] || die "no suites found in $S/build/suites.h"

# run_suites: 0 when every suite passes, 1 at the first one that fails
# (its name in $failed_by); a timeout stops the run.
run_suites() {
    for s in $SUITES; do
        if ! (cd "$S/tests" && CK_RUN_SUITE=$s CK_VERBOSITY=normal CK_DEFAULT_TIMEOUT=$TIMEOUT \
                ../build/plain/check_rigmat) </dev/null >"$S/suite.log" 2>&1; then
            if grep -q "Test timeout expired" "$S/suite.log"; then
                grep "Test timeout expired" "$S/suite.log" >&2
                die "suite $s timed out${1:+ under $1} (raise MUTANTS_TIMEOUT on a busy machine)"
            fi
            failed_by="suite $s"
            return 1
        fi
    done
    return 0
}

# run_extra LIST: the extra checks of one mutant; 1 at the first failure.
run_extra() {
    old_ifs=$IFS
    IFS=,
    set -- $1
    IFS=$old_ifs
    for x in "$@"; do
        case $x in
        cli)
            if ! (cd "$S" && RIGMAT=build/plain/rigmat WRITE_SHIM=build/shim/writefail.so sh tests/cli.sh) </dev/null >"$S/extra.log" 2>&1; then
                failed_by="tests/cli.sh"
                return 1
            fi ;;
        ref:*)
            script=${x#ref:}
            [ -f "$S/$script" ] || die "$LIST: no reference script $script"
            if ! (cd "$S" && RIGMAT=build/plain/rigmat "$PY" "$script") </dev/null >"$S/extra.log" 2>&1; then
                failed_by="$script"
                return 1
            fi ;;
        '') ;;
        *) die "$LIST: unknown extra check '$x' (want cli or ref:tests/ref/NAME.py)" ;;
        esac
    done
    return 0
}

# The unmutated tree must pass what the mutants are judged by.
echo "mutants: baseline"
run_suites || die "the unmutated sources fail $failed_by (see $S/suite.log)"
extras=$(awk -F"$TAB" '!/^#/ && NF >= 5 && $5 != "" {print $5}' "$LIST" | tr '\n' ',' )
run_extra "$extras" || die "the unmutated sources fail $failed_by (see $S/extra.log)"

# apply FILE ORIGINAL REPLACEMENT: the one occurrence replaced, or exit 3
# (missing) / 4 (more than one).
apply() {
    "$PY" - "$1" "$2" "$3" <<'EOF'
import sys
path, old, new = sys.argv[1], sys.argv[2], sys.argv[3]
with open(path, encoding="utf-8") as f:
    text = f.read()
count = text.count(old)
if count != 1:
    print(count)
    sys.exit(3 if count == 0 else 4)
with open(path, "w", encoding="utf-8") as f:
    f.write(text.replace(old, new, 1))
EOF
}

start=$(date +%s)
total=0
caught=0
survived=0
lineno=0
while IFS= read -r line || [ -n "$line" ]; do
    lineno=$((lineno + 1))
    case $line in ''|'#'*) continue ;; esac
    file=$(printf '%s' "$line" | cut -f1)
    orig=$(printf '%s' "$line" | cut -f2)
    repl=$(printf '%s' "$line" | cut -f3)
    what=$(printf '%s' "$line" | cut -f4)
    extra=$(printf '%s' "$line" | cut -f5)
    nf=$(printf '%s' "$line" | awk -F"$TAB" '{print NF}')
    [ "$nf" -ge 4 ] && [ "$nf" -le 5 ] || die "$LIST:$lineno: want 4 or 5 TAB-separated fields, got $nf"
    [ -n "$orig" ] && [ -n "$what" ] || die "$LIST:$lineno: empty original text or description"
    [ "$orig" != "$repl" ] || die "$LIST:$lineno: the replacement equals the original"
    [ -f "$S/$file" ] || die "$LIST:$lineno: no file $file"
    total=$((total + 1))
    cp "$S/$file" "$S/pristine" || die "cannot save $file"
    n=$(apply "$S/$file" "$orig" "$repl")
    case $? in
    0) ;;
    3) die "$LIST:$lineno: the original text is not in $file (re-anchor this line): $orig" ;;
    *) die "$LIST:$lineno: the original text occurs $n times in $file (make it unique): $orig" ;;
    esac
    failed_by=""
    targets=build/plain/check_rigmat
    [ -n "$extra" ] && targets="$targets build/plain/rigmat"
    # shellcheck disable=SC2086
    if ! build $targets; then
        cp "$S/pristine" "$S/$file"
        cat "$S/build.log" >&2
        die "$LIST:$lineno: the mutant does not compile (a mutant must be a valid program)"
    fi
    if ! run_suites "$LIST:$lineno"; then
        :
    elif [ -n "$extra" ] && ! run_extra "$extra"; then
        :
    fi
    # restore, and make the next build see the file as changed
    cp "$S/pristine" "$S/$file" && touch "$S/$file"
    if [ -n "$failed_by" ]; then
        caught=$((caught + 1))
        printf 'caught   %3d  %-28s %s (by %s)\n' "$lineno" "$file" "$what" "$failed_by"
    else
        survived=$((survived + 1))
        printf 'SURVIVED %3d  %-28s %s\n' "$lineno" "$file" "$what"
    fi
done <"$LIST"

# the restored tree builds again (keeps a kept scratch folder usable)
build build/plain/check_rigmat || die "the restored sources do not build"
echo "mutants: $total listed, $caught caught, $survived survived ($(($(date +%s) - start)) s)"
[ "$total" -gt 0 ] || die "the list is empty"
[ "$survived" = 0 ]
