#!/bin/sh
# startup.sh - whole-process cost: a trivial C program, the same linked
# with OpenBLAS, `rigmat --help`, and end to end `rigmat discretize` of the
# demo at 200 Hz; each with OpenBLAS's default threads and with
# OPENBLAS_NUM_THREADS=1 (its thread pool's share).  Mean of STARTUP_RUNS
# runs, wall and CPU (user + system, the steadier figure on a shared
# machine), and the ratios.  Part of `make bench`: it prints, never fails.
set -eu
B=${BUILD:-build}
R=${RIGMAT:-$B/rigmat}
CC=${CC:-cc}
D=$(mktemp -d)
trap 'rm -rf "$D"' EXIT INT TERM
printf 'int main(void) { return 0; }\n' >"$D/triv.c"
printf 'void cblas_dscal(int, double, double *, int);\nint main(int c, char **v) { double x = 1; (void)v; if (c > 9) cblas_dscal(1, 2.0, &x, 1); return 0; }\n' >"$D/blas.c"
"$CC" -O2 -o "$D/triv" "$D/triv.c"
if ! "$CC" -O2 -o "$D/blas" "$D/blas.c" -lopenblas 2>/dev/null; then
    cp "$D/triv" "$D/blas"
fi
RIGMAT=$R DEMO=$(dirname "$0")/../examples/balancer.yaml ${PYTHON:-/usr/bin/python3} - "$D" \
    "${STARTUP_RUNS:-100}" <<'PY'
import os
import resource
import subprocess
import sys
import time

d, n = sys.argv[1], int(sys.argv[2])
R, DEMO = os.environ["RIGMAT"], os.environ["DEMO"]


def cost(cmd, threads=None):
    env = dict(os.environ)
    if threads:
        env["OPENBLAS_NUM_THREADS"] = threads
    best = None
    for _ in range(3):
        c0 = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        for _ in range(n):
            subprocess.run(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        t = (time.perf_counter() - t0) / n
        c1 = resource.getrusage(resource.RUSAGE_CHILDREN)
        c = ((c1.ru_utime - c0.ru_utime) + (c1.ru_stime - c0.ru_stime)) / n
        if best is None or c < best[1]:
            best = (t, c)
    return best


rows = [("trivial C program", ["%s/triv" % d], None),
        ("trivial C program + OpenBLAS", ["%s/blas" % d], None),
        ("  the same, 1 OpenBLAS thread", ["%s/blas" % d], "1"),
        ("rigmat --help", [R, "--help"], None),
        ("  the same, 1 OpenBLAS thread", [R, "--help"], "1"),
        ("rigmat discretize demo 200Hz", [R, "discretize", DEMO, "--rate", "200Hz"], None),
        ("  the same, 1 OpenBLAS thread", [R, "discretize", DEMO, "--rate", "200Hz"], "1")]
res = {}
print("start-up: mean of %d runs, best of 3 batches, ms per process" % n)
print("%-32s %9s %9s" % ("", "wall", "CPU"))
for name, cmd, thr in rows:
    t, c = cost(cmd, thr)
    res[name if not name.startswith(" ") else res_last + " 1t"] = (t, c)
    if not name.startswith(" "):
        res_last = name
    print("%-32s %9.2f %9.2f" % (name, 1e3 * t, 1e3 * c))
triv, help_, disc = res["trivial C program"], res["rigmat --help"], res["rigmat discretize demo 200Hz"]
print("ratios (CPU): --help / trivial %.1f, discretize / trivial %.1f, discretize / --help %.2f"
      % (help_[1] / triv[1], disc[1] / triv[1], disc[1] / help_[1]))
print("ratios (wall): --help / trivial %.1f, discretize / trivial %.1f, discretize / --help %.2f"
      % (help_[0] / triv[0], disc[0] / triv[0], disc[0] / help_[0]))
PY
