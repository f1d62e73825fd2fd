"""Reference checks of `rigmat modes --format json` on every example and test model.

The matrices come from `rigmat linearize --format json` of the same file;
everything else is computed here, independently of the C code:

- the JSON members are those of README.md, "JSON output" (`modes` entries with s, z,
  frequency, damping, time_constant, stability, controllable, observable,
  reached_by, seen_by, states; `zeros` [{input, output, values}]; `dc_gain`);
- the eigenvalues against numpy.linalg.eigvals(A), and z = exp(s T);
- the invariant zeros of every input/output channel against
  scipy.linalg.eig(P, Q, homogeneous_eigvals=True) on the Rosenbrock pencil
  P = [[A, b], [c, d]], Q = [[I, 0], [0, 0]] in the raw SI numbers; a pair
  is finite when |alpha / beta| < 1e6 ||A||_2 (LAPACK's QZ leaves the
  infinite eigenvalues of a relative degree above 1 as huge finite numbers,
  about eps^(-1/k) ||A||; a real zero that far out is not in these rigs) and
  scipy's zeros are matched one to one.  A repeated zero
  of multiplicity m moves by about eps^(1/m) of the scale (Wilkinson 1965,
  "The Algebraic Eigenvalue Problem", ch. 2), so the tolerance is
  1e-6 (|z| + rho(A)) with rho(A) the spectral radius;
- a channel rigmat calls `no_path` has G(s) = d + c (sI - A)^-1 b = 0 at
  three complex points (numpy.linalg.solve), relative to |c| |b| / |s|;
- the DC gain against numpy: -C A^-1 B + D where A is well conditioned;
  where A is singular, a null entry must grow without bound
  (|G(j w)| at w = 1e-4 p at least 30 times |G| at 1e-2 p, p the smallest
  non-zero |eigenvalue|), and a number must match the Richardson limit
  2 G(e) - G(2 e), e = 1e-4 p (numpy.linalg.solve; error O(e^2)), to 1e-6;
- the PBH flags: `controllable` and `observable` of every mode against an
  independent computation: LAPACK's balancing (scipy.linalg.matrix_balance,
  powers of 2, not rigmat's scaling), unit input columns and output rows,
  and the smallest singular value of [A - sI, B_c] and [A - sI; C]
  (numpy.linalg.svd) against 1e-10 of the matrix's 2-norm, the threshold
  modes.h states.  The verdicts must agree; the measures themselves depend
  on the scaling (on the stiff rigs, whose motor current is 1000 times
  faster than the mechanics, LAPACK's scaling gives down to 9e-10 where
  rigmat's gives 3e-8), so the script prints the smallest measure of a
  "yes" and the largest of a "no" it saw;
- the balancer: its drive -> enc (wheel motor angle) channel, derived by
  sympy as the roots of det([[A - sI, b], [c, d]]) (a polynomial, in exact
  rationals from the JSON's 17-digit numbers), has one real root in the
  right half plane, and rigmat lists it in `right_half_plane`.

Usage: RIGMAT=build/rigmat /usr/bin/python3 tests/ref/test_modes_examples.py
"""
import glob
import json
import os
import subprocess
import sys

import numpy as np
import scipy.linalg
import sympy

RIGMAT = os.environ.get("RIGMAT", "build/rigmat")
HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
HEAD = ["rigmat", "model", "kind", "order_hash", "states", "inputs", "outputs"]
MODE_KEYS = ["s", "z", "frequency", "damping", "time_constant", "stability", "controllable",
             "observable", "reached_by", "seen_by", "states"]
RATE_HZ = 250.0

failures = 0
worst_seen = {"zeros": 0.0, "dc": 0.0, "eig": 0.0, "pbh_yes": 1.0, "pbh_no": 0.0}


def fail(msg):
    global failures
    failures += 1
    print("FAIL: " + msg)


def run_json(*args):
    out = subprocess.run([RIGMAT] + list(args), capture_output=True, text=True, cwd=ROOT)
    if out.returncode != 0:
        raise RuntimeError("%s: exit %d: %s" % (" ".join(args), out.returncode, out.stderr))
    return json.loads(out.stdout)


def mat(rows, r, c):
    return np.array(rows, dtype=float).reshape(r, c)


def match(got, want, tol):
    """Match two lists of complex numbers one to one (greedy, nearest
    first); returns the worst distance, or None when the counts differ."""
    if len(got) != len(want):
        return None
    left = list(want)
    worst = 0.0
    for g in sorted(got, key=abs):
        d = [abs(g - w) for w in left]
        k = int(np.argmin(d))
        worst = max(worst, d[k] / tol(g))
        left.pop(k)
    return worst


def transfer(A, b, c, d, s):
    n = A.shape[0]
    x = np.linalg.solve(s * np.eye(n) - A, b.astype(complex))
    return d + c @ x


def check_file(path):
    rel = os.path.relpath(path, ROOT)
    lin = run_json("linearize", rel, "--format", "json")
    md = run_json("modes", rel, "--rate", "%gHz" % RATE_HZ, "--format", "json")
    nx, nu, ny = len(lin["states"]), len(lin["inputs"]), len(lin["outputs"])
    A = mat(lin["A"], nx, nx)
    B = mat(lin["B"], nx, nu)
    C = mat(lin["C"], ny, nx)
    D = mat(lin["D"], ny, nu)
    T = 1.0 / RATE_HZ

    for k in HEAD + ["modes", "zeros", "dc_gain"]:
        if k not in md:
            fail("%s: no '%s'" % (rel, k))
    if md.get("kind") != "modes":
        fail("%s: kind %r" % (rel, md.get("kind")))
    if md["order_hash"] != lin["order_hash"]:
        fail("%s: order hash differs from linearize" % rel)
    for m in md["modes"]:
        for k in MODE_KEYS:
            if k not in m:
                fail("%s: a mode has no '%s'" % (rel, k))
        if m["stability"] not in ("stable", "unstable", "marginal"):
            fail("%s: stability %r" % (rel, m["stability"]))
        sh = [e["share"] for e in m["states"]]
        if sh != sorted(sh, reverse=True) or not (0.0 < sum(sh) <= 1.0 + 1e-12):
            fail("%s: shares not largest first or not in (0, 1]: %s" % (rel, sh))

    # eigenvalues, z, frequency, damping
    rho = max(1.0, float(np.max(np.abs(np.linalg.eigvals(A))))) if nx else 1.0
    ev = list(np.linalg.eigvals(A)) if nx else []
    s = [complex(m["s"][0], m["s"][1]) for m in md["modes"]]
    worst = match(s, ev, lambda g: 1e-7 * rho)
    if worst is not None:
        worst_seen["eig"] = max(worst_seen["eig"], worst)
    if worst is None or worst > 1.0:
        fail("%s: eigenvalues differ from numpy (worst %s of 1e-7 rho)" % (rel, worst))
    for m, sv in zip(md["modes"], s):
        z = complex(m["z"][0], m["z"][1])
        if abs(z - np.exp(sv * T)) > 1e-12 * max(1.0, abs(z)):
            fail("%s: z != exp(s T) for s = %s" % (rel, sv))
        if abs(m["frequency"] - abs(sv) / (2 * np.pi)) > 1e-12 * max(1.0, abs(sv)):
            fail("%s: frequency != |s|/2pi" % rel)
        if abs(sv) > 0 and abs(m["damping"] - (-sv.real / abs(sv))) > 1e-12:
            fail("%s: damping != -Re s/|s|" % rel)

    # PBH flags, independently
    if nx:
        nc = sum(1 for u in lin["inputs"] if u["role"] == "input")
        Ab, (sc, _) = scipy.linalg.matrix_balance(A, permute=False, separate=True)
        Bb = B / sc[:, None]
        Cb = C * sc[None, :]
        Bb = Bb / np.maximum(np.linalg.norm(Bb, axis=0), 1e-300)
        Cb = Cb / np.maximum(np.linalg.norm(Cb, axis=1), 1e-300)[:, None]
        nAB = np.linalg.norm(np.hstack([Ab, Bb[:, :nc]]), 2)
        nAC = np.linalg.norm(np.vstack([Ab, Cb]), 2)
        for m, sv in zip(md["modes"], s):
            I = np.eye(nx)
            cm = (np.linalg.svd(np.hstack([Ab - sv * I, Bb[:, :nc]]), compute_uv=False)[-1] / nAB
                  if nc else 0.0)
            om = np.linalg.svd(np.vstack([Ab - sv * I, Cb]), compute_uv=False)[-1] / nAC
            for what, meas, flag in (("controllable", cm, m["controllable"]),
                                     ("observable", om, m["observable"])):
                if (meas > 1e-10) != flag:
                    fail("%s: mode %s %s is %s, scipy measure %.3g"
                         % (rel, sv, what, flag, meas))
                if flag:
                    worst_seen["pbh_yes"] = min(worst_seen["pbh_yes"], meas)
                else:
                    worst_seen["pbh_no"] = max(worst_seen["pbh_no"], meas)

    # zeros, channel by channel
    nA = float(np.linalg.norm(A, 2)) if nx else 0.0
    rhp_seen = {}
    for ch in md["zeros"]:
        j = [u["name"] for u in lin["inputs"]].index(ch["input"])
        i = [y["name"] for y in lin["outputs"]].index(ch["output"])
        b, c, d = B[:, j], C[i, :], D[i, j]
        got = [complex(v[0], v[1]) for v in ch["values"]]
        rhp_seen[(ch["input"], ch["output"])] = [complex(v[0], v[1])
                                                 for v in ch["right_half_plane"]]
        if ch.get("no_path"):
            for sp in (0.3 + 1.7j, -2.1 + 0.4j, 5.5 + 9.0j):
                sp = sp * rho
                g = transfer(A, b, c, d, sp)
                if abs(g) > 1e-8 * (abs(d) + np.linalg.norm(c) * np.linalg.norm(b) / abs(sp)):
                    fail("%s: %s -> %s called no path but G(%s) = %s"
                         % (rel, ch["input"], ch["output"], sp, g))
            if got:
                fail("%s: a no-path channel lists zeros" % rel)
            continue
        P = np.zeros((nx + 1, nx + 1))
        Q = np.zeros((nx + 1, nx + 1))
        P[:nx, :nx] = A
        P[:nx, nx] = b
        P[nx, :nx] = c
        P[nx, nx] = d
        Q[:nx, :nx] = np.eye(nx)
        w = scipy.linalg.eig(P, Q, right=False, homogeneous_eigvals=True)
        ref = []
        for al, be in zip(w[0], w[1]):
            if be != 0 and abs(al / be) < 1e6 * nA:
                ref.append(al / be)
        worst = match(got, ref, lambda g: 1e-6 * (abs(g) + rho))
        if worst is not None:
            worst_seen["zeros"] = max(worst_seen["zeros"], worst)
        if worst is None or worst > 1.0:
            fail("%s: zeros of %s -> %s differ from scipy:\n  rigmat %s\n  scipy  %s"
                 % (rel, ch["input"], ch["output"], sorted(got, key=abs), sorted(ref, key=abs)))
        rhp = [g for g in got if g.real > 1e-6 * rho]
        if len(rhp) != len(ch["right_half_plane"]):
            fail("%s: right_half_plane of %s -> %s wrong" % (rel, ch["input"], ch["output"]))

    # DC gain
    G = md["dc_gain"]
    singular = nx > 0 and np.linalg.cond(A) > 1e12
    nonzero = [abs(e) for e in ev if abs(e) > 1e-6 * rho]
    pmin = min(nonzero) if nonzero else rho
    for i in range(ny):
        for j in range(nu):
            got = G[i][j]
            b, c, d = B[:, j], C[i, :], D[i, j]
            if not singular:
                want = d - (c @ np.linalg.solve(A, b) if nx else 0.0)
                if got is not None and want != 0:
                    worst_seen["dc"] = max(worst_seen["dc"], abs(got - want) / abs(want))
                if got is None or abs(got - want) > 1e-8 * (abs(want) + 1e-300) + 1e-12 * (
                        np.linalg.norm(c) * np.linalg.norm(b) / rho + abs(d)):
                    fail("%s: dc_gain[%d][%d] = %s, numpy %s" % (rel, i, j, got, want))
            elif got is None:
                g_small = abs(transfer(A, b, c, d, 1e-4j * pmin))
                g_big = abs(transfer(A, b, c, d, 1e-2j * pmin))
                if not g_small > 30.0 * g_big:
                    fail("%s: dc_gain[%d][%d] null but |G| does not grow at 0 (%g vs %g)"
                         % (rel, i, j, g_small, g_big))
            else:
                e = 1e-4 * pmin
                want = (2.0 * transfer(A, b, c, d, e) - transfer(A, b, c, d, 2.0 * e)).real
                if abs(got - want) > 1e-6 * abs(want) + 1e-9 * (
                        np.linalg.norm(c) * np.linalg.norm(b) / pmin + abs(d)):
                    fail("%s: dc_gain[%d][%d] = %s, Richardson limit %s" % (rel, i, j, got, want))
    return lin, md, rhp_seen


def balancer_rhp_zero(lin, rhp_seen):
    """Derive the drive -> enc zeros with sympy (a polynomial, exact
    rationals) and check the right-half-plane one is the one rigmat names."""
    nx = len(lin["states"])
    j = [u["name"] for u in lin["inputs"]].index("drive")
    i = [y["name"] for y in lin["outputs"]].index("enc")
    s = sympy.Symbol("s")
    R = sympy.zeros(nx + 1, nx + 1)
    for a in range(nx):
        for b in range(nx):
            R[a, b] = sympy.Rational(repr(lin["A"][a][b])) - (s if a == b else 0)
        R[a, nx] = sympy.Rational(repr(lin["B"][a][j]))
        R[nx, a] = sympy.Rational(repr(lin["C"][i][a]))
    R[nx, nx] = sympy.Rational(repr(lin["D"][i][j]))
    poly = sympy.Poly(sympy.expand(R.det(method="berkowitz")), s)
    roots = [complex(r) for r in sympy.Poly(poly, s).nroots(n=30)]
    rhp = [r for r in roots if r.real > 1e-9 and abs(r.imag) < 1e-9]
    got = rhp_seen.get(("drive", "enc"), [])
    if len(rhp) != 1:
        fail("balancer: sympy finds %d real right-half-plane zeros of drive -> enc: %s"
             % (len(rhp), roots))
        return
    if len(got) != 1 or abs(got[0] - rhp[0]) > 1e-8 * abs(rhp[0]):
        fail("balancer: rigmat's right-half-plane zeros of drive -> enc %s, sympy %s"
             % (got, rhp))
    else:
        print("  balancer drive -> enc: right-half-plane zero %.10g 1/s (sympy %.10g)"
              % (got[0].real, rhp[0].real))


def main():
    files = sorted(glob.glob(os.path.join(ROOT, "examples", "*.yaml")))
    files += sorted(glob.glob(os.path.join(ROOT, "tests", "models", "*.yaml")))
    for f in files:
        try:
            lin, md, rhp = check_file(f)
        except (RuntimeError, ValueError, KeyError) as e:
            fail("%s: %s" % (f, e))
            continue
        print("  %s: %d modes, %d channels" % (os.path.relpath(f, ROOT), len(md["modes"]),
                                                len(md["zeros"])))
        if f.endswith("balancer.yaml"):
            balancer_rhp_zero(lin, rhp)
    print("  worst: eigenvalues %.2g, zeros %.2g (fractions of their tolerances); "
          "DC gain vs numpy %.2g relative" % (worst_seen["eig"], worst_seen["zeros"],
                                               worst_seen["dc"]))
    print("  PBH by scipy's scaling: smallest 'yes' measure %.2g, largest 'no' %.2g (threshold 1e-10)"
          % (worst_seen["pbh_yes"], worst_seen["pbh_no"]))
    print("modes reference: %d failure(s)" % failures)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
