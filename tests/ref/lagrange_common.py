"""Shared helpers for the sympy Lagrangian reference scripts (tests/ref/test_lagrange_*.py).

These scripts derive a mechanism's equations of motion by hand, from the
Lagrangian L = T - V and Lagrange's equations

    d/dt (dL/dqd) - dL/dq = Q        (Q: non-conservative generalized forces)

written with sympy core only (symbols, Matrix, diff, jacobian, simplify; no
sympy.physics), linearize them symbolically at an operating point and compare
the result with `rigmat linearize FILE --format json`.

Sources of the conventions:
  * README.md (ours: "Signs and frames", "Motors: gearbox, efficiency,
    count", "Sensors: gain, offset and noise units", "Rules worth knowing"):
    joint kinematics, state/input/output order and names, the meaning of
    `count`, `polarity`, `efficiency`, `mounted_on`, sensors.
  * The project's modelling conventions (ours, stated in those README
    sections), used here exactly:
      - gravity vector g_vec = -g*(sin(slope), cos(slope));
      - motor current i per motor, in the drive's sense;
        L di/dt = V - R i - polarity*Ke*N*w_out;
      - motor shaft torque tau = count*(polarity*eff*Kt*i - friction*N*w_out),
        entering the generalized forces as N*tau * d(w_out)/d(qd);
      - w_out is the relative output rotation rate (stator/rotor form: rotor
        rate minus stator rate; across a hinge: child minus parent, with
        mounted_on child: parent minus child; across a rolling joint: child
        minus parent = -travel_rate/r; across a slider: qd/radius);
      - rotor kinetic energy count*Jr*(w_stator + N*w_out)^2/2, output-shaft
        load inertia J_load*(w_stator + w_out)^2/2;
      - duty drive V = duty*supply; inductance neglected:
        i = (V - polarity*Ke*N*w_out)/R;
      - motor_angle sensor s*N*(theta_out(q) - theta_out(0)), s = +-1 so that
        it increases with the coordinate of the rotor's own joint (stator/
        rotor form) or of the `across` joint;
      - specific force along a body axis = axis . R(theta)^T (a_P - g_vec)
        (the accelerometer model f = a - g resolved in the sensor's axes:
        D. H. Titterton, J. L. Weston, Strapdown Inertial Navigation
        Technology, 2nd ed., 2004, from memory);
      - hinge `reference: world`: q is the child's world angle.
  * Lagrange's equations and the mass-matrix form M(q) qdd = Q + dL/dq -
    (d/dq dL/dqd) qd: standard analytical mechanics (e.g. H. Goldstein,
    "Classical Mechanics", ch. 1-2; stated here from memory).

The comparison is normwise: ||got - want||_F / ||want||_F <= 1e-10, after an
explicit permutation from the JSON's state, input and output names into the
script's own order. Where the reference matrix is exactly zero the absolute
Frobenius norm of `got` is compared with 1e-10 instead (printed as "abs").
"""

import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
import sympy as sp

TOL = 1e-10
PREC = 30  # decimal digits used when evaluating the symbolic Jacobians


# --------------------------------------------------------------- kinematics

def rot(th):
    """Planar rotation by th (counter-clockwise positive, README.md "Signs and frames")."""
    return sp.Matrix([[sp.cos(th), -sp.sin(th)], [sp.sin(th), sp.cos(th)]])


def time_derivative(expr, q, qd):
    """d/dt of an expression of q only (no explicit time): (d expr/dq) qd."""
    expr = sp.Matrix(expr) if not isinstance(expr, sp.MatrixBase) else expr
    return expr.jacobian(q) * qd


def kinetic_point(m, pos, q, qd):
    """Translational kinetic energy m |v|^2 / 2 of a point at pos(q)."""
    v = time_derivative(pos, q, qd)
    return m * (v.T * v)[0, 0] / 2


def gravity_vector(g, slope):
    """README.md ("Signs and frames"): g_vec = -g*(sin(slope), cos(slope))."""
    return sp.Matrix([-g * sp.sin(slope), -g * sp.cos(slope)])


def potential_gravity(m, pos, gvec):
    """V = -m g_vec . p (so that -dV/dp = m g_vec)."""
    return -m * (gvec.T * pos)[0, 0]


def specific_force(pos, th, q, qd, qdd, gvec):
    """Specific force at the point pos(q) of a body at angle th, in the body's
    axes: R(th)^T (a_P - g_vec), with a_P = J qdd + Jdot qd, J = d pos/dq
    (the accelerometer model of Titterton and Weston 2004, from memory)."""
    J = pos.jacobian(q)
    a = J * qdd + (J * qd).jacobian(q) * qd
    return rot(th).T * (a - gvec)


# ----------------------------------------------------------- Lagrange's eqs

def lagrange_mass_rhs(T, V, Q, q, qd):
    """Return (M, rhs) with M(q) qdd = rhs(q, qd, ...).

    From d/dt(dL/dqd) - dL/dq = Q with p = dL/dqd:
    d/dt p = (dp/dqd) qdd + (dp/dq) qd, so M = dp/dqd and
    rhs = Q + dL/dq - (dp/dq) qd.
    """
    L = T - V
    p = sp.Matrix([sp.diff(L, v) for v in qd])
    M = p.jacobian(qd)
    dLdq = sp.Matrix([sp.diff(L, c) for c in q])
    rhs = sp.Matrix(Q) + dLdq - p.jacobian(q) * qd
    return M, rhs


def viscous_q(coef, w_rel, qd):
    """Generalized force of a viscous element on the relative rate w_rel(qd):
    Q_j = -c w_rel d(w_rel)/d(qd_j) (virtual power)."""
    return sp.Matrix([-coef * w_rel * sp.diff(w_rel, v) for v in qd])


# -------------------------------------------------------------------- motor

class Motor:
    """A brushed DC motor with gearbox, in README.md's conventions (see top).

    w_out: relative output rotation rate as an expression of qd;
    w_stator: the stator's angular rate in the world;
    i: the per-motor current (a symbol, or an expression when eliminated).
    """

    def __init__(self, R, L, Kt, Ke, Jr, b, N, eff, count, pol, Jload=0):
        self.R, self.L, self.Kt, self.Ke = R, L, Kt, Ke
        self.Jr, self.b, self.N, self.eff = Jr, b, N, eff
        self.count, self.pol, self.Jload = count, pol, Jload

    def kinetic(self, w_out, w_stator):
        return (self.count * self.Jr * (w_stator + self.N * w_out) ** 2 / 2
                + self.Jload * (w_stator + w_out) ** 2 / 2)

    def shaft_torque(self, i, w_out):
        return self.count * (self.pol * self.eff * self.Kt * i - self.b * self.N * w_out)

    def q_force(self, i, w_out, qd):
        tau = self.shaft_torque(i, w_out)
        return sp.Matrix([self.N * tau * sp.diff(w_out, v) for v in qd])

    def didt(self, V, i, w_out):
        return (V - self.R * i - self.pol * self.Ke * self.N * w_out) / self.L

    def i_neglected(self, V, w_out):
        return (V - self.pol * self.Ke * self.N * w_out) / self.R


def motor_angle_sign(theta_out, coord):
    """s = +1 or -1 so that s*theta_out increases with `coord` (README.md, "Rules worth knowing").
    The parameters in theta_out must be declared positive (radius, ratio)."""
    s = sp.sign(sp.diff(theta_out, coord))
    if s not in (1, -1):
        raise ValueError("motor_angle: cannot tell the sign of d(theta_out)/d(%s)" % coord)
    return int(s)


# --------------------------------------------------------------- evaluation

def to_sym(v):
    """A Python number as a sympy Float of PREC digits (exact for decimals)."""
    if isinstance(v, sp.Basic):
        return sp.Float(v, PREC) if v.is_number else v
    return sp.Float(repr(float(v)), PREC) if isinstance(v, float) else sp.Integer(v)


def evaluate(mat, subs):
    """Evaluate a sympy Matrix numerically (PREC digits) and return a numpy array."""
    subs = {k: to_sym(v) for k, v in subs.items()}
    out = np.zeros(mat.shape)
    for r in range(mat.shape[0]):
        for c in range(mat.shape[1]):
            val = sp.N(mat[r, c].subs(subs), PREC)
            if not val.is_number:
                raise ValueError("unevaluated symbols left in entry (%d, %d): %s"
                                 % (r, c, val.free_symbols))
            out[r, c] = float(val)
    return out


def linearize(f, h, x, u, subs_params):
    """Symbolic Jacobians A = df/dx, B = df/du, C = dh/dx, D = dh/du, with the
    model parameters substituted first (states and inputs stay symbolic)."""
    ps = {k: to_sym(v) for k, v in subs_params.items()}
    f = f.subs(ps)
    h = h.subs(ps)
    X = sp.Matrix(x)
    U = sp.Matrix(u)
    return f.jacobian(X), f.jacobian(U), h.jacobian(X), h.jacobian(U), f, h


def reference(model, params, x0, u0):
    """The reference linearization of model = (f, h, xs, us, ...) at the
    operating point (x0, u0), with the parameters `params` substituted: a dict
    of A, B, C, D, the point x0, u0, and the outputs y0 and affine term f0
    there (the keys compare_linearization reads)."""
    f, h, xs, us = model[:4]
    A, B, C, D, fn, hn = linearize(f, h, xs, us, params)
    at = dict(zip(xs, x0))
    at.update(zip(us, u0))
    want = {k: evaluate(m, at) for k, m in (("A", A), ("B", B), ("C", C), ("D", D))}
    want["x0"] = np.array(x0)
    want["u0"] = np.array(u0)
    want["y0"] = evaluate(hn, at)[:, 0]
    want["f0"] = evaluate(fn, at)[:, 0]
    return want


# --------------------------------------------------------------- reporting

class Report:
    def __init__(self, title):
        self.title = title
        self.failures = 0
        self.count = 0

    def rel(self, label, got, want, tol=TOL):
        got = np.asarray(got, dtype=float)
        want = np.asarray(want, dtype=float)
        self.count += 1
        if got.shape != want.shape:
            print("FAIL %-44s shape %s, want %s" % (label, got.shape, want.shape))
            self.failures += 1
            return False
        nw = np.linalg.norm(want)
        diff = np.linalg.norm(got - want)
        if nw == 0.0:
            err, kind = diff, "abs"
        else:
            err, kind = diff / nw, "rel"
        ok = bool(np.isfinite(err) and err <= tol)
        print("%s %-44s %s err %.3e (tol %.0e)" % ("ok  " if ok else "FAIL", label, kind, err, tol))
        if not ok:
            self.failures += 1
            with np.printoptions(precision=6, linewidth=160):
                print("     got:\n%s\n     want:\n%s" % (got, want))
        return ok

    def check(self, label, ok, detail=""):
        self.count += 1
        print("%s %-44s %s" % ("ok  " if ok else "FAIL", label, detail))
        if not ok:
            self.failures += 1
        return ok

    def finish(self):
        if self.failures:
            print("%s: %d of %d comparisons FAILED" % (self.title, self.failures, self.count))
            sys.exit(1)
        print("%s: all %d comparisons passed" % (self.title, self.count))
        sys.exit(0)


# ------------------------------------------------------------ running rigmat

def rigmat_binary():
    """The binary from $RIGMAT; exits 1 with a clear message when unusable."""
    exe = os.environ.get("RIGMAT")
    if not exe:
        print("RIGMAT is not set: point it at the rigmat binary (e.g. RIGMAT=build/rigmat),"
              " or run with --self-test to check the derivation alone")
        sys.exit(1)
    if not (os.path.isfile(exe) and os.access(exe, os.X_OK)):
        print("RIGMAT=%s is not an executable file" % exe)
        sys.exit(1)
    return exe


def run_linearize(exe, model_text, tmpdir, name):
    """Write model_text to tmpdir/name, run `linearize --format json`, parse it.
    Exits 1 with a message when the command is not available yet."""
    path = os.path.join(tmpdir, name)
    with open(path, "w") as fh:
        fh.write(model_text)
    proc = subprocess.run([exe, "linearize", path, "--format", "json"],
                          stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                          universal_newlines=True, timeout=120)
    if proc.returncode != 0:
        err = proc.stderr.strip()
        if proc.returncode == 2 or "unknown command" in err:
            print("rigmat linearize is not available yet (exit %d): %s" % (proc.returncode, err))
            print("(run with --self-test to check the derivation alone)")
            sys.exit(1)
        print("rigmat linearize failed on %s (exit %d):\n%s" % (name, proc.returncode, err))
        print("--- model ---\n%s" % model_text)
        sys.exit(1)
    if proc.stderr.strip():
        print("  (rigmat said on stderr: %s)" % proc.stderr.strip().replace("\n", " | "))
    try:
        return json.loads(proc.stdout)
    except ValueError as exc:
        print("rigmat linearize printed something that is not JSON (%s):\n%s"
              % (exc, proc.stdout[:2000]))
        sys.exit(1)


def names_of(entries):
    return [e["name"] for e in entries]


def permutation(got_names, want_names, what):
    """Index list p with got[p[k]] == want[k]; exits 1 when the name sets differ."""
    if sorted(got_names) != sorted(want_names):
        print("FAIL %s names differ: rigmat %s, reference %s" % (what, got_names, want_names))
        sys.exit(1)
    return [got_names.index(n) for n in want_names]


def permuted(js, states, inputs, outputs):
    """A, B, C, D (and x0, u0, y0, f0) from the JSON, in the reference's order."""
    ps = permutation(names_of(js["states"]), states, "state")
    pu = permutation(names_of(js["inputs"]), inputs, "input")
    py = permutation(names_of(js["outputs"]), outputs, "output")

    def mat(key, rows, cols, nr, nc):
        m = np.array(js[key], dtype=float).reshape(nr, nc) if nr * nc else np.zeros((nr, nc))
        return m[np.ix_(rows, cols)]

    nx, nu, ny = len(ps), len(pu), len(py)
    out = {
        "A": mat("A", ps, ps, nx, nx),
        "B": mat("B", ps, pu, nx, nu),
        "C": mat("C", py, ps, ny, nx),
        "D": mat("D", py, pu, ny, nu),
    }
    op = js.get("operating_point", {})
    eq = js.get("equilibrium", {})
    if "x" in op:
        out["x0"] = np.array(op["x"], dtype=float)[ps]
    if "u" in op:
        out["u0"] = np.array(op["u"], dtype=float)[pu]
    if "y" in op:
        out["y0"] = np.array(op["y"], dtype=float)[py]
    if "f0" in eq and eq["f0"] is not None and len(eq["f0"]) == nx:
        out["f0"] = np.array(eq["f0"], dtype=float)[ps]
    return out


def compare_linearization(rep, label, js, states, inputs, outputs, want):
    """Compare A, B, C, D (and the operating point) against the reference."""
    got = permuted(js, states, inputs, outputs)
    for key in ("A", "B", "C", "D"):
        rep.rel("%s: %s" % (label, key), got[key], want[key])
    for key, what in (("x0", "operating point x"), ("u0", "operating point u"),
                      ("y0", "operating point y"), ("f0", "affine term f0")):
        if key in want:
            if key in got:
                rep.rel("%s: %s" % (label, what), got[key], want[key])
            else:
                rep.check("%s: %s" % (label, what), False, "missing from the JSON")


def fmt(v):
    """A float for a YAML file, round-trip exact."""
    return repr(float(v))


def selftest_requested():
    return "--self-test" in sys.argv[1:]


def tmpdir():
    return tempfile.TemporaryDirectory(prefix="rigmat-ref-")


# ------------------------------------------------------- shared self-tests

def selftest_dc_motor(rep):
    """The Motor helper on the simplest rig, against the textbook DC motor.

    A motor with stator on the ground drives an inertia J_l (a hinge, w_out =
    qd). With the helper's conventions the speed transfer function must be
    the standard DC motor model (common practice),
        w(s)/V(s) = Kt' / ((J s + b')(L s + R) + Kt' Ke'),
    with the gearbox reflected as is common practice (total inertia
    at the load J_l + N^2 J_motor, [CP]): here J = J_l + count N^2 Jr,
    b' = count N^2 b, Kt' = pol count eff N Kt, Ke' = pol N Ke.
    """
    th, w, i, V = sp.symbols("th w i V")
    vals = dict(R=1.73, L=0.00061, Kt=0.0231, Ke=0.0237, Jr=3.1e-6, b=1.7e-6,
                N=13.7, eff=0.83, count=3, pol=-1, Jl=4.3e-4)
    m = Motor(vals["R"], vals["L"], vals["Kt"], vals["Ke"], vals["Jr"], vals["b"],
              vals["N"], vals["eff"], vals["count"], vals["pol"])
    q, qd = sp.Matrix([th]), sp.Matrix([w])
    T = vals["Jl"] * w ** 2 / 2 + m.kinetic(w, 0)
    M, rhs = lagrange_mass_rhs(T, 0, m.q_force(i, w, qd), q, qd)
    f = sp.Matrix([w, (M.inv() * rhs)[0], m.didt(V, i, w)])
    A = np.array(f.jacobian(sp.Matrix([th, w, i])).evalf(PREC).tolist(), dtype=float)
    B = np.array(f.jacobian(sp.Matrix([V])).evalf(PREC).tolist(), dtype=float)
    C = np.array([[0.0, 1.0, 0.0]])
    c, N, eff, pol = vals["count"], vals["N"], vals["eff"], vals["pol"]
    J = vals["Jl"] + c * N ** 2 * vals["Jr"]
    bp = c * N ** 2 * vals["b"]
    Ktp = pol * c * eff * N * vals["Kt"]
    Kep = pol * N * vals["Ke"]
    pts = [0.3j, 2.0 + 7.0j, -5.0 + 40.0j, 150.0j, 900.0 + 2500.0j]
    got = [(C @ np.linalg.solve(s * np.eye(3) - A, B))[0, 0] for s in pts]
    want = [Ktp / ((J * s + bp) * (vals["L"] * s + vals["R"]) + Ktp * Kep) for s in pts]
    rep.rel("self-test: DC motor speed/voltage TF (REF 6)", np.array(got).view(float),
            np.array(want).view(float), 1e-12)
    return rep
