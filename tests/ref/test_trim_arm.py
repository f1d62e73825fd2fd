#!/usr/bin/python3
"""Trim diagnoses on hanging rod chains (tests/models/two-link-arm.yaml and a
three-link variant) against equations of motion derived here with sympy.

The chain: uniform rods hanging along -y at zero angles, hinges with relative
angles, a current-driven shoulder motor (torque N Kt i, no rotor inertia).
Lagrange's equations (tests/ref/lagrange_common.py) give M(q) qdd = rhs; at
rest rhs = N Kt i e1 - G(q).  From them:

  * a pose the elbow cannot hold (--set operating_point.solve=[sh]): the last iterate is the
    least-squares current of the accelerations, i = argmin |M^-1 rhs|, and
    the residual per equation is M^-1 rhs there; the elbow's force balance
    (row 2 of rhs) does not contain i, so exactly the elbow is named;
  * the elbow solved (the file as written): rhs = 0 gives the hanging forearm and the statics
    current;
  * three links: the elbow's and the wrist's balances both lack i: both are
    named, the shoulder is not.

Run by `make check-ref` with RIGMAT set."""
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
import sympy as sp

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from lagrange_common import kinetic_point, lagrange_mass_rhs, potential_gravity  # noqa: E402

RIGMAT = os.environ.get("RIGMAT", "build/rigmat")
ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..")
ARM = os.path.join(ROOT, "tests", "models", "two-link-arm.yaml")
G0 = 9.80665
NKT = 15 * 0.05
failures = 0


def close(what, got, want, tol):
    global failures
    err = abs(got - want) / max(abs(want), 1e-300)
    if not err <= tol:
        failures += 1
        print("FAIL %s: got %.17g want %.17g (rel %.3g)" % (what, got, want, err))


def same(what, got, want):
    global failures
    if got != want:
        failures += 1
        print("FAIL %s: got %r want %r" % (what, got, want))


def trim(path, *extra):
    p = subprocess.run([RIGMAT, "trim", path, "--format", "json"] + list(extra),
                       capture_output=True, text=True)
    return p.returncode, json.loads(p.stdout) if p.stdout else None


def chain(masses, lengths):
    """M(q) and the gravity vector G(q) (rhs = tau e1 - G at rest)."""
    n = len(masses)
    q = sp.Matrix(sp.symbols("q1:%d" % (n + 1)))
    qd = sp.Matrix(sp.symbols("qd1:%d" % (n + 1)))
    gvec = sp.Matrix([0, -G0])
    T = 0
    V = 0
    top = sp.Matrix([0, 0])
    th = 0
    for k in range(n):
        th = th + q[k]
        down = sp.Matrix([sp.sin(th), -sp.cos(th)])  # the rod's direction at world angle th
        mid = top + down * lengths[k] / 2
        inertia = sp.Rational(1, 12) * masses[k] * lengths[k] ** 2
        thd = sum(qd[: k + 1])
        T += kinetic_point(masses[k], mid, q, qd) + inertia * thd ** 2 / 2
        V += potential_gravity(masses[k], mid, gvec)
        top = top + down * lengths[k]
    M, rhs = lagrange_mass_rhs(T, V, sp.zeros(n, 1), q, qd)
    at_rest = {v: 0 for v in qd}
    G = -rhs.subs(at_rest)
    return q, M, G


def numeric(q, M, G, pose):
    s = dict(zip(q, pose))
    return (np.array(M.subs(s).evalf(30).tolist(), dtype=float),
            np.array(G.subs(s).evalf(30).tolist(), dtype=float).ravel())


def two_link():
    q, M, G = chain([sp.Rational(9, 10), sp.Rational(55, 100)],
                    [sp.Rational(35, 100), sp.Rational(28, 100)])
    pose = [math.radians(35), math.radians(50)]
    Mn, Gn = numeric(q, M, G, pose)
    # the elbow's force balance does not contain the shoulder torque, the
    # shoulder's does: e1 = (1, 0) enters row 1 of rhs only
    b = np.linalg.solve(Mn, np.array([1.0, 0.0]))
    a = np.linalg.solve(Mn, Gn)
    tau = float(b @ a / (b @ b))
    rc, d = trim(ARM, "--set", "operating_point.solve=[sh]")
    same("two-link arm: exit", rc, 3)
    same("two-link arm: converged", d["converged"], False)
    same("two-link arm: unmet", d["unmet_equations"], ["d(elbow.rate)/dt"])
    same("two-link arm: residual names", [e["name"] for e in d["residuals"]],
         ["shoulder.rate", "elbow.rate"])
    close("two-link arm: least-squares current", d["u"][0], tau / NKT, 1e-9)
    for k, e in enumerate(d["residuals"]):
        close("two-link arm: residual of %s" % e["name"], e["value"], tau * b[k] - a[k], 1e-9)
    close("two-link arm: residual = max |f|", d["residual"],
          max(abs(tau * b - a)), 1e-12)
    # with the elbow solved (the file as written): rhs = 0, so G2 = 0 and
    # N Kt i = G1 there.  G2 = 0 has the roots q1 + q2 = k pi; the hanging
    # forearm (k = 0) is the stable one, nearest the 50 deg start; sympy
    # finds it from a start near it
    q1 = pose[0]
    sol = sp.nsolve([G[1].subs(q[0], q1)], [q[1]], [-0.5])
    q2 = float(sol[0])
    i_hold = float(G[0].subs({q[0]: q1, q[1]: q2})) / NKT
    rc, d = trim(ARM)
    same("held arm: exit", rc, 0)
    same("held arm: unmet", d["unmet_equations"], [])
    close("held arm: elbow angle", d["x"][1], q2, 1e-9)
    close("held arm: current", d["u"][0], i_hold, 1e-9)


def three_link():
    global failures
    q, M, G = chain([sp.Rational(9, 10), sp.Rational(55, 100), sp.Rational(23, 100)],
                    [sp.Rational(35, 100), sp.Rational(28, 100), sp.Rational(17, 100)])
    pose = [math.radians(35), math.radians(50), math.radians(-20)]
    Mn, Gn = numeric(q, M, G, pose)
    # rows 2 and 3 of rhs (elbow, wrist) lack the shoulder torque and are not
    # zero at this pose: two equations no current reaches
    if not (abs(Gn[1]) > 1e-3 and abs(Gn[2]) > 1e-3):
        failures += 1
        print("FAIL three-link pose: elbow and wrist balances should be unmet: %s" % Gn)
    with open(ARM) as f:
        text = f.read()
    text = text.replace(
        "  fore: {mass: 0.55 kg, shape: {rod: {length: 0.28 m, direction: -90 deg}}}\n",
        "  fore: {mass: 0.55 kg, shape: {rod: {length: 0.28 m, direction: -90 deg}}}\n"
        "  hand: {mass: 0.23 kg, shape: {rod: {length: 0.17 m, direction: -90 deg}}}\n")
    text = text.replace(
        "  elbow: {type: hinge, parent: upper, child: fore, at: [0, -0.35 m]}\n",
        "  elbow: {type: hinge, parent: upper, child: fore, at: [0, -0.35 m]}\n"
        "  wrist: {type: hinge, parent: fore, child: hand, at: [0, -0.28 m]}\n")
    text = text.replace("coordinates: {shoulder: 35 deg, elbow: 50 deg}",
                        "coordinates: {shoulder: 35 deg, elbow: 50 deg, wrist: -20 deg}")
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "three-link-arm.yaml")
        with open(path, "w") as f:
            f.write(text)
        rc, d = trim(path, "--set", "operating_point.solve=[sh]")
    same("three-link arm: exit", rc, 3)
    same("three-link arm: unmet", d["unmet_equations"],
         ["d(elbow.rate)/dt", "d(wrist.rate)/dt"])
    b = np.linalg.solve(Mn, np.array([1.0, 0.0, 0.0]))
    a = np.linalg.solve(Mn, Gn)
    tau = float(b @ a / (b @ b))
    for k, e in enumerate(d["residuals"]):
        close("three-link arm: residual of %s" % e["name"], e["value"], tau * b[k] - a[k], 1e-9)


two_link()
three_link()
if failures:
    print("test_trim_arm: %d failure(s)" % failures)
    sys.exit(1)
print("test_trim_arm: ok")
