#!/bin/sh
# sweep.sh - sweep throughput: `rigmat sweep` of the demo (linearize + ZOH
# at 200 Hz per point, --format npy) as a whole process on one thread and on
# every core, against a Python loop that only runs
# scipy.signal.cont2discrete (ZOH) on the same A, B, C, D, precomputed (read
# from a sweep without --rate).  Also the compute-only time per point (the
# difference of two sweep sizes, so the start-up cancels), in wall and CPU
# time: on a shared machine the CPU time is the steadier figure.  Part of
# `make bench`: it prints, it never fails on time.  SWEEP_POINTS overrides
# the size (default 20000, so that the process start-up is spread thin).
# Then bench/sweep_bench.c: the compute alone per point (rigmat_sweep_run,
# no process, no output) on the fast path and by reloading the model at
# every point (from the kept tree, and by reading the file again), its
# linearize and sampling stages, and the counts behind an estimate of the
# operations per point.
set -eu
# one thread for numpy's BLAS: the comparison is one thread against one
# thread, and an oversubscribed OpenBLAS pool spinning in sched_yield made
# the scipy loop 60 times slower on a loaded machine (a ratio of 65 that
# meant nothing)
export OPENBLAS_NUM_THREADS=1 OMP_NUM_THREADS=1
D=$(mktemp -d)
trap 'rm -rf "$D"' EXIT INT TERM
RIGMAT=${RIGMAT:-build/rigmat} DEMO=$(dirname "$0")/../examples/balancer.yaml \
    ${PYTHON:-/usr/bin/python3} - "$D" "${SWEEP_POINTS:-20000}" <<'PY'
import os
import resource
import subprocess
import sys
import time
import numpy as np
import scipy
import scipy.signal

d, P = sys.argv[1], int(sys.argv[2])
P0 = 200
R, DEMO = os.environ["RIGMAT"], os.environ["DEMO"]
NT = os.cpu_count() or 2


def run(points, threads, out, rate=True):
    cmd = [R, "sweep", DEMO, "--vary", "tilt=-10deg:10deg:%d" % points, "--threads",
           str(threads), "--format", "npy", "-o", "%s/%s" % (d, out)]
    if rate:
        cmd += ["--rate", "200Hz"]
    c0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    t = time.perf_counter() - t0
    c1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    return t, (c1.ru_utime - c0.ru_utime) + (c1.ru_stime - c0.ru_stime)


t1, c1 = run(P, 1, "s1")
tn, cn = run(P, NT, "sn")
t0, c0 = run(P0, 1, "s0")
run(P, 1, "c", rate=False)
A, B, C, D = (np.load("%s/c/%s.npy" % (d, k)) for k in "ABCD")
k = min(P, 1000)
start = time.perf_counter()
for i in range(k):
    scipy.signal.cont2discrete((A[i], B[i], C[i], D[i]), 1.0 / 200.0, method="zoh")
ts = (time.perf_counter() - start) / k
same = all(open("%s/s1/%s" % (d, f), "rb").read() == open("%s/sn/%s" % (d, f), "rb").read()
           for f in os.listdir("%s/s1" % d))
print("sweep: the demo (%d states), %d points, linearize + ZOH at 200 Hz, --format npy, "
      "whole process, start-up included (scipy %s)" % (A.shape[1], P, scipy.__version__))
print("  rigmat, 1 thread:   %8.0f points/s (%.3g s wall, %.3g s CPU)" % (P / t1, t1, c1))
print("  rigmat, %d threads:  %8.0f points/s (%.3g s wall, %.3g s CPU)%s"
      % (NT, P / tn, tn, cn, ", same bytes" if same else ", OUTPUT DIFFERS FROM 1 THREAD"))
print("  scipy cont2discrete only, precomputed A, B: %8.0f points/s" % (1.0 / ts))
print("  ratio rigmat (1 thread) / scipy: %.2f (target >= 10)" % ((P / t1) * ts))
print("  compute-only per point, 1 thread: %.0f us wall, %.0f us CPU (%d - %d points)"
      % (1e6 * (t1 - t0) / (P - P0), 1e6 * (c1 - c0) / (P - P0), P, P0))
PY
B=${BUILD:-build}
if [ -x "$B/bench/sweep_bench" ]; then
    DEMO=$(dirname "$0")/../examples/balancer.yaml
    F=$("$B/bench/sweep_bench" "$DEMO" "tilt=-10deg:10deg:${SWEEP_POINTS:-20000}" 200)
    R=$("$B/bench/sweep_bench" "$DEMO" "tilt=-10deg:10deg:1000" 200 --reload)
    W=$("$B/bench/sweep_bench" "$DEMO" "tilt=-10deg:10deg:1000" 200 --reread)
    ${PYTHON:-/usr/bin/python3} - "$F" "$R" "$W" <<'PY'
import sys
f = dict(kv.split("=") for kv in sys.argv[1].split())
r = dict(kv.split("=") for kv in sys.argv[2].split())
w = dict(kv.split("=") for kv in sys.argv[3].split())
n = int(f["expm_n"])
prods = int(f["expm_products"])
# ZOH: one exponential of the (nx + nu) block; a product of two n x n
# matrices is 2 n^3 flops, the Pade solve (LU, 2 triangular solves with n
# right-hand sides) 2/3 n^3 + 2 n^3 (G. H. Golub, C. F. Van Loan, Matrix
# Computations, 4th ed. 2013, sec. 3.2 and 1.1)
flops = prods * 2 * n ** 3 + (2.0 / 3.0 + 2.0) * n ** 3
print("  compute only (rigmat_sweep_run, 1 thread, no process, no output):")
print("    fast path (model loaded once, values written in place): %s us/point CPU"
      " (%s us wall), %s points" % (f["sweep_us_cpu"], f["sweep_us_wall"], f["points"]))
print("    reloading the model at every point (the path of a parameter axis),")
print("      from the tree kept after parsing:                       %s us/point CPU"
      " (%s us wall), %s points" % (r["sweep_us_cpu"], r["sweep_us_wall"], r["points"]))
print("      reading and parsing the file again:                     %s us/point CPU"
      " (%s us wall), %s points" % (w["sweep_us_cpu"], w["sweep_us_wall"], w["points"]))
print("    stages: linearize %s us (%s complex evaluations of f and h), ZOH %s us"
      % (f["lin_us"], f["evals"], f["disc_us"]))
print("    ZOH exponential: %dx%d, Pade degree %s, %s squarings, %d products: about %.0f"
      " flops, i.e. %.2f GFLOP/s at the ZOH time"
      % (n, n, f["expm_degree"], f["expm_squarings"], prods, flops,
         flops / (1e3 * float(f["disc_us"]))))
PY
fi
