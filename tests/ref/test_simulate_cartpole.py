#!/usr/bin/python3
"""The nonlinear simulation of a cart-pole against scipy's solve_ivp.

The equations are derived here, independently of rigmat, from the
Lagrangian with sympy (helpers in lagrange_common.py):
  * `track`: a slider along world +x, the cart at (p, 0), mass M;
  * `pivot`: a hinge on the cart at [0, h]; th is the pole's angle,
    counter-clockwise positive, 0 upright; the pole is a uniform rod of
    length l along its +y axis (centre at l/2, centroidal inertia m l^2/12);
  * viscous dampers across both joints; a horizontal force `push` on the
    cart (role input).
The same model is written as YAML, run with `rigmat simulate --format json
--tolerance 1e-11`, and compared with scipy.integrate.solve_ivp (method
DOP853, rtol 1e-11, atol 1e-13), integrated in two pieces around the step
of the force.

Check: for every state, max over the output times of |rigmat - scipy|
divided by the state's range over the run stays below 1e-9 (measured 3.2e-11
on this machine: track.velocity).  The pole
starts 0.4 rad from upright and falls through the bottom: a strongly
nonlinear motion.  The measured error is printed.

Usage: RIGMAT=build/rigmat /usr/bin/python3 tests/ref/test_simulate_cartpole.py
"""

import json
import os
import subprocess
import sys

import numpy as np
import sympy as sp
from scipy.integrate import solve_ivp

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import lagrange_common as lc  # noqa: E402

TOL = 1e-9

P = dict(M=0.873, m=0.191, l=0.557, h=0.0413, g=9.80665, c1=1.37, c2=0.00217)
TH0, PD0 = 0.4, 0.23          # initial offsets: pole angle (rad), cart velocity (m/s)
F, T0 = 1.13, 0.257           # force step (N) and its time (s), between output times
DURATION, STEP = 3.0, 0.01

YAML = """rigmat: 1
name: simulate reference cart-pole
gravity: {g} m/s^2
bodies:
  cart: {{mass: {M} kg}}
  pole: {{mass: {m} kg, shape: {{rod: {{length: {l} m}}}}}}
joints:
  track: {{type: slider, parent: ground, child: cart, axis: [1, 0]}}
  pivot: {{type: hinge, parent: cart, child: pole, at: [0, {h} m]}}
dampers:
  cart_drag:  {{across: track, coefficient: {c1} N*s/m}}
  pivot_drag: {{across: pivot, coefficient: {c2} N*m*s/rad}}
forces:
  push: {{on: cart, at: [0, 0], direction: [1, 0], frame: world, role: input}}
sensors:
  pole_angle: {{measures: position, of: pivot}}
operating_point:
  coordinates: {{track: 0 m, pivot: 0 rad}}
  rates: {{}}
  inputs: {{push: 0 N}}
  solve: []
""".format(**{k: lc.fmt(v) for k, v in P.items()})


def derive():
    p, th, pd, thd, u = sp.symbols("p th pd thd u", real=True)
    M, m, l, h, g, c1, c2 = sp.symbols("M m l h g c1 c2", positive=True)
    q, qd = sp.Matrix([p, th]), sp.Matrix([pd, thd])
    p_cart = sp.Matrix([p, 0])
    p_com = p_cart + sp.Matrix([0, h]) + lc.rot(th) * sp.Matrix([0, l / 2])
    T = lc.kinetic_point(M, p_cart, q, qd) + lc.kinetic_point(m, p_com, q, qd) \
        + (m * l ** 2 / 12) * thd ** 2 / 2
    gvec = lc.gravity_vector(g, 0)
    V = lc.potential_gravity(m, p_com, gvec)
    Q = sp.Matrix([u, 0]) + lc.viscous_q(c1, pd, qd) + lc.viscous_q(c2, thd, qd)
    Mm, rhs = lc.lagrange_mass_rhs(T, V, Q, q, qd)
    qdd = Mm.LUsolve(rhs)
    subs = {M: P["M"], m: P["m"], l: P["l"], h: P["h"], g: P["g"], c1: P["c1"], c2: P["c2"]}
    f = sp.Matrix([pd, thd, qdd[0], qdd[1]]).subs(subs)
    return sp.lambdify((p, th, pd, thd, u), list(f), "numpy")


def reference(fn, times):
    def rhs_for(force):
        return lambda t, x: fn(x[0], x[1], x[2], x[3], force)
    x0 = [0.0, TH0, PD0, 0.0]
    before = times[times < T0]
    after = times[times >= T0]
    s1 = solve_ivp(rhs_for(0.0), (0.0, T0), x0, method="DOP853", rtol=1e-11, atol=1e-13,
                   t_eval=before, dense_output=True)
    x_t0 = s1.sol(T0)
    s2 = solve_ivp(rhs_for(F), (T0, times[-1]), x_t0, method="DOP853", rtol=1e-11, atol=1e-13,
                   t_eval=after)
    if not (s1.success and s2.success):
        print("FAIL solve_ivp: %s / %s" % (s1.message, s2.message))
        sys.exit(1)
    return np.hstack([s1.y, s2.y]).T


def main():
    rep = lc.Report("simulate cart-pole vs solve_ivp")
    fn = derive()
    exe = lc.rigmat_binary()
    with lc.tmpdir() as d:
        path = os.path.join(d, "cartpole.yaml")
        with open(path, "w") as fh:
            fh.write(YAML)
        cmd = [exe, "simulate", path, "--format", "json", "--tolerance", "1e-11",
               "--offset", "pivot.angle=%r rad" % TH0, "--offset", "track.velocity=%r m/s" % PD0,
               "--input", "push=step:%rN@%rs" % (F, T0),
               "--duration", "%r s" % DURATION, "--step", "%r s" % STEP]
        proc = subprocess.run(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                              universal_newlines=True, timeout=300)
        if proc.returncode != 0:
            print("FAIL rigmat simulate exit %d: %s" % (proc.returncode, proc.stderr))
            sys.exit(1)
        js = json.loads(proc.stdout)
    names = [s["name"] for s in js["states"]]
    want_names = ["track.position", "pivot.angle", "track.velocity", "pivot.rate"]
    perm = lc.permutation(names, want_names, "state")
    t = np.array(js["time"])
    x = np.array(js["x"])[:, perm]
    rep.check("rows: round(duration/step) + 1", len(t) == int(round(DURATION / STEP)) + 1,
              "%d rows" % len(t))
    rep.rel("output times k*step", t, np.arange(len(t)) * STEP, 1e-15)
    rep.rel("input after the step", np.array(js["u"])[-1], [F], 1e-15)
    want = reference(fn, t)
    rep.check("the pole falls through the bottom", np.max(np.abs(want[:, 1])) > np.pi,
              "max |th| %.3g rad" % np.max(np.abs(want[:, 1])))
    for k, name in enumerate(want_names):
        span = np.ptp(want[:, k])
        err = np.max(np.abs(x[:, k] - want[:, k])) / span
        rep.check("%s: max error / range" % name, bool(err <= TOL),
                  "%.3e (range %.4g, tol %.0e)" % (err, span, TOL))
    # the sensor reads the pivot angle
    rep.rel("output pole_angle = pivot.angle", np.array(js["y"])[:, 0], x[:, 1], 0.0)
    rep.finish()


if __name__ == "__main__":
    main()
