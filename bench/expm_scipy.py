#!/usr/bin/python3
"""Time scipy.linalg.expm on the matrices bench/expm_bench.c wrote and
print the comparison with rigmat_expm (its timings on stdin)."""
import sys
import timeit

import numpy as np
import scipy
import scipy.linalg


def best(f, min_batch=0.05, rounds=5):
    reps = 1
    while True:
        dt = timeit.timeit(f, number=reps)
        if dt >= min_batch:
            break
        reps *= 2
    return min(timeit.repeat(f, number=reps, repeat=rounds)) / reps


def main():
    folder = sys.argv[1]
    print("matrix exponential, seconds per call (best of 5, of 2 from n = 512; ||A||_1 = 20; scipy %s)"
          % scipy.__version__)
    print("%6s %12s %12s %10s %14s %9s" % ("n", "rigmat", "scipy", "rigmat/scipy",
                                            "rigmat/products", "products"))
    for line in sys.stdin:
        n, te, tp, prods, deg, sq = line.split()
        n = int(n)
        A = np.fromfile("%s/expm_%d.bin" % (folder, n)).reshape(n, n)
        ts = best(lambda: scipy.linalg.expm(A), rounds=2 if n >= 512 else 5)
        print("%6d %12.3e %12.3e %10.2f %14.2f %9s" % (n, float(te), ts, float(te) / ts,
                                                      float(te) / float(tp), prods))


if __name__ == "__main__":
    main()
