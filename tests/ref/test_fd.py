"""Reference check of the sampled affine term `fd` of `rigmat discretize`.

A driven cart (examples/cart.yaml) linearized at a point that is not a steady
state: moving at 0.4 m/s with a push of 2 N against a viscous guide drag, so
f0 = [v, (F - c v)/m].  fd must equal (int_0^T e^{A s} ds) f0, computed here
independently by scipy.linalg.expm of the augmented matrix [[A, f0], [0, 0]] T
(C. F. Van Loan, IEEE Trans. Automatic Control 23(3), 1978), for zoh and foh
(a constant is held exactly by either), and the methods' own constant-input
rules for euler (T f0), backward-euler ((I - A T)^-1 T f0) and tustin
((I - A T/2)^-1 T f0).  f0 is also checked against the closed form, and fd
must be exactly zero at the cart's rest point.

Usage: RIGMAT=build/rigmat /usr/bin/python3 tests/ref/test_fd.py
"""
import json
import os
import subprocess
import sys

import numpy as np
from scipy.linalg import expm

RIGMAT = os.environ.get("RIGMAT", "build/rigmat")
HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
CART = os.path.join(ROOT, "examples", "cart.yaml")
MOVING = ["operating_point.rates.track=0.4 m/s", "operating_point.inputs.push=2 N"]


def run(method, sets):
    args = [RIGMAT, "discretize", CART, "--rate", "50Hz", "--method", method, "--format", "json"]
    for s in sets:
        args += ["--set", s]
    p = subprocess.run(args, capture_output=True, text=True, check=False)
    if p.returncode != 0:
        raise SystemExit("rigmat failed: %s" % p.stderr)
    return json.loads(p.stdout), p.stderr


def main():
    failures = 0
    T = 0.02
    m, c = 1.35, 2.7  # examples/cart.yaml: carriage mass, guide drag
    lin = subprocess.run([RIGMAT, "linearize", CART, "--format", "json"] +
                         sum([["--set", s] for s in MOVING], []),
                         capture_output=True, text=True, check=True)
    j = json.loads(lin.stdout)
    A = np.array(j["A"], dtype=float)
    f0 = np.array(j["equilibrium"]["f0"], dtype=float)
    want_f0 = np.array([0.4, (2.0 - c * 0.4) / m])
    if not np.allclose(f0, want_f0, rtol=1e-14, atol=0):
        print("FAIL: f0 %s, want %s" % (f0, want_f0))
        failures += 1
    n = A.shape[0]
    M = np.zeros((n + 1, n + 1))
    M[:n, :n] = A * T
    M[:n, n] = f0 * T
    exact = expm(M)[:n, n]
    I = np.eye(n)
    want = {
        "zoh": exact,
        "foh": exact,
        "euler": T * f0,
        "backward-euler": np.linalg.solve(I - A * T, T * f0),
        "tustin": np.linalg.solve(I - A * T / 2, T * f0),
    }
    for method, w in want.items():
        d, err = run(method, MOVING)
        fd = np.array(d["fd"], dtype=float)
        rel = np.linalg.norm(fd - w) / np.linalg.norm(w)
        if rel > 1e-13:
            print("FAIL: %s fd %s, want %s (rel %.3g)" % (method, fd, w, rel))
            failures += 1
        if "not a steady state" not in err or "d(track.velocity)/dt = 0.681481" not in err:
            print("FAIL: %s: no warning naming the largest f0 component:\n%s" % (method, err))
            failures += 1
    d, err = run("zoh", [])
    if any(v != 0.0 for v in d["fd"]) or "steady" in err:
        print("FAIL: fd %s at rest, or a warning: %s" % (d["fd"], err))
        failures += 1
    print("fd: %d failures" % failures)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
