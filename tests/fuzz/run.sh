#!/bin/sh
# run.sh TARGET SECONDS BUILD [LOG] - fuzz one target for SECONDS.
#
# Runs BUILD/fuzz_TARGET (libFuzzer) in the foreground, one process, on the
# working corpus BUILD/corpus/TARGET (kept between runs; new inputs land
# there), the seeds (tests/fuzz/seeds.sh) and tests/fuzz/regressions/TARGET,
# with tests/fuzz/rigmat.dict.  Crash inputs go to BUILD/artifacts/TARGET/.
# When LOG is given (tests/fuzz/LOG.md for `make fuzz`), one row is added
# to its table of runs and its totals are recomputed from all rows.  Exits
# non-zero when the fuzzer found a crash, a leak, a timeout or an
# out-of-memory input.  FUZZ_FLAGS adds libFuzzer options (for example
# `-fork=1 -ignore_crashes=1` to keep going past a known, unfixed crash).
set -u
t=$1
secs=$2
b=$3
log=${4:-}
bin=$b/fuzz_$t
case $t in
units) max_len=512 ;;
load) max_len=32768 ;;
*) max_len=8192 ;;
esac
corpus=$b/corpus/$t
seeds=$b/seeds/$t
art=$b/artifacts/$t
mkdir -p "$corpus" "$art" tests/fuzz/regressions/"$t"
sh tests/fuzz/seeds.sh "$t" "$seeds" || exit 2
RIGMAT_CATALOG=$(pwd)/catalog
export RIGMAT_CATALOG
out=$b/last-$t.log
# the commit fuzzed is the one checked out when the run starts
rev=$(git rev-parse --short HEAD 2>/dev/null || echo unknown)
if [ -n "$(git status --porcelain -- src 2>/dev/null)" ]; then rev="$rev+wip"; fi
before=$(find "$art" -type f | wc -l)
touch "$b/start-$t"
start=$(date +%s)
set -f # FUZZ_FLAGS is split into words below, never globbed
if [ -x /usr/bin/time ]; then
    # shellcheck disable=SC2086
    /usr/bin/time -q -f '%U %S' -o "$b/last-$t.time" "$bin" -max_total_time="$secs" -timeout=10 \
        -rss_limit_mb=1536 -max_len="$max_len" -dict=tests/fuzz/rigmat.dict \
        -artifact_prefix="$art/" -print_final_stats=1 ${FUZZ_FLAGS:-} "$corpus" "$seeds" \
        tests/fuzz/regressions/"$t" >"$out" 2>&1
    rc=$?
    cpu=$(awk 'NR == 1 { printf "%.1f", $1 + $2 }' "$b/last-$t.time")
else
    # shellcheck disable=SC2086
    "$bin" -max_total_time="$secs" -timeout=10 -rss_limit_mb=1536 -max_len="$max_len" \
        -dict=tests/fuzz/rigmat.dict -artifact_prefix="$art/" -print_final_stats=1 ${FUZZ_FLAGS:-} \
        "$corpus" "$seeds" tests/fuzz/regressions/"$t" >"$out" 2>&1
    rc=$?
    cpu=
fi
set +f
wall=$(($(date +%s) - start))
[ -n "$cpu" ] || cpu=$wall
execs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$out" | tail -n 1)
[ -n "$execs" ] || execs=$(sed -n 's/^#\([0-9]*\).*/\1/p' "$out" | tail -n 1)
[ -n "$execs" ] || execs=0
crashes=$(($(find "$art" -type f | wc -l) - before))
ncorpus=$(find "$corpus" -type f | wc -l)
echo "fuzz $t: ${wall}s wall, ${cpu}s CPU, $execs executions, corpus $ncorpus, new artifacts $crashes, exit $rc"
if [ "$rc" != 0 ]; then
    grep -E '^==[0-9]+==ERROR|SUMMARY|contract broken|runtime error' "$out" | head -n 5 >&2
    find "$art" -type f -newer "$b/start-$t" 2>/dev/null | sed 's/^/  artifact: /' >&2
    tail -n 40 "$out" | sed 's/^/  | /' >&2
fi

# Two targets may be fuzzed at once (one run.sh each): the log is updated
# under a lock (flock, util-linux, when present) so no row is lost.
update_log() {
    row="| $(date -u '+%Y-%m-%d %H:%M') | $t | $rev | $wall | $cpu | $execs | $crashes | $ncorpus |"
    printf '%s\n' "$row" >>"$log"
    # Recompute the totals block from every row of the runs table.
    awk '
        /^\| [0-9][0-9][0-9][0-9]-/ {
            split($0, c, "|"); t = c[3]; gsub(/ /, "", t)
            if (!(t in runs)) order[++n] = t
            runs[t]++; cpu[t] += c[6]; ex[t] += c[7]; cr[t] += c[8]
        }
        { line[++nl] = $0 }
        END {
            skip = 0
            for (i = 1; i <= nl; i++) {
                if (line[i] ~ /^<!-- totals end -->/) skip = 0
                if (skip) continue
                print line[i]
                if (line[i] ~ /^<!-- totals begin -->/) {
                    skip = 1
                    print "| target | runs | CPU seconds | CPU hours | executions | crashes found |"
                    print "|---|---|---|---|---|---|"
                    for (k = 1; k <= n; k++) { u = order[k]
                        printf "| %s | %d | %.0f | %.2f | %.0f | %d |\n", u, runs[u], cpu[u], cpu[u] / 3600, ex[u], cr[u] }
                }
            }
        }' "$log" >"$log.tmp.$$" && mv "$log.tmp.$$" "$log"
}
if [ -n "$log" ]; then
    if command -v flock >/dev/null 2>&1; then
        (flock 9 && update_log) 9>>"$b/log.lock"
    else
        update_log
    fi
fi
exit "$rc"
