#!/usr/bin/python3
"""`rigmat gains` on every example at 200 Hz against scipy.linalg.
solve_discrete_are (scipy 1.10.1: the QZ method of the extended symplectic
pencil, W. F. Arnold, A. J. Laub, Proc. IEEE 72(12):1746-1754, 1984), with
the Kalman quantities built from its P by the textbook formulas (B. D. O.
Anderson, J. B. Moore, "Optimal Filtering", 1979, sections 3.3 and 5.5):
    Re = C P C^T + R,  M = P C^T Re^-1,  P+ = P - M Re M^T,
    Kp = (A P C^T + S) Re^-1,  poles = eig(A - Kp C),  sd = sqrt(diag Re),
and the LQR from the weights files in tests/gains/ (Bryson's rule,
Q_ii = 1/x_max^2, R_jj = 1/u_max^2, the units read here by a table of
their own: NIST SP 811, 2008, Appendix B):
    K = (R + B^T X B)^-1 B^T X A,  poles = eig(A - B K).
Matrices agree to 1e-9 relative (normwise); the Riccati residuals rigmat
reports are at round-off (< 1e-12, about 5000 eps).  A, B, C, Qd, Rd, S come from
`rigmat discretize` with the same options.

Examples without process noise on a mode at z = 1 (a free cart, a free
rotor) are refused (exit 3) with the mode named; the script checks that
the named state's mode is at z = 1 and receives no noise, then runs the
example again with a disturbance added by --set (a "gust"), and compares.
A variant of the balancer with a white disturbance force on the chassis
(it reaches the accelerometer directly) exercises the cross-covariance S.

Run by `make check-ref` with RIGMAT set."""
import glob
import json
import math
import os
import re
import subprocess
import sys

import numpy as np
import scipy.linalg
import yaml

RIGMAT = os.environ.get("RIGMAT", "build/rigmat")
ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..")
TOL = 1e-9
RATE = "200Hz"
# Disturbances added where the model has none on a free mode (demo values).
GUSTS = {
    "cart": "forces.gust={on: carriage, direction: [1, 0], role: disturbance, density: 0.3 N/sqrt(Hz)}",
    "cartpole-rack": "forces.gust={on: cart, direction: [1, 0], role: disturbance, density: 0.2 N/sqrt(Hz)}",
    "gantry": "forces.gust={on: trolley, direction: [1, 0], role: disturbance, density: 0.5 N/sqrt(Hz)}",
    "torsion": "forces.gust={torque_on: flywheel, role: disturbance, density: 0.01 N*m/sqrt(Hz)}",
}
# NIST SP 811 (2008), Appendix B; deg and rpm exact by definition.
UNITS = {"": 1.0, "m": 1.0, "cm": 0.01, "mm": 0.001, "rad": 1.0, "deg": math.pi / 180,
         "m/s": 1.0, "deg/s": math.pi / 180, "rad/s": 1.0, "rpm": 2 * math.pi / 60,
         "A": 1.0, "V": 1.0, "N": 1.0}
failures = 0


def fail(msg):
    global failures
    failures += 1
    print("FAIL: " + msg)


def run(*args):
    p = subprocess.run([RIGMAT] + list(args), capture_output=True, text=True)
    return p.returncode, p.stdout, p.stderr


def rel(got, want):
    got = np.asarray(got, dtype=float)
    want = np.asarray(want, dtype=float)
    if want.size == 0:
        return 0.0
    den = np.linalg.norm(want)
    num = np.linalg.norm(got - want)
    return num / den if den > 0 else num


def si(text):
    text = str(text).strip()
    m = re.match(r"^([-+0-9.eE]+)\s*(.*)$", text)
    return float(m.group(1)) * UNITS[m.group(2)]


def pole_diff(got, want):
    """Largest distance from each wanted pole to its nearest unused got pole."""
    got = [complex(re_, im) for re_, im in got]
    want = list(want)
    worst = 0.0
    for w in want:
        k = min(range(len(got)), key=lambda i: abs(got[i] - w))
        worst = max(worst, abs(got[k] - w))
        got.pop(k)
    return worst


def weights(path, states, inputs):
    w = yaml.safe_load(open(path))
    Q = np.zeros((len(states), len(states)))
    R = np.zeros((len(inputs), len(inputs)))
    for name, v in (w.get("states") or {}).items():
        i = states.index(name)
        Q[i, i] = 1.0 / si(v) ** 2
    for name, v in (w.get("inputs") or {}).items():
        j = inputs.index(name)
        R[j, j] = 1.0 / si(v) ** 2
    return Q, R


def compare(label, model, sets, wfile):
    setargs = []
    for s in sets:
        setargs += ["--set", s]
    code, out, err = run("discretize", model, "--rate", RATE, "--format", "json", *setargs)
    if code != 0:
        fail("%s: discretize exit %d: %s" % (label, code, err))
        return
    d = json.loads(out)
    A, B, C = (np.array(d[k], dtype=float) for k in ("Ad", "Bd", "Cd"))
    Qd, Rd = np.array(d["Qd"], dtype=float), np.array(d["Rd"], dtype=float)
    S = np.array(d["S"], dtype=float) if "S" in d else np.zeros((A.shape[0], C.shape[0]))
    code, out, err = run("gains", model, "--rate", RATE, "--format", "json", "--weights", wfile,
                         *setargs)
    if code != 0:
        fail("%s: gains exit %d: %s" % (label, code, err))
        return
    g = json.loads(out)
    k = g["kalman"]
    if not Qd.any() and max(abs(np.linalg.eigvals(A))) < 1:
        # No process noise and a stable Ad: P = 0 solves the filter DARE
        # and is stabilizing (the filter trusts the model; its poles are
        # those of Ad).  scipy returns round-off (~1e-18) here, whose
        # relative difference from 0 means nothing: compare with the exact 0.
        P = np.zeros_like(A)
    else:
        P = scipy.linalg.solve_discrete_are(A.T, C.T, Qd, Rd, s=S)
    Re = C @ P @ C.T + Rd
    M = P @ C.T @ np.linalg.inv(Re)
    Pp = P - M @ Re @ M.T
    Kp = (A @ P @ C.T + S) @ np.linalg.inv(Re)
    checks = [("prior_covariance", k["prior_covariance"], P),
              ("posterior_covariance", k["posterior_covariance"], Pp),
              ("gain", k["gain"], M), ("predictor_gain", k["predictor_gain"], Kp),
              ("innovation_covariance", k["innovation_covariance"], Re),
              ("output_sd", k["output_sd"], np.sqrt(np.diag(Re)))]
    states = [s["name"] for s in g["states"]]
    inputs = [s["name"] for s in g["inputs"] if s["role"] == "input"]
    Q, R = weights(wfile, states, inputs)
    X = scipy.linalg.solve_discrete_are(A, B, Q, R)
    K = np.linalg.solve(R + B.T @ X @ B, B.T @ X @ A)
    q = g["lqr"]
    checks += [("lqr.gain", q["gain"], K), ("lqr.cost_to_go", q["cost_to_go"], X)]
    worst = 0.0
    for name, got, want in checks:
        e = rel(got, want)
        worst = max(worst, e)
        if not e <= TOL:
            fail("%s: %s differs from scipy by %.3g" % (label, name, e))
    # The poles against numpy's eigenvalues of the closed loops with
    # rigmat's own gains (the gains are checked against scipy's above, to
    # TOL): with scipy's gains instead, a gain difference within TOL moves a
    # pole of condition number kappa by up to kappa ||dK C||, which for the
    # gantry + gust filter (kappa 2.9, relative gain difference 5.3e-10 once
    # rigmat's small products round without fused multiply-adds) is 1.3e-9.
    Kg = np.array(k["predictor_gain"], dtype=float)
    Kq = np.array(q["gain"], dtype=float)
    pk = pole_diff(k["poles"], np.linalg.eigvals(A - Kg @ C))
    pl = pole_diff(q["closed_loop_poles"], np.linalg.eigvals(A - B @ Kq))
    if not (pk <= 1e-9 and pl <= 1e-9):
        fail("%s: poles differ (kalman %.3g, lqr %.3g)" % (label, pk, pl))
    if not (k["residual"] < 1e-12 and q["residual"] < 1e-12):
        fail("%s: residuals %.3g, %.3g not at round-off" % (label, k["residual"], q["residual"]))
    print("%-34s %s  worst %.2e  poles %.1e %.1e  residuals %.1e %.1e" %
          (label, "S" if "S" in d else " ", worst, pk, pl, k["residual"], q["residual"]))


def refused(label, model, wfile):
    """Exit 3 naming a state whose mode sits at z = 1 without process noise."""
    code, out, err = run("gains", model, "--rate", RATE, "--weights", wfile)
    m = re.search(r"the mode at z = (\S+) \(mostly '([^']+)'\) is on the unit circle and "
                  r"receives no process noise", err)
    if code != 3 or m is None:
        fail("%s: want exit 3 naming a noiseless mode, got %d: %s" % (label, code, err))
        return
    code, out, _ = run("discretize", model, "--rate", RATE, "--format", "json")
    d = json.loads(out)
    A, Qd = np.array(d["Ad"], dtype=float), np.array(d["Qd"], dtype=float)
    states = [s["name"] for s in d["states"]]
    i = states.index(m.group(2))
    lam, V = np.linalg.eig(A)
    k = int(np.argmin(abs(lam - float(m.group(1)))))
    if abs(lam[k] - 1.0) > 1e-9 or int(np.argmax(abs(V[:, k]))) != i or np.abs(Qd).max() != 0.0:
        fail("%s: named mode %s (%s) is not a noiseless mode at z = 1" % (label, m.group(1), m.group(2)))
    else:
        print("%-34s refused: the mode at z = 1 (%s) receives no noise" % (label, m.group(2)))


def main():
    for model in sorted(glob.glob(os.path.join(ROOT, "examples", "*.yaml"))):
        name = os.path.splitext(os.path.basename(model))[0]
        wfile = os.path.join(ROOT, "tests", "gains", name + ".yaml")
        if name in GUSTS:
            refused(name, model, wfile)
            compare(name + " + gust", model, [GUSTS[name]], wfile)
        else:
            compare(name, model, [], wfile)
    balancer = os.path.join(ROOT, "examples", "balancer.yaml")
    compare("balancer + white bump (S)", balancer, ["forces.bump={on: chassis, at: [0, 0.3 m], direction: [1, 0], role: disturbance, "
                                "density: 0.5 N/sqrt(Hz)}"],
            os.path.join(ROOT, "tests", "gains", "balancer.yaml"))
    if failures:
        print("%d failure(s)" % failures)
        sys.exit(1)
    print("gains: all examples agree with scipy")


if __name__ == "__main__":
    main()
