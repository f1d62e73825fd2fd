#!/bin/sh
# expm.sh - rigmat_expm against scipy.linalg.expm on the same matrices, in
# one run (make bench).  One BLAS thread for both, so the ratio compares the
# algorithms rather than the thread pools.
set -eu
B=${BUILD:-build}
D=$(mktemp -d)
trap 'rm -rf "$D"' EXIT INT TERM
export OPENBLAS_NUM_THREADS=1 OMP_NUM_THREADS=1
"$B/bench/expm_bench" "$D" | /usr/bin/python3 "$(dirname "$0")/expm_scipy.py" "$D"
