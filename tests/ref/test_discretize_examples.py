#!/usr/bin/python3
"""Every discretization method of `rigmat discretize` on every example
against scipy.signal.cont2discrete applied to `rigmat linearize`'s A, B, C,
D (<= 1e-12 relative, normwise; where the two double-precision results
differ by more, a 40-digit mpmath value arbitrates and ours must be within
1e-12 of it); Qd symmetric positive semi-definite; Qd
against an independent quadrature of int_0^T e^{As} G Qc G^T e^{A^T s} ds;
the delay states' structure.  Run by `make check-ref` with RIGMAT set."""
import glob
import json
import math
import os
import subprocess
import re
import sys
import tempfile

import mpmath
import numpy as np
import scipy.integrate
import scipy.linalg
import scipy.signal

RIGMAT = os.environ.get("RIGMAT", "build/rigmat")
ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..")
TOL = 1e-12
RATES = ("200Hz", "1kHz")
METHODS = (("zoh", "zoh"), ("foh", "foh"), ("tustin", "bilinear"), ("euler", "euler"),
           ("backward-euler", "backward_diff"))
failures = 0


def run(*args):
    p = subprocess.run([RIGMAT] + list(args), capture_output=True, text=True)
    if p.returncode != 0:
        raise RuntimeError("%s: exit %d: %s" % (" ".join(args), p.returncode, p.stderr))
    return json.loads(p.stdout)


def mat(v, r, c):
    a = np.array(v, dtype=float)
    return a.reshape(r, c)


def rel(got, want):
    got = np.asarray(got, dtype=float)
    want = np.asarray(want, dtype=float)
    if want.size == 0:
        return 0.0
    den = np.linalg.norm(want)
    num = np.linalg.norm(got - want)
    return num / den if den > 0 else num


def mp_reference(method, A, B, C, D, T):
    """The sampled model at 40 digits (mpmath), from the formulas of
    C. F. Van Loan, IEEE Trans. Automatic Control 23(3), 1978, and G. F.
    Franklin, J. D. Powell, M. L. Workman, Digital Control of Dynamic
    Systems, 1998, chapters 4 and 6 (zoh and foh through the exponential
    of the augmented matrix; Tustin, Euler and backward Euler in closed
    form).  Used to arbitrate when ours and scipy's double-precision results
    differ by more than the tolerance: both carry rounding, and the 40-digit
    value says which of them is off."""
    mpmath.mp.dps = 40
    n, m = B.shape
    Am, Bm, Cm, Dm = (mpmath.matrix(X.tolist()) for X in (A, B, C, D))
    I = mpmath.eye(n)
    if method in ("zoh", "foh"):
        k = n + (m if method == "zoh" else 2 * m)
        M = mpmath.zeros(k, k)
        for i in range(n):
            for j in range(n):
                M[i, j] = Am[i, j] * T
            for j in range(m):
                M[i, n + j] = Bm[i, j] * T
        if method == "foh":
            for j in range(m):
                M[n + j, n + m + j] = 1
        E = mpmath.expm(M)
        Phi = E[0:n, 0:n]
        G1 = E[0:n, n:n + m]
        if method == "zoh":
            return Phi, G1, Cm, Dm
        G2 = E[0:n, n + m:n + 2 * m]
        return Phi, G1 + (Phi - I) * G2, Cm, Dm + Cm * G2
    if method == "euler":
        return I + Am * T, Bm * T, Cm, Dm
    if method == "bilinear":
        Ki = mpmath.inverse(I - Am * (T / 2))
        return Ki * (I + Am * (T / 2)), Ki * Bm * T, Cm * Ki, Dm + Cm * Ki * Bm * (T / 2)
    Ki = mpmath.inverse(I - Am * T)  # backward_diff
    return Ki, Ki * Bm * T, Cm * Ki, Dm + Cm * Ki * Bm * T


def to_np(X):
    return np.array(X.tolist(), dtype=float)


def check(ok, what):
    global failures
    if not ok:
        failures += 1
        print("FAIL:", what)


def direct_disturbance():
    """The demo with its shove made white (bandwidth removed): the disturbance
    reaches the accelerometer directly.  Rd gains E Qc E^T / T and
    S = Gd Qc E^T / T (zoh), as src/sample/noise.h states."""
    demo = os.path.join(ROOT, "examples", "balancer.yaml")
    if not os.path.exists(demo):
        return
    text = open(demo).read()
    white = re.sub(r",\s*bandwidth:\s*5\s*Hz", "", text)
    check(white != text, "balancer.yaml: the shove's bandwidth was not found")
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "white.yaml")
        with open(path, "w") as f:
            f.write(white)
        p = subprocess.run([RIGMAT, "discretize", path, "--rate", "200Hz", "--format", "json",
                            "--catalog", os.path.join(ROOT, "catalog")],
                           capture_output=True, text=True)
        check(p.returncode == 0, "white demo: exit %d: %s" % (p.returncode, p.stderr))
        if p.returncode != 0:
            return
        check("reaches sensor 'accel' directly" in p.stderr, "white demo: no warning")
        d = json.loads(p.stdout)
        nx, ny = len(d["Ad"]), len(d["Rd"])
        nuc = len(d["Bd"][0]) if nx and d["Bd"] and d["Bd"][0] else 0
        T = d["period"]
        qc = np.diag(np.array(d["Qc"], dtype=float))  # disturbances only
        E = np.array(d["Ed"], dtype=float).reshape(ny, -1)
        G = np.array(d["Gd"], dtype=float).reshape(nx, -1)
        check("S" in d, "white demo: no S")
        if "S" in d:
            S = np.array(d["S"], dtype=float)
            check(rel(S, G @ qc @ E.T / T) <= TOL, "white demo: S differs from Gd Qc E^T / T")
        direct = E @ qc @ E.T / T
        rd = np.array(d["Rd"], dtype=float)
        i = [o["name"] for o in d["outputs"]].index("accel")
        check(abs(rd[i, i] - direct[i, i] - 0.02 ** 2) <= 1e-12 * rd[i, i],
              "white demo: Rd(accel) = %.17g, want 0.02^2 + %.17g" % (rd[i, i], direct[i, i]))


def misuse():
    """Exit code 2 and a one-line reason for each misuse."""
    demo = os.path.join(ROOT, "examples", "balancer.yaml")
    for args in (["--rate", "200Hz", "--period", "5ms"], [], ["--rate", "200Hz", "--method", "x"],
                 ["--rate", "200Hz", "--method", "tustin", "--delay", "1"],
                 ["--rate", "200Hz", "--method", "tustin", "--prewarp", "100Hz"],
                 ["--rate", "200Hz", "--prewarp", "3Hz"], ["--rate", "5ms"],
                 ["--rate", "200Hz", "--delay", "-1"]):
        p = subprocess.run([RIGMAT, "discretize", demo] + args, capture_output=True, text=True)
        check(p.returncode == 2 and p.stdout == "",
              "discretize %s: exit %d, want 2" % (" ".join(args), p.returncode))


def main():
    misuse()
    direct_disturbance()
    examples = sorted(glob.glob(os.path.join(ROOT, "examples", "*.yaml")))
    if not examples:
        print("no examples; nothing to compare")
        return 0
    worst = 0.0
    worst_q = 0.0
    for ex in examples:
        lin = run("linearize", ex, "--format", "json")
        nx, nu, ny = len(lin["states"]), len(lin["inputs"]), len(lin["outputs"])
        if nx == 0:
            continue
        nuc = sum(1 for s in lin["inputs"] if s["role"] != "disturbance")
        A, B = mat(lin["A"], nx, nx), mat(lin["B"], nx, nu)
        C, D = mat(lin["C"], ny, nx), mat(lin["D"], ny, nu)
        if nu == 0:
            B = np.zeros((nx, 1))
            D = np.zeros((ny, 1))
        for rate in RATES:
            for ours, theirs in METHODS:
                dis = run("discretize", ex, "--rate", rate, "--method", ours, "--format", "json")
                T = dis["period"]
                ad, bd, cd, dd, _ = scipy.signal.cont2discrete((A, B, C, D), T, method=theirs)
                got_b = np.hstack([mat(dis["Bd"], nx, nuc), mat(dis["Gd"], nx, nu - nuc)])
                got_d = np.hstack([mat(dis["Dd"], ny, nuc), mat(dis["Ed"], ny, nu - nuc)])
                # Dd = D + C X B-like products: rounding is relative to ||C|| ||Bd||,
                # which can dwarf ||Dd|| (a sensor that barely sees the input)
                dscale = max(np.linalg.norm(dd[:, :nu]), np.linalg.norm(C) * np.linalg.norm(bd))
                errs = [rel(mat(dis["Ad"], nx, nx), ad), rel(got_b, bd[:, :nu]),
                        rel(mat(dis["Cd"], ny, nx), cd),
                        np.linalg.norm(got_d - dd[:, :nu]) / dscale if dscale > 0 else 0.0]
                if max(errs) > TOL:
                    # arbitrate with the 40-digit value: ours must be within
                    # TOL of it (and scipy is then the one that is off)
                    ra, rb, rc, rd = (to_np(X) for X in mp_reference(theirs, A, B, C, D, T))
                    mscale = max(np.linalg.norm(rd), np.linalg.norm(C) * np.linalg.norm(rb))
                    mp_errs = [rel(mat(dis["Ad"], nx, nx), ra), rel(got_b, rb),
                               rel(mat(dis["Cd"], ny, nx), rc),
                               np.linalg.norm(got_d - rd) / mscale if mscale > 0 else 0.0]
                    print("note: %s %s %s: scipy differs by %.3g; against 40 digits ours "
                          "%.3g, scipy %.3g" % (os.path.basename(ex), rate, ours, max(errs),
                                                max(mp_errs), max(rel(bd[:, :nu], rb),
                                                                  rel(ad, ra))))
                    errs = mp_errs
                for name, e in zip(("Ad", "Bd|Gd", "Cd", "Dd|Ed"), errs):
                    check(e <= TOL, "%s %s %s: %s differs from the reference by %.3g"
                          % (os.path.basename(ex), rate, ours, name, e))
                    worst = max(worst, e)
                if ours in ("foh", "tustin"):
                    # a transformed state gets no Qd (README.md, "State basis")
                    check(dis["Qd"] is None, "%s %s: Qd for a transformed state" % (ex, ours))
                else:
                    Q = mat(dis["Qd"], nx, nx)
                    check(np.array_equal(Q, Q.T), "%s %s: Qd not symmetric" % (ex, ours))
                    ev = np.linalg.eigvalsh(Q) if nx else np.zeros(1)
                    check(ev.min() >= -nx * 2.2e-16 * max(abs(ev).max(), 1e-300),
                          "%s %s: Qd indefinite (%.3g)" % (ex, ours, ev.min()))
                check(dis["qd_exact"] == (ours == "zoh"), "%s: qd_exact flag" % ex)
            # Qd by quadrature, independent of the block method
            dis = run("discretize", ex, "--rate", rate, "--format", "json")
            T = dis["period"]
            qc = np.array(dis["Qc"], dtype=float)  # disturbances only: Gd's columns
            check(qc.shape == (nu - nuc,), "%s: Qc has %d entries for %d disturbances"
                  % (ex, qc.size, nu - nuc))
            if nu > nuc and qc.any():
                G = B[:, nuc:nu]
                W = G @ np.diag(qc) @ G.T
                f = lambda s: (scipy.linalg.expm(A * s) @ W @ scipy.linalg.expm(A.T * s)).ravel()
                Qq, _ = scipy.integrate.quad_vec(f, 0.0, T, epsabs=0, epsrel=1e-13)
                e = rel(mat(dis["Qd"], nx, nx), Qq.reshape(nx, nx))
                check(e <= 1e-10, "%s %s: Qd vs quadrature %.3g" % (ex, rate, e))
                worst_q = max(worst_q, e)
        # delay: structure of the augmented model
        dis = run("discretize", ex, "--rate", "200Hz", "--delay", "1.5", "--format", "json")
        nd = len(dis["delay_states"])
        check(nd == 2 * nuc, "%s: %d delay states for %d inputs" % (ex, nd, nuc))
        for j, s in enumerate(dis["delay_states"]):
            want = "%s.delayed%d" % (lin["inputs"][j % nuc]["name"], j // nuc + 1)
            check(s["name"] == want, "%s: delay state %s, want %s" % (ex, s["name"], want))
        if nuc:
            ad = mat(dis["Ad"], nx + nd, nx + nd)
            zoh = run("discretize", ex, "--rate", "200Hz", "--format", "json")
            # Gamma0 + Gamma1 = Gamma: the two delayed stages sum to the undelayed Bd
            g = ad[:nx, nx:nx + nuc] + ad[:nx, nx + nuc:nx + 2 * nuc]
            e = rel(g, mat(zoh["Bd"], nx, nuc))
            check(e <= TOL, "%s: Gamma0 + Gamma1 differs from Gamma by %.3g" % (ex, e))
            check(rel(ad[:nx, :nx], mat(zoh["Ad"], nx, nx)) <= TOL, "%s: delayed Ad" % ex)
    print("discretize: %d examples, worst difference from scipy.signal.cont2discrete %.3g, "
          "Qd from quadrature %.3g" % (len(examples), worst, worst_q))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
