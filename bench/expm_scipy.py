#!/usr/bin/python3
"""Time scipy.linalg.expm on the matrices bench/expm_bench.c wrote and
print the comparison with rigmat_expm (its timings on stdin).  Both sides
are timed as wall time and as the process's CPU time (one BLAS thread, so
the CPU time is the figure that survives a shared, busy machine)."""
import sys
import time
import timeit

import numpy as np
import scipy
import scipy.linalg
from scipy.linalg._matfuncs_expm import pick_pade_structure


def best(f, timer, min_batch=0.05, rounds=5):
    reps = 1
    while True:
        dt = timeit.Timer(f, timer=timer).timeit(number=reps)
        if dt >= min_batch:
            break
        reps *= 2
    return min(timeit.Timer(f, timer=timer).repeat(number=reps, repeat=rounds)) / reps


def scipy_choice(A):
    """The Pade degree and squarings scipy's expm picks (Al-Mohy and Higham
    2009, as scipy implements it); its private helper, so None if absent."""
    try:
        n = A.shape[0]
        Am = np.empty((5, n, n))
        Am[0] = A
        m, s = pick_pade_structure(Am)
        return "%d/%d" % (m, s)
    except Exception:  # a private helper: absent in other scipy versions
        return "?"


def main():
    folder = sys.argv[1]
    print("matrix exponential, seconds per call (best of 5, of 2 from n = 512; ||A||_1 = 20; "
          "scipy %s; one BLAS thread; rigmat with RIGMAT_EXPM_POWERS)" % scipy.__version__)
    print("%6s %11s %11s %11s %11s %8s %8s %9s %9s %7s %7s" % (
        "n", "rigmat", "scipy", "rigmat cpu", "scipy cpu", "r/s", "r/s cpu", "r/prod",
        "r/prod cpu", "m/s", "scipy"))
    for line in sys.stdin:
        n, te, tp, prods, deg, sq, tec, tpc = line.split()
        n = int(n)
        A = np.fromfile("%s/expm_%d.bin" % (folder, n)).reshape(n, n)
        rounds = 2 if n >= 512 else 5
        ts = best(lambda: scipy.linalg.expm(A), time.perf_counter, rounds=rounds)
        tsc = best(lambda: scipy.linalg.expm(A), time.process_time, rounds=rounds)
        te, tp, tec, tpc = float(te), float(tp), float(tec), float(tpc)
        print("%6d %11.3e %11.3e %11.3e %11.3e %8.2f %8.2f %9.2f %9.2f %7s %7s" % (
            n, te, ts, tec, tsc, te / ts, tec / tsc, te / tp, tec / tpc,
            "%s/%s" % (deg, sq), scipy_choice(A)))
    print("r/s: rigmat over scipy; r/prod: rigmat over its own %s matrix products alone; "
          "m/s: Pade degree / squarings" % prods)


if __name__ == "__main__":
    main()
