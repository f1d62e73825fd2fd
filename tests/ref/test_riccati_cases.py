#!/usr/bin/python3
"""Re-check tests/ref/riccati_cases.txt against scipy directly: for every
case, scipy.linalg.solve_discrete_are on the stored A, B, Q, R (and S)
must reproduce the stored X (1e-12 relative, normwise), so the file that
tests/check_riccati.c holds rigmat's solver to is scipy's answer and not a
stale or edited one.  Run by `make check-ref`."""
import os
import sys

import numpy as np
import scipy.linalg

HERE = os.path.dirname(os.path.abspath(__file__))


def cases(path):
    with open(path) as f:
        lines = [l for l in f if l.strip() and not l.startswith("#")]
    i = 0
    while i < len(lines):
        _, name, n, m, has_s = lines[i].split()
        n, m, has_s = int(n), int(m), int(has_s)
        i += 1
        mats = []
        for shape in [(n, n), (n, m), (n, n), (m, m)] + ([(n, m)] if has_s else []) + [(n, n)]:
            mats.append(np.array(lines[i].split(), dtype=float).reshape(shape))
            i += 1
        yield name, mats, has_s


def main():
    bad = 0
    count = 0
    worst = 0.0
    for name, mats, has_s in cases(os.path.join(HERE, "riccati_cases.txt")):
        A, B, Q, R = mats[:4]
        S = mats[4] if has_s else None
        X = mats[-1]
        Y = scipy.linalg.solve_discrete_are(A, B, Q, R, s=S)
        e = np.linalg.norm(Y - X) / np.linalg.norm(X)
        worst = max(worst, e)
        count += 1
        if not e <= 1e-12:
            print("FAIL: %s: stored X differs from scipy by %.3g" % (name, e))
            bad += 1
    print("riccati cases: %d re-solved by scipy, worst difference %.2e" % (count, worst))
    if bad or count < 84:
        sys.exit(1)


if __name__ == "__main__":
    main()
