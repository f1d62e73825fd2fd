#!/usr/bin/python3
"""Independent sympy references for the closed-loop examples
(examples/fourbar.yaml, examples/slider-crank.yaml).

rigmat reduces a loop by coordinate partitioning on relative joint
coordinates: Newton assembly, T = [I; -Phi_d^-1 Phi_i], T' M T qdd_i =
T' (Q - hb - M g) with the curvature term g (src/mech/closure.h).  This
script derives the same one-degree-of-freedom dynamics another way: with
ABSOLUTE link angles, the loop-closure equations solved for the dependent
angles as implicit functions of the crank angle th (their derivatives by
implicit differentiation, sympy diff + linear solves), the Lagrangian
written in th alone (elimination of the dependent angles: T = m(th) thd^2/2),
and Lagrange's equation

    m(th) thdd + m'(th) thd^2 / 2 + V'(th) = Q(th, thd, i, u)

(the standard reduction of a holonomic system to minimal coordinates, e.g.
H. Goldstein, Classical Mechanics, ch. 1-2, from memory; the loop-closure
equations of a four-bar and a slider-crank as in R. L. Norton, Design of
Machinery, ch. 4, from memory).  Motor conventions: lagrange_common.py.

Checked, each to 1e-10 relative (normwise):
  * A, B, C, D of `rigmat linearize` at the example's operating point, on
    both assembly branches of the four-bar (the guesses pick the branch);
  * the equilibrium drive voltage rigmat's trim found against the
    reference's own (V'(th) = N Kt u / R at rest);
  * the eigenvalues and the transfer functions C (sI - A)^-1 B + D at
    several frequencies;
  * the assembled dependent coordinates (the sensors on dependent joints)
    against mpmath.findroot on the absolute-angle loop equations.
Also: energy conservation along a simulation of a conservative
oscillating-slider linkage (a slider closure on a moving body); a four-bar at its dead centre (coupler and crank in line, rocker
independent) is refused (exit 3, the closure named), and the Grashof
condition s + l <= p + q (Norton, Design of Machinery, ch. 2) decides
which linkage `rigmat simulate` drives through a full crank turn: the
example crank-rocker turns past 2 pi, a non-Grashof linkage stops with an
error at its limit position.

Usage: RIGMAT=build/rigmat /usr/bin/python3 tests/ref/test_lagrange_closures.py
"""

import json
import math
import os
import subprocess
import sys
import tempfile

import mpmath
import numpy as np
import sympy as sp

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import lagrange_common as lc  # noqa: E402

ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..")
G0 = 9.80665
th, thd, i, u, w = sp.symbols("th thd i u w", real=True)
rep = lc.Report("closures")


def rod_inertia(m, length):
    return m * length ** 2 / 12


def implicit_values(phi, deps, th0, guess):
    """The dependent angles at th0 (mpmath.findroot from guess) and their
    first three derivatives with respect to th, by differentiating phi = 0
    (deps are sympy Functions of th).  Returns a substitution dict."""
    mpmath.mp.dps = 30
    vals = [sp.Symbol("v%d" % k) for k in range(len(deps))]
    plain = [e.subs(dict(zip(deps, vals))).subs(th, th0) for e in phi]
    fns = [sp.lambdify(vals, e, "mpmath") for e in plain]
    sol = mpmath.findroot(lambda *a: [f(*a) for f in fns], guess)
    sol = [sol[k] for k in range(len(deps))] if isinstance(sol, mpmath.matrix) else [sol]
    subs = {d: sp.Float(str(s), 30) for d, s in zip(deps, sol)}
    known = {}
    for order in (1, 2, 3):
        ders = [sp.Derivative(d, (th, order)) for d in deps]
        syms = [sp.Symbol("d%d_%d" % (order, k)) for k in range(len(deps))]
        eqs = []
        for e in phi:
            de = sp.diff(e, th, order)
            for dd, s in zip(ders, syms):
                de = de.subs(dd, s)
            for k2 in sorted(known, key=lambda z: -z.derivative_count):
                de = de.subs(k2, known[k2])
            eqs.append(de.subs(subs).subs(th, th0))
        solved = sp.solve(eqs, syms, dict=True)[0]
        for dd, s in zip(ders, syms):
            known[dd] = sp.N(solved[s], 30)
    out = dict(known)
    return out, subs


def numeric(expr, known, subs, at):
    """Evaluate expr: derivatives of the dependent functions first (highest
    order first), then the functions, then th and the other symbols."""
    for k in sorted(known, key=lambda z: -z.derivative_count):
        expr = expr.subs(k, known[k])
    expr = expr.subs(subs).subs(at)
    v = sp.N(expr, 30)
    if not v.is_number:
        raise ValueError("unevaluated: %s" % v.free_symbols)
    return float(v)


def reduced(mass_terms, V, Q, outputs, L, R, Ke, N):
    """f and h of the reduced model, x = [th, thd, i], from the body terms
    [(mass, com position, inertia, absolute angle)], the potential V(th),
    the generalized force Q(th, thd, i, u, w) and the outputs h (list)."""
    m_th = 0
    for mass, pos, inertia, ang in mass_terms:
        dp = sp.Matrix([sp.diff(pos[0], th), sp.diff(pos[1], th)])
        m_th += mass * (dp.T * dp)[0, 0] + inertia * sp.diff(ang, th) ** 2
    m_th += mass_extra[0]
    acc = (Q - sp.diff(V, th) - sp.diff(m_th, th) * thd ** 2 / 2) / m_th
    didt = (u - R * i - Ke * N * thd) / L
    f = sp.Matrix([thd, acc, didt])
    h = sp.Matrix(outputs)
    return f, h


mass_extra = [0]


def jacobians(f, h, xs, us, known, subs, at):
    A = np.array([[numeric(sp.diff(f[r], x), known, subs, at) for x in xs]
                  for r in range(f.shape[0])])
    B = np.array([[numeric(sp.diff(f[r], v), known, subs, at) for v in us]
                  for r in range(f.shape[0])])
    C = np.array([[numeric(sp.diff(h[r], x), known, subs, at) for x in xs]
                  for r in range(h.shape[0])])
    D = np.array([[numeric(sp.diff(h[r], v), known, subs, at) for v in us]
                  for r in range(h.shape[0])])
    y0 = np.array([numeric(h[r], known, subs, at) for r in range(h.shape[0])])
    return A, B, C, D, y0


def run(*args, ok=True):
    exe = lc.rigmat_binary()
    p = subprocess.run([exe] + list(args), stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                       universal_newlines=True, timeout=300)
    if ok and p.returncode != 0:
        print("FAIL rigmat %s: exit %d\n%s" % (" ".join(args), p.returncode, p.stderr))
        sys.exit(1)
    return p


def linearize(path, *sets):
    args = ["linearize", path, "--format", "json"]
    for s in sets:
        args += ["--set", s]
    return json.loads(run(*args).stdout)


def compare(label, js, A, B, C, D, y0, states, inputs, outputs):
    got = lc.permuted(js, states, inputs, outputs)
    rep.rel(label + ": A", got["A"], A)
    rep.rel(label + ": B", got["B"], B)
    rep.rel(label + ": C", got["C"], C)
    rep.rel(label + ": D", got["D"], D)
    rep.rel(label + ": y at the point", got["y0"], y0)
    ev_got = np.sort_complex(np.linalg.eigvals(got["A"]))
    ev_want = np.sort_complex(np.linalg.eigvals(A))
    rep.rel(label + ": eigenvalues", np.abs(ev_got - ev_want), np.zeros(3) + 0.0,
            tol=1e-10 * np.max(np.abs(ev_want)))
    worst = 0.0
    for f_hz in (0.01, 0.3, 3.0, 30.0, 300.0):
        s = 2j * math.pi * f_hz
        Gg = got["C"] @ np.linalg.solve(s * np.eye(3) - got["A"], got["B"]) + got["D"]
        Gw = C @ np.linalg.solve(s * np.eye(3) - A, B) + D
        worst = max(worst, np.linalg.norm(Gg - Gw) / np.linalg.norm(Gw))
    rep.check(label + ": transfer functions (5 frequencies)", worst <= 1e-10,
              "worst rel err %.3e (tol 1e-10)" % worst)
    return got


# ------------------------------------------------------------- the four-bar

def fourbar(path, th0_deg, guess_deg, spring_rest_deg, sets, label):
    a, b, c, d = 0.08, 0.28, 0.20, 0.30
    m2, m3, m4 = 0.12, 0.25, 0.20
    k, rest, cdamp = 4.0, math.radians(spring_rest_deg), 0.002
    R, L, Kt, Jr, bf, N = 2.4, 1.1e-3, 0.021, 3.2e-7, 2e-6, 19.0
    t3 = sp.Function("t3")(th)   # the coupler's absolute angle
    t4 = sp.Function("t4")(th)   # the rocker's absolute angle
    phi = [a * sp.cos(th) + b * sp.cos(t3) - d - c * sp.cos(t4),
           a * sp.sin(th) + b * sp.sin(t3) - c * sp.sin(t4)]
    th0 = math.radians(th0_deg)
    known, subs = implicit_values(phi, [t3, t4], th0,
                                  [math.radians(g) for g in guess_deg])
    pin = sp.Matrix([a * sp.cos(th), a * sp.sin(th)])
    bodies = [(m2, pin / 2, rod_inertia(m2, a), th),
              (m3, pin + b / 2 * sp.Matrix([sp.cos(t3), sp.sin(t3)]), rod_inertia(m3, b), t3),
              (m4, sp.Matrix([d, 0]) + c / 2 * sp.Matrix([sp.cos(t4), sp.sin(t4)]),
               rod_inertia(m4, c), t4)]
    V = sum(mm * G0 * pos[1] for mm, pos, _, _ in bodies) + k * (t4 - rest) ** 2 / 2
    mass_extra[0] = Jr * N ** 2                       # the rotor turns N times the crank
    knee_rate = (sp.diff(t3, th) - 1) * thd           # coupler relative to the crank
    Q = N * (Kt * i - bf * N * thd) - cdamp * knee_rate * (sp.diff(t3, th) - 1)
    outputs = [th, t4, sp.diff(t3, th) * thd, i]      # crank_enc, rocker_angle, gyro, current
    f, h = reduced(bodies, V, Q, outputs, L, R, Kt, N)
    # the reference's own equilibrium: at rest N Kt u / R = V'(th)
    u_eq = numeric(sp.diff(V, th), known, subs, {th: th0}) * R / (N * Kt)
    at = {th: th0, thd: 0, i: u_eq / R, u: u_eq}
    A, B, C, D, y0 = jacobians(f, h, [th, thd, i], [u], known, subs, at)
    js = linearize(path, *sets)
    rep.rel(label + ": trimmed drive voltage", [js["operating_point"]["u"][0]], [u_eq])
    names = (["crank.angle", "crank.rate", "drive.current"], ["drive"],
             ["crank_enc", "rocker_angle", "coupler_gyro", "current"])
    compare(label, js, A, B, C, D, y0, *names)
    co = js["operating_point"]["coordinates"]
    rep.rel(label + ": assembled coordinates (JSON)", [co["crank"], co["knee"], co["swing"]],
            [th0, float(subs[t3]) - th0, float(subs[t4])], tol=1e-13)
    moving(label, path, sets, f, h, [th, thd, i], [u], known, subs, th0, 5.0, 3.0, names)
    return float(subs[t4])


def moving(label, path, sets, f, h, xs, us, known, subs, th0, rate, volts, names):
    """Away from rest: the velocity-product (curvature) terms, zero at rest,
    now enter f0 and A; the point is not steady (f0 != 0)."""
    js = linearize(path, *(list(sets) + ["operating_point.solve=[]",
                                          "operating_point.inputs.drive=%.17gV" % volts,
                                          "operating_point.rates.crank=%.17grad/s" % rate]))
    cur = js["operating_point"]["x"][names[0].index("drive.current")]
    at = {th: th0, thd: rate, i: cur, u: volts, w: 0}
    A, B, C, D, y0 = jacobians(f, h, xs, us, known, subs, at)
    f0 = np.array([numeric(f[r], known, subs, at) for r in range(f.shape[0])])
    got = lc.permuted(js, *names)
    rep.rel(label + ", moving: f0", np.asarray(js["equilibrium"]["f0"], dtype=float)[
        [lc.names_of(js["states"]).index(n) for n in names[0]]], f0)
    rep.rel(label + ", moving: A", got["A"], A)
    rep.rel(label + ", moving: B", got["B"], B)
    rep.rel(label + ", moving: C", got["C"], C)
    rep.rel(label + ", moving: y at the point", got["y0"], y0)


# --------------------------------------------------------- the slider-crank

def slider_crank(path):
    r, l = 0.06, 0.20
    m2, m3, m4 = 0.15, 0.09, 0.35
    k, rest, anchor, cdamp = 40.0, 0.40, 0.45, 0.001
    R, L, Kt, Jr, N = 1.8, 0.6e-3, 0.032, 5.1e-7, 12.0
    t3 = sp.Function("t3")(th)   # the rod's absolute angle
    phi = [r * sp.sin(th) + l * sp.sin(t3)]           # the piston stays on the x axis
    th0 = math.radians(50)
    known, subs = implicit_values(phi, [t3], th0, [math.radians(-12)])
    pin = sp.Matrix([r * sp.cos(th), r * sp.sin(th)])
    x = r * sp.cos(th) + l * sp.cos(t3)               # the piston's travel
    piston = sp.Matrix([x, 0])
    bodies = [(m2, pin / 2, rod_inertia(m2, r), th),
              (m3, pin + l / 2 * sp.Matrix([sp.cos(t3), sp.sin(t3)]), rod_inertia(m3, l), t3),
              (m4, piston, 0, 0 * th)]
    length = sp.sqrt((x - anchor) ** 2 + (r * sp.sin(th) + l * sp.sin(t3)) ** 2)
    V = sum(mm * G0 * pos[1] for mm, pos, _, _ in bodies) + k * (length - rest) ** 2 / 2
    mass_extra[0] = Jr * N ** 2
    Q = N * Kt * i - cdamp * thd + w * sp.diff(x, th)   # w: the load force along +x
    outputs = [th, x, t3 - th, i]                     # crank_enc, travel, rod_angle, current
    f, h = reduced(bodies, V, Q, outputs, L, R, Kt, N)
    u_eq = numeric(sp.diff(V, th), known, subs, {th: th0}) * R / (N * Kt)
    at = {th: th0, thd: 0, i: u_eq / R, u: u_eq, w: 0}
    A, B, C, D, y0 = jacobians(f, h, [th, thd, i], [u, w], known, subs, at)
    js = linearize(path)
    rep.rel("slider-crank: trimmed drive voltage", [js["operating_point"]["u"][0]], [u_eq])
    names = (["crank.angle", "crank.rate", "drive.current"], ["drive", "load"],
             ["crank_enc", "travel", "rod_angle", "current"])
    compare("slider-crank", js, A, B, C, D, y0, *names)
    moving("slider-crank", path, [], f, h, [th, thd, i], [u, w], known, subs, th0, -7.0, -2.0,
           names)


# ------------------------------------------------- dead centre and Grashof

def grashof(links):
    """Norton, Design of Machinery, ch. 2: s + l <= p + q."""
    s, l = min(links), max(links)
    p_q = sum(links) - s - l
    return s + l <= p_q


def dead_centre(path, tmp):
    """Rocker independent, crank and coupler in line (the rocker's extreme):
    the dependent block (crank, knee) is singular; every value exact to
    round-off, so the assembly starts at the singular point."""
    a, b, c, d = 0.08, 0.28, 0.20, 0.30
    e = a + b
    x = (e * e - c * c + d * d) / (2 * d)
    y = math.sqrt(e * e - x * x)
    th2 = math.atan2(y, x)
    th4 = math.atan2(y, x - d)
    text = open(path).read().replace("independent: [crank]", "independent: [swing]")
    model = os.path.join(tmp, "fourbar-dead.yaml")
    with open(model, "w") as fh:
        fh.write(text)
    p = run("check", model, "--set", "operating_point.coordinates.crank=%.17grad" % th2,
            "--set", "operating_point.coordinates.knee=0rad",
            "--set", "operating_point.coordinates.swing=%.17grad" % th4,
            "--set", "springs.return.rest=%.17grad" % th4, ok=False)
    rep.check("dead centre refused (exit 3)", p.returncode == 3, "exit %d" % p.returncode)
    rep.check("dead centre names the closure and the ratio",
              "closure 'pin_c'" in p.stderr and "dead centre" in p.stderr and
              "singular value" in p.stderr, p.stderr.strip().splitlines()[0] if p.stderr else "")
    # the same model one degree away assembles
    p = run("check", model, "--set", "operating_point.coordinates.crank=%.17grad" % th2,
            "--set", "operating_point.coordinates.knee=0rad",
            "--set", "operating_point.coordinates.swing=%.17grad" % (th4 + math.radians(1)),
            "--set", "springs.return.rest=%.17grad" % th4, ok=False)
    rep.check("one degree from the dead centre assembles", p.returncode == 0,
              "exit %d %s" % (p.returncode, p.stderr.strip()[:200]))


def full_turn(path, tmp):
    links = [0.08, 0.28, 0.20, 0.30]
    rep.check("example four-bar is Grashof (s + l <= p + q)", grashof(links), str(links))
    p = run("simulate", path, "--input", "drive=step:10", "--duration", "1.5", "--format", "csv",
            ok=False)
    rows = [ln.split(",") for ln in p.stdout.strip().splitlines()]
    heads = [hd.split(" ")[0] for hd in rows[0]] if rows else []
    col = heads.index("crank.angle") if "crank.angle" in heads else -1
    last = float(rows[-1][col]) if col >= 0 and len(rows) > 1 else float("nan")
    rep.check("Grashof crank-rocker: the crank turns a full revolution in simulate",
              p.returncode == 0 and last > math.radians(60) + 2 * math.pi,
              "exit %d, crank from 1.047 to %.4g rad" % (p.returncode, last))
    # a non-Grashof linkage: crank 0.20, coupler 0.25, rocker 0.22, ground 0.30
    bad = [0.20, 0.25, 0.22, 0.30]
    rep.check("triple-rocker is not Grashof", not grashof(bad), str(bad))
    text = open(path).read()
    text = (text.replace("length: 80 mm", "length: 200 mm")
                .replace("length: 280 mm", "length: 250 mm")
                .replace("length: 200 mm, direction: 0 deg}}}\n\njoints",
                         "length: 220 mm, direction: 0 deg}}}\n\njoints")
                .replace("at: [80 mm, 0]", "at: [200 mm, 0]")
                .replace("[[280 mm, 0], [200 mm, 0]]", "[[250 mm, 0], [220 mm, 0]]"))
    model = os.path.join(tmp, "fourbar-rocker.yaml")
    with open(model, "w") as fh:
        fh.write(text)
    p = run("simulate", model, "--input", "drive=step:10", "--duration", "1.5", "--format", "csv",
            "--set", "operating_point.coordinates.knee=-60deg",
            "--set", "operating_point.coordinates.swing=100deg",
            "--set", "springs.return.stiffness=0.01", "--partial", os.path.join(tmp, "part.csv"),
            ok=False)
    rep.check("non-Grashof: simulate stops at the limit position (exit 3, closure named)",
              p.returncode == 3 and "pin_c" in p.stderr,
              "exit %d: %s" % (p.returncode, p.stderr.strip()[:300]))
    # the crank got as far as its limit: B = crank end at b + c from O4,
    # cos(th) = (a^2 + d^2 - (b + c)^2) / (2 a d)
    a, b, c, d = bad[0], bad[1], bad[2], bad[3]
    limit = math.acos((a * a + d * d - (b + c) ** 2) / (2 * a * d))
    rows = [ln.split(",") for ln in open(os.path.join(tmp, "part.csv")).read().split("\n")[1:]
            if ln]
    reached = max(float(r[1]) for r in rows) if rows else float("nan")
    rep.check("non-Grashof: the crank stopped within 2 deg of its limit %.4f rad" % limit,
              limit - math.radians(2) < reached <= limit, "reached %.6f rad" % reached)


# An oscillating-slider linkage (a block hinged at the crank pin slides
# along a swinging rocker: the slider closure's first body moves, so every
# velocity-product term of its curvature is in play), conservative: no
# damper, motor or force.  The sensors give each body's centre-of-mass
# velocity, rate and height, so T + V follows from the outputs alone.
OSCILLATING = """rigmat: 1
name: oscillating slider, conservative
bodies:
  crank:  {mass: 0.4, shape: {rod: {length: 0.1, direction: 0 deg}}}
  block:  {mass: 0.3, inertia: 0.0002}
  rocker: {mass: 0.5, shape: {rod: {length: 0.5, direction: 0 deg}}}
joints:
  crank: {type: hinge, parent: ground, child: crank}
  pin:   {type: hinge, parent: crank, child: block, at: [0.1, 0]}
  rock:  {type: hinge, parent: ground, child: rocker, at: [0.25, -0.2]}
independent: [crank]
closures:
  guide: {type: slider, bodies: [rocker, block], at: [[0, 0], [0, 0]], axis: [1, 0]}
sensors:
  c_vx: {measures: velocity, of: crank, at: [0.05, 0], axis: [1, 0]}
  c_vy: {measures: velocity, of: crank, at: [0.05, 0], axis: [0, 1]}
  c_w:  {measures: rate, of: crank}
  c_y:  {measures: position, of: crank, at: [0.05, 0], axis: [0, 1]}
  b_vx: {measures: velocity, of: block, at: [0, 0], axis: [1, 0]}
  b_vy: {measures: velocity, of: block, at: [0, 0], axis: [0, 1]}
  b_w:  {measures: rate, of: block}
  b_y:  {measures: position, of: block, at: [0, 0], axis: [0, 1]}
  r_vx: {measures: velocity, of: rocker, at: [0.25, 0], axis: [1, 0]}
  r_vy: {measures: velocity, of: rocker, at: [0.25, 0], axis: [0, 1]}
  r_w:  {measures: rate, of: rocker}
  r_y:  {measures: position, of: rocker, at: [0.25, 0], axis: [0, 1]}
operating_point:
  coordinates: {crank: 30 deg, pin: 80 deg, rock: 110 deg}
  rates: {crank: 12 rad/s}
"""
BODIES = (("c", 0.4, 0.4 * 0.1 ** 2 / 12), ("b", 0.3, 0.0002), ("r", 0.5, 0.5 * 0.5 ** 2 / 12))


def energy_conserved(tmp):
    """T + V constant along `rigmat simulate` of a conservative closed loop
    (conservation of energy for a holonomic system with a time-independent
    Lagrangian: Goldstein, Classical Mechanics, ch. 1-2, from memory).  A
    wrong curvature term breaks it at once."""
    model = os.path.join(tmp, "oscillating.yaml")
    with open(model, "w") as fh:
        fh.write(OSCILLATING)
    p = run("simulate", model, "--duration", "2", "--step", "10ms", "--tolerance", "1e-11",
            ok=False)
    rows = [ln.split(",") for ln in p.stdout.strip().splitlines()]
    if p.returncode != 0 or len(rows) < 10:
        rep.check("oscillating slider simulates", False, "exit %d %s" % (p.returncode,
                                                                        p.stderr[:300]))
        return
    heads = [hd.split(" ")[0] for hd in rows[0]]
    data = np.array(rows[1:], dtype=float)

    def col(name):
        return data[:, heads.index(name)]
    kin = sum(0.5 * m * (col(b + "_vx") ** 2 + col(b + "_vy") ** 2) + 0.5 * I * col(b + "_w") ** 2
              for b, m, I in BODIES)
    pot = sum(m * G0 * col(b + "_y") for b, m, _ in BODIES)
    e = kin + pot
    turns = (col("crank.angle")[-1] - col("crank.angle")[0]) / (2 * math.pi)
    drift = np.max(np.abs(e - e[0])) / np.max(kin)
    rep.check("oscillating slider: T + V constant over %.1f crank turns" % turns,
              drift <= 1e-9 and turns > 2, "max |dE| / max T = %.3e (tol 1e-9)" % drift)


def main():
    fb = os.path.join(ROOT, "examples", "fourbar.yaml")
    sc = os.path.join(ROOT, "examples", "slider-crank.yaml")
    open_t4 = fourbar(fb, 60, (20, 80), 95, [], "four-bar, open branch")
    crossed_t4 = fourbar(fb, 60, (-60, -120), -120,
                         ["operating_point.coordinates.knee=-110deg",
                          "operating_point.coordinates.swing=-120deg",
                          "springs.return.rest=-120deg"], "four-bar, crossed branch")
    rep.check("the two branches differ", abs(open_t4 - crossed_t4) > 1.0,
              "rocker %.6f and %.6f rad" % (open_t4, crossed_t4))
    slider_crank(sc)
    with tempfile.TemporaryDirectory() as tmp:
        dead_centre(fb, tmp)
        full_turn(fb, tmp)
        energy_conserved(tmp)
    rep.finish()


if __name__ == "__main__":
    main()
