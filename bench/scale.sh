#!/bin/sh
# scale.sh - linearize + ZOH (1 kHz) of the mass chain and the pendulum chain
# (bench/chains.py) for N = 10, 30, 100, 300, 1000 as the library does them
# (bench/scale_bench.c), with the exponent fitted from N = 100 on; the
# 1000-mass chain against one 2000 x 2000 DGEMM measured in the same run;
# and the matrix exponential at n = 2000: its time against its own matrix
# products, GSL's LU against LAPACK's dgetrf.  Part of `make bench`: it
# prints, it never fails on time.  SCALE_NS overrides the sizes.
set -eu
B=${BUILD:-build}
PY=${PYTHON:-/usr/bin/python3}
HERE=$(dirname "$0")
D=$(mktemp -d)
trap 'rm -rf "$D"' EXIT INT TERM
NS=${SCALE_NS:-10 30 100 300 1000}
for kind in mass pendulum; do
    for n in $NS; do
        "$PY" "$HERE/chains.py" $kind $n >"$D/$kind-$n.yaml"
        printf '%s %s ' $kind $n
        "$B/bench/scale_bench" "$D/$kind-$n.yaml" 1000 || echo "failed"
    done
done >"$D/times"
dg=$("$B/bench/scale_bench" --dgemm 2000)
ex=$("$B/bench/scale_bench" --expm 2000)
"$PY" - "$D/times" "$dg" "$ex" <<'PY'
import sys
import numpy as np
rows = [l.split() for l in open(sys.argv[1]) if len(l.split()) == 5]
dgemm = float(sys.argv[2])
te, tp, tg, tl, prods = sys.argv[3].split()
print("scaling: linearize + ZOH at 1 kHz, seconds (one process, the library's own calls)")
print("%-9s %6s %7s %12s %12s %12s" % ("chain", "N", "states", "linearize", "discretize", "total"))
fit = {}
for kind, n, nx, tl_, td in rows:
    t = float(tl_) + float(td)
    print("%-9s %6s %7s %12.4g %12.4g %12.4g" % (kind, n, nx, float(tl_), float(td), t))
    fit.setdefault(kind, []).append((int(n), float(tl_), t))
for kind, v in fit.items():
    big = [x for x in v if x[0] >= 100]
    if len(big) >= 2:
        n = np.log([x[0] for x in big])
        el = np.polyfit(n, np.log([x[1] for x in big]), 1)[0]
        et = np.polyfit(n, np.log([x[2] for x in big]), 1)[0]
        print("%s chain: fitted exponent (N >= 100) linearize %.2f, linearize + ZOH %.2f"
              % (kind, el, et))
print("one 2000 x 2000 DGEMM: %.4g s" % dgemm)
for kind, v in fit.items():
    for n, _, t in v:
        if n == 1000:
            print("%s chain N = 1000: linearize + ZOH = %.1f DGEMMs (target: mass chain <= 40)"
                  % (kind, t / dgemm))
print("expm n = 2000 (||A||_1 = 20): %.4g s, its %s matrix products alone %.4g s, ratio %.2f"
      % (float(te), prods, float(tp), float(te) / float(tp)))
if float(tl) > 0:
    print("LU n = 2000: GSL gsl_linalg_LU_decomp %.4g s, LAPACK dgetrf %.4g s (expm uses dgetrf)"
          % (float(tg), float(tl)))
else:
    print("LU n = 2000: GSL gsl_linalg_LU_decomp %.4g s; no LAPACK in this BLAS" % float(tg))
PY
