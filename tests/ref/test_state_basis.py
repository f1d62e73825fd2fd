"""Reference check of `state_basis` and of the documented state maps.

zoh, euler, backward-euler and zoh with a delay sample the physical state
(`state_basis: physical`); foh and tustin realize another one
(`transformed`), and then Qd is null (README.md, "State basis": never a
covariance that belongs to another state).  The maps the text prints are
checked numerically against the zoh state, with scipy.linalg.expm computing
everything independently of rigmat:
- foh, x = xi + G2 u (G2 the top right block of
  exp([[A T, B T, 0], [0, 0, I], [0, 0, 0]]), C. F. Van Loan 1978; G. F.
  Franklin, J. D. Powell, M. L. Workman, "Digital Control of Dynamic
  Systems", 1998, section 6.3.2): under a constant input the triangle hold
  equals the zero-order hold, so the mapped foh state must equal the zoh
  state at every sample;
- tustin, x = (I - A T/2)^-1 (xi + (T/2) B u): the trapezoidal rule is
  second order, so after a step from rest the mapped state follows the exact
  (zoh) state to O(T^2), at 5 kHz at least five times closer than xi itself, which is
  off by (T/2) x' (first order; common practice).
Without the maps both comparisons fail (checked too).

Usage: RIGMAT=build/rigmat /usr/bin/python3 tests/ref/test_state_basis.py
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
MODELS = ["quarter-car.yaml", "torsion.yaml", "cart.yaml"]


def run(*args):
    p = subprocess.run([RIGMAT] + list(args) + ["--format", "json"], capture_output=True,
                       text=True, check=False)
    if p.returncode != 0:
        raise SystemExit("rigmat %s failed: %s" % (" ".join(args), p.stderr))
    return json.loads(p.stdout)


def main():
    failures = 0

    def check(ok, what):
        nonlocal failures
        if not ok:
            print("FAIL: " + what)
            failures += 1

    for name in MODELS:
        ex = os.path.join(ROOT, "examples", name)
        lin = run("linearize", ex)
        nuc = sum(1 for s in lin["inputs"] if s["role"] == "input")
        A = np.array(lin["A"], dtype=float)
        B = np.array(lin["B"], dtype=float).reshape(A.shape[0], -1)[:, :nuc]
        n, T = A.shape[0], 1.0 / 200
        d = {}
        for method, basis in (("zoh", "physical"), ("euler", "physical"),
                              ("backward-euler", "physical"), ("foh", "transformed"),
                              ("tustin", "transformed")):
            d[method] = run("discretize", ex, "--rate", "200Hz", "--method", method)
            check(d[method]["state_basis"] == basis, "%s %s: state_basis %s, want %s"
                  % (name, method, d[method]["state_basis"], basis))
            check((d[method]["Qd"] is None) == (basis == "transformed"),
                  "%s %s: Qd given for a transformed state, or missing" % (name, method))
        dz = run("discretize", ex, "--rate", "200Hz", "--delay", "1.5")
        check(dz["state_basis"] == "physical", "%s: delayed zoh not physical" % name)
        if nuc == 0:
            continue
        u = np.ones(nuc)
        Az = np.array(d["zoh"]["Ad"]); Bz = np.array(d["zoh"]["Bd"])
        # foh: the mapped state follows the zoh state under a constant input
        M = np.zeros((n + 2 * nuc, n + 2 * nuc))
        M[:n, :n] = A * T
        M[:n, n:n + nuc] = B * T
        M[n:n + nuc, n + nuc:] = np.eye(nuc)
        G2 = expm(M)[:n, n + nuc:]
        Af = np.array(d["foh"]["Ad"]); Bf = np.array(d["foh"]["Bd"])
        x = np.zeros(n)
        xi = x - G2 @ u
        worst = worst_raw = 0.0
        for _ in range(50):
            x = Az @ x + Bz @ u
            xi = Af @ xi + Bf @ u
            scale = max(np.linalg.norm(x), 1e-300)
            worst = max(worst, np.linalg.norm(xi + G2 @ u - x) / scale)
            worst_raw = max(worst_raw, np.linalg.norm(xi - x) / scale)
        check(worst < 1e-10, "%s foh: mapped state differs from zoh by %.3g" % (name, worst))
        check(worst_raw > 1e-6, "%s foh: the unmapped state already equals zoh (%.3g)"
              % (name, worst_raw))
        # tustin: a step from rest.  The trapezoidal rule is second order, so
        # the mapped state follows the exact (zoh) state to O(T^2), while xi
        # itself is off by (T/2) x' (first order)
        # at 5 kHz: T w well below 1 on every example's fastest mode
        T = 1.0 / 5000
        dt = run("discretize", ex, "--rate", "5kHz", "--method", "tustin")
        dzf = run("discretize", ex, "--rate", "5kHz")
        At = np.array(dt["Ad"]); Bt = np.array(dt["Bd"])
        Az = np.array(dzf["Ad"]); Bz = np.array(dzf["Bd"])
        I = np.eye(n)
        x = np.zeros(n)
        xi = (I - A * T / 2) @ x - T / 2 * (B @ u)
        e = e_raw = scale = 0.0
        for _ in range(500):
            x = Az @ x + Bz @ u
            xi = At @ xi + Bt @ u
            xt = np.linalg.solve(I - A * T / 2, xi + T / 2 * (B @ u))
            scale = max(scale, np.linalg.norm(x))
            e = max(e, np.linalg.norm(xt - x))
            e_raw = max(e_raw, np.linalg.norm(xi - x))
        e, e_raw = e / scale, e_raw / scale  # relative to the largest state of the run
        check(e < 0.2 * e_raw, "%s tustin: mapped state %.3g not closer to zoh than xi (%.3g)"
              % (name, e, e_raw))
        print("ok   %-16s foh map %.2g (unmapped %.2g), tustin map %.2g (unmapped %.2g)"
              % (name, worst, worst_raw, e, e_raw))
    print("state basis: %d failures" % failures)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
