#!/usr/bin/python3
"""The matrix exponential inside `rigmat discretize` (zoh: exp of the
augmented matrix [[A, B], [0, 0]] T) on every example, against mpmath.expm
at 40 digits and scipy.linalg.expm, with the condition-scaled tolerance of
tests/check_expm.c; and tests/ref/expm_cases.txt re-checked against
scipy.linalg.expm, so a stale or hand-edited reference file is caught.
Run by `make check-ref` with RIGMAT set."""
import glob
import json
import math
import os
import subprocess
import sys

import mpmath
import numpy as np
import scipy.linalg

RIGMAT = os.environ.get("RIGMAT", "build/rigmat")
HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.join(HERE, "..", "..")
U = 2.0 ** -53
FACTOR = 16.0  # EXPM_TOL_FACTOR of tests/check_expm.c
THETA9, THETA13 = 2.097847961257068, 5.371920351148152  # Higham 2005, Table 2.3
failures = 0


def tol(M):
    """16 u (kappa e^nu / nu + n), nu the norm the Pade approximant sees."""
    n = M.shape[0]
    norm = np.abs(M).sum(axis=0).max()
    s = 0
    if norm > THETA13:
        s = max(0, math.ceil(math.log2(norm / THETA13)))
    nu = norm / 2 ** s
    g = math.exp(nu) / nu if nu > 0 else 1.0
    return FACTOR * U * (scipy.linalg.expm_cond(M) * g + n)


def rel(got, want):
    den = np.linalg.norm(want)
    return np.linalg.norm(got - want) / den if den > 0 else np.linalg.norm(got)


def check(ok, what):
    global failures
    if not ok:
        failures += 1
        print("FAIL:", what)


def run(*args):
    p = subprocess.run([RIGMAT] + list(args), capture_output=True, text=True)
    if p.returncode != 0:
        raise RuntimeError("%s: exit %d: %s" % (" ".join(args), p.returncode, p.stderr))
    return json.loads(p.stdout)


def examples():
    worst = 0.0
    files = sorted(glob.glob(os.path.join(ROOT, "examples", "*.yaml")))
    for ex in files:
        lin = run("linearize", ex, "--format", "json")
        nx, nu = len(lin["states"]), len(lin["inputs"])
        if nx == 0:
            continue
        nuc = sum(1 for s in lin["inputs"] if s["role"] != "disturbance")
        A = np.array(lin["A"], dtype=float).reshape(nx, nx)
        B = np.array(lin["B"], dtype=float).reshape(nx, nu)
        for rate in ("200Hz", "1kHz"):
            dis = run("discretize", ex, "--rate", rate, "--format", "json")
            T = dis["period"]
            M = np.zeros((nx + nu, nx + nu))
            M[:nx, :nx] = A * T
            M[:nx, nx:] = B * T
            got = np.eye(nx + nu)
            got[:nx, :nx] = np.array(dis["Ad"], dtype=float).reshape(nx, nx)
            if nuc:
                got[:nx, nx:nx + nuc] = np.array(dis["Bd"], dtype=float).reshape(nx, nuc)
            if nu > nuc:
                got[:nx, nx + nuc:] = np.array(dis["Gd"], dtype=float).reshape(nx, nu - nuc)
            mpmath.mp.dps = 40
            E = mpmath.expm(mpmath.matrix(M.tolist()))
            exact = np.array([[float(E[i, j]) for j in range(nx + nu)] for i in range(nx + nu)])
            t = tol(M)
            e = rel(got, exact)
            es = rel(got, scipy.linalg.expm(M))
            check(e <= t, "%s %s: error %.3g > tol %.3g" % (os.path.basename(ex), rate, e, t))
            check(es <= 2 * t, "%s %s: differs from scipy by %.3g" % (ex, rate, es))
            worst = max(worst, e / t * FACTOR)
    return len(files), worst


def reference_file():
    """Each case of expm_cases.txt: scipy.linalg.expm within the same tolerance."""
    count = 0
    with open(os.path.join(HERE, "expm_cases.txt")) as f:
        lines = [l for l in f if not l.startswith("#")]
    for i in range(0, len(lines), 3):
        _, name, n, kappa = lines[i].split()
        n = int(n)
        A = np.array(lines[i + 1].split(), dtype=float).reshape(n, n)
        X = np.array(lines[i + 2].split(), dtype=float).reshape(n, n)
        e = rel(scipy.linalg.expm(A), X)
        check(e <= 2 * tol(A), "expm_cases.txt %s: scipy differs by %.3g" % (name, e))
        count += 1
    check(count >= 100, "expm_cases.txt has %d cases" % count)
    return count


def main():
    count = reference_file()
    n, worst = examples()
    print("expm: %d reference cases agree with scipy; %d examples, worst error / (u (kappa e^nu/nu"
          " + n)) = %.3g" % (count, n, worst))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
